"""Outline editor: draw element outlines and pick the scale on a thermogram.

`OutlineEditor` holds the state and the editing logic and imports no GUI code; the
matplotlib glue (`envelope.editor_window`: `build_editor_figure`, `run_editor`, re-exported
here) turns mouse and key events into calls on it, in a window whose plotting-library key
map is switched off (its keys are the editor's only). Coordinates are pixel coordinates
``(x, y)`` = (column, row), y down, as in the outline files (DEVELOPERS.md).

Shortcuts (`SHORTCUTS`)::

    left click      add a vertex to the current outline, or pick a vertex and drag it
    right click     delete the nearest vertex (within the pick radius)
    enter / c       close the current outline
    n               start a new outline with the next click
    1 … 9           name the current outline after element 1 … 9 of this view's list
    e               type the element name (checked against the survey's elements)
    r               toggle role: element / reference zone
    p               make the next outline current
    d / delete      delete the selected vertex
    u               undo (outlines, names and scale picks)
    x               toggle snapping
    k               scale from a known length: click its two ends, type the length [m]
    g               scale from reference points: click a point, type its "x, y" [m]; g ends
    s               save the outlines (twice to overwrite) and the scale (into survey.toml)
"""

from __future__ import annotations

import copy
import json
from pathlib import Path

import numpy as np

__all__ = ["OutlineEditor", "SHORTCUTS", "build_editor_figure", "run_editor"]

SHORTCUTS = (
    ("left click", "add / pick + drag vertex"),
    ("right click", "delete nearest vertex"),
    ("enter, c", "close outline"),
    ("n", "new outline"),
    ("1 … 9", "name: element of the list"),
    ("e", "name: type it, enter"),
    ("r", "role: element / reference"),
    ("p", "next outline"),
    ("d, delete", "delete picked vertex"),
    ("u", "undo"),
    ("x", "snapping on / off"),
    ("k", "scale: known length"),
    ("g", "scale: reference points"),
    ("s", "save (twice: overwrite)"),
)
"""Key bindings shown on the editor figure."""
ROUND_DECIMALS = 2
"""Vertex coordinates are stored to 0.01 px."""
MAX_UNDO = 200


class OutlineEditor:
    """Editing state for outlines on one thermogram (no GUI).

    Parameters
    ----------
    shape_px : tuple of int, optional
        Image shape ``(H, W)``; vertices are clamped to the frame.
    pick_radius_px : float
        A click within this distance [px] of a vertex picks it; a new vertex this close to
        an existing one snaps onto it.
    snap_px : float
        A new or dragged vertex within this distance [px] of the horizontal or vertical
        through its neighbour (the previous vertex, else the one that closes the ring) is
        snapped onto that line.
    element_names : iterable of str
        The survey's element names: a name outside them is refused (empty: any name).
    view_elements : iterable of str
        The elements this view should show, offered as the numbered list (default: all).

    Attributes
    ----------
    polygons : list of dict
        ``{"element": str, "role": "element"|"reference", "vertices": [[x, y], ...],
        "holes": [[[x, y], ...], ...], "closed": bool}``.
    current : int or None
        Index of the outline being drawn or edited.
    selected : tuple of int or None
        ``(polygon index, vertex index)`` of the picked vertex.
    snap : bool
    message : str
        Last status line for the GUI.
    scale : tuple or None
        ``("known_length", {"pixel_a", "pixel_b", "length_m"})`` or ``("reference_points",
        {"pixel_xy", "metre_xy"})`` once picked.
    mode : str
        ``"outline"``, or ``"length"`` / ``"points"`` while a scale is being picked.
    """

    def __init__(self, shape_px=None, pick_radius_px: float = 6.0, snap_px: float = 4.0,
                 element_names=(), view_elements=None):
        self.shape_px = None if shape_px is None else tuple(int(v) for v in shape_px[:2])
        self.pick_radius_px = float(pick_radius_px)
        self.snap_px = float(snap_px)
        self.element_names = tuple(element_names)
        self.view_elements = tuple(self.element_names if view_elements is None else view_elements)
        self.polygons: list[dict] = []
        self.scale = None
        self.mode = "outline"
        self.scale_points: list = []
        self.scale_metres: list = []
        self.current: int | None = None
        self.selected: tuple[int, int] | None = None
        self.snap = True
        self.dragging = False
        self._moved = False
        self.message = ""
        self._history: list[tuple] = []

    # -- state helpers ------------------------------------------------------------------
    def _push(self) -> None:
        self._history.append((copy.deepcopy(self.polygons), self.current, self.selected,
                              self.scale, self.mode, list(self.scale_points),
                              list(self.scale_metres)))
        del self._history[:-MAX_UNDO]

    def undo(self) -> bool:
        """Restore the state before the last change; False when there is nothing to undo."""
        if not self._history:
            self.message = "nothing to undo"
            return False
        (self.polygons, self.current, self.selected, self.scale, self.mode, self.scale_points,
         self.scale_metres) = self._history.pop()
        self.dragging = False
        self.message = "undone"
        return True

    def _clamp(self, x: float, y: float) -> tuple[float, float]:
        if self.shape_px is not None:
            h, w = self.shape_px
            x, y = min(max(x, 0.0), float(w)), min(max(y, 0.0), float(h))
        return round(float(x), ROUND_DECIMALS), round(float(y), ROUND_DECIMALS)

    def nearest_vertex(self, x: float, y: float, radius: float | None = None):
        """``(polygon index, vertex index, distance)`` of the nearest vertex within
        `radius` [px] (default the pick radius), or None."""
        radius = self.pick_radius_px if radius is None else radius
        best = None
        for i, poly in enumerate(self.polygons):
            if not poly["vertices"]:
                continue
            v = np.asarray(poly["vertices"], dtype=float)
            d = np.hypot(v[:, 0] - x, v[:, 1] - y)
            j = int(np.argmin(d))
            if d[j] <= radius and (best is None or d[j] < best[2]):
                best = (i, j, float(d[j]))
        return best

    def _snapped(self, x: float, y: float, prev=None, first=None,
                 exclude=None) -> tuple[float, float]:
        """Snap onto an existing vertex, else onto the horizontal/vertical through `prev`
        (the previous vertex) or `first` (the first vertex: a straight closing edge)."""
        if not self.snap:
            return x, y
        hit = self.nearest_vertex(x, y)
        if hit is not None and (hit[0], hit[1]) != exclude:
            vx, vy = self.polygons[hit[0]]["vertices"][hit[1]]
            return float(vx), float(vy)
        refs = [p for p in (prev, first) if p is not None]
        for axis in (0, 1):
            for ref in refs:  # the previous vertex first, then the first (closing edge)
                if abs((x, y)[axis] - ref[axis]) <= self.snap_px:
                    x, y = (float(ref[0]), y) if axis == 0 else (x, float(ref[1]))
                    break
        return x, y

    def _current_open(self) -> dict | None:
        if self.current is None:
            return None
        poly = self.polygons[self.current]
        return None if poly["closed"] else poly

    # -- events -------------------------------------------------------------------------
    def click(self, x: float, y: float, button: int = 1) -> str:
        """Handle a mouse press at ``(x, y)`` [px]; ``button`` 1 = left, 3 = right.

        Returns the action taken: ``"select"``, ``"add"``, ``"new"``, ``"delete-vertex"``
        or ``""``.
        """
        if x is None or y is None:
            return ""
        if self.mode != "outline" and button == 1:
            return self._scale_click(x, y)
        if button == 3:
            hit = self.nearest_vertex(x, y)
            if hit is None:
                return ""
            self.selected = hit[:2]
            return "delete-vertex" if self.delete_vertex() else ""
        if button != 1:
            return ""
        hit = self.nearest_vertex(x, y)
        open_poly = self._current_open()
        if hit is not None and (open_poly is None or hit[0] == self.current):
            if (open_poly is not None and hit[1] == 0 and len(open_poly["vertices"]) >= 3):
                return "close" if self.close_polygon() else ""  # first vertex closes
            self.selected = hit[:2]
            self.current = hit[0]
            self.dragging = True
            self._moved = False
            self.message = f"vertex {hit[1]} of outline {hit[0]} picked"
            return "select"
        self._push()
        if open_poly is None:
            self.polygons.append({"element": "", "role": "element",
                                  "vertices": [], "holes": [], "closed": False})
            self.current = len(self.polygons) - 1
            open_poly = self.polygons[-1]
            action = "new"
        else:
            action = "add"
        verts = open_poly["vertices"]
        sx, sy = self._snapped(float(x), float(y), verts[-1] if verts else None,
                               verts[0] if len(verts) >= 2 else None)
        verts.append(list(self._clamp(sx, sy)))
        self.selected = (self.current, len(verts) - 1)
        self.message = f"outline {self.current}: {len(verts)} vertices"
        return action

    def drag(self, x: float, y: float) -> bool:
        """Move the picked vertex while the button is held; True if something moved."""
        if not self.dragging or self.selected is None or x is None or y is None:
            return False
        if not self._moved:
            self._push()
            self._moved = True
        i, j = self.selected
        verts = self.polygons[i]["vertices"]
        prev = verts[j - 1] if len(verts) > 1 else None
        nxt = verts[(j + 1) % len(verts)] if len(verts) > 2 else None
        sx, sy = self._snapped(float(x), float(y), prev, nxt, exclude=(i, j))
        verts[j] = list(self._clamp(sx, sy))
        return True

    def release(self) -> None:
        """End a drag."""
        self.dragging = False

    def key(self, k: str | None) -> str:
        """Handle a key; returns the action (``"save"`` and ``"edit-name"`` are left to the
        GUI: it asks for the file or the name), or ``""`` for an unbound key."""
        if not k:
            return ""
        k = k.lower()
        if k in ("enter", "c"):
            return "close" if self.close_polygon() else ""
        if k == "n":
            self.new_polygon()
            return "new"
        if k == "e":
            self.message = "type the element name in the box, then enter"
            return "edit-name"
        if k == "r":
            return "role" if self.toggle_role() else ""
        if k == "p":
            if self.polygons:
                self.current = 0 if self.current is None else (self.current + 1) % len(
                    self.polygons)
                self.selected = None
                self.message = f"outline {self.current} current"
            return "next"
        if k in ("d", "delete", "backspace"):
            return "delete-vertex" if self.delete_vertex() else ""
        if k == "u":
            return "undo" if self.undo() else ""
        if k == "x":
            self.snap = not self.snap
            self.message = f"snapping {'on' if self.snap else 'off'}"
            return "snap"
        if k == "s":
            return "save"
        if k == "k":
            self._push()
            self.mode, self.scale_points, self.scale_metres = "length", [], []
            self.message = "known length: click its first end"
            return "scale-length"
        if k == "g":
            if self.mode == "points":
                return "scale" if self.finish_reference_points() else ""
            self._push()
            self.mode, self.scale_points, self.scale_metres = "points", [], []
            self.message = "reference points: click a point whose position you know"
            return "scale-points"
        if k.isdigit() and k != "0":
            i = int(k) - 1
            if i < len(self.view_elements):
                return "name" if self.set_name(self.view_elements[i]) else ""
            self.message = f"no element {k} in this view's list"
            return ""
        if k == "escape":
            self.selected = None
            self.dragging = False
            if self.mode != "outline":
                self.mode, self.scale_points, self.scale_metres = "outline", [], []
                self.message = "scale picking cancelled"
            return "deselect"
        return ""

    # -- edits --------------------------------------------------------------------------
    def new_polygon(self) -> None:
        """Finish the current outline; the next click starts a new one."""
        if self._current_open() is not None:
            self.close_polygon()
        self.current = None
        self.selected = None
        self.message = "click to start a new outline"

    def close_polygon(self) -> bool:
        """Close the current outline (needs 3 vertices); True on success."""
        poly = self._current_open()
        if poly is None:
            return False
        if len(poly["vertices"]) < 3:
            self.message = "an outline needs at least 3 vertices"
            return False
        self._push()
        poly["closed"] = True
        self.selected = None
        self.message = f"outline {self.current} closed" + (
            "" if poly["element"] else "; press e to name it")
        return True

    def set_name(self, name: str) -> bool:
        """Set the element name of the current outline; True on success. A name that is not
        one of the survey's elements is refused (the outline keeps its name)."""
        name = str(name).strip()
        if self.current is None or not name:
            self.message = "no outline selected" if name else "empty name"
            return False
        if self.element_names and name not in self.element_names:
            self.message = (f"{name!r} is not an element of the survey; known: "
                            f"{', '.join(self.element_names)}")
            return False
        self._push()
        self.polygons[self.current]["element"] = name
        self.message = f"outline {self.current} is {name!r}"
        return True

    # -- scale -------------------------------------------------------------------------
    def _scale_click(self, x: float, y: float) -> str:
        pt = list(self._clamp(float(x), float(y)))
        if self.mode == "length":
            if len(self.scale_points) >= 2:
                self.message = "type the length between the two ends [m], then enter"
                return ""
            self._push()
            self.scale_points.append(pt)
            self.message = ("known length: click its other end" if len(self.scale_points) == 1
                            else "type the length between the two ends [m], then enter")
            return "scale-point"
        if len(self.scale_points) > len(self.scale_metres):
            self.message = "type this point's position \"x, y\" [m], then enter"
            return ""
        self._push()
        self.scale_points.append(pt)
        self.message = f"point {len(self.scale_points)}: type its position \"x, y\" [m], then enter"
        return "scale-point"

    def wants_text(self) -> bool:
        """True while a scale pick waits for typed metres."""
        return ((self.mode == "length" and len(self.scale_points) == 2)
                or (self.mode == "points" and len(self.scale_points) > len(self.scale_metres)))

    def scale_text(self, text: str) -> bool:
        """Take typed metres: the known length, or a reference point's ``x, y``."""
        try:
            nums = [float(v) for v in str(text).replace(";", ",").split(",") if v.strip()]
        except ValueError:
            nums = []
        if self.mode == "length" and len(self.scale_points) == 2:
            if len(nums) != 1 or not 0.0 < nums[0] <= 1000.0:
                self.message = "expected one length in metres, e.g. 2.4"
                return False
            a, b = self.scale_points
            if a == b:
                self.message = "the two ends are the same pixel; press k to start again"
                return False
            self._push()
            self.scale = ("known_length", {"pixel_a": a, "pixel_b": b, "length_m": nums[0]})
            self.mode, self.scale_points = "outline", []
            self.message = f"scale: {nums[0]:g} m between two points (saved with s)"
            return True
        if self.mode == "points" and len(self.scale_points) > len(self.scale_metres):
            if len(nums) != 2:
                self.message = "expected the point's position as \"x, y\" in metres"
                return False
            self._push()
            self.scale_metres.append(nums)
            n = len(self.scale_metres)
            self.message = (f"{n} reference point{'s' if n > 1 else ''}; click another, or "
                            "press g to finish" + (" (4 needed)" if n < 4 else ""))
            return True
        self.message = "press k or g to pick a scale"
        return False

    def finish_reference_points(self) -> bool:
        """End reference-point picking; needs 4 or more complete points."""
        n = len(self.scale_metres)
        if n < 4:
            self.message = f"{n} reference points; 4 or more are needed (esc cancels)"
            return False
        self._push()
        self.scale = ("reference_points", {"pixel_xy": self.scale_points[:n],
                                           "metre_xy": self.scale_metres[:n]})
        self.mode, self.scale_points, self.scale_metres = "outline", [], []
        self.message = f"scale: {n} reference points (saved with s)"
        return True

    def save_scale(self, survey_file, thermogram_id: str) -> bool:
        """Write the picked scale into `survey_file` as the thermogram's
        ``[thermograms.known_length]`` or ``[thermograms.reference_points]`` (a conservative
        text edit; the other kind, if present, is commented out). False when no scale."""
        from .tomledit import set_thermogram_table

        if self.scale is None:
            return False
        table, values = self.scale
        other = "reference_points" if table == "known_length" else "known_length"
        set_thermogram_table(Path(survey_file), thermogram_id, table, values, replaces=(other,))
        return True

    def toggle_role(self) -> bool:
        """Switch the current outline between element outline and reference zone."""
        if self.current is None:
            return False
        self._push()
        poly = self.polygons[self.current]
        poly["role"] = "reference" if poly["role"] == "element" else "element"
        self.message = f"outline {self.current} role: {poly['role']}"
        return True

    def delete_vertex(self) -> bool:
        """Delete the selected vertex (and an outline left without vertices)."""
        if self.selected is None:
            return False
        i, j = self.selected
        self._push()
        verts = self.polygons[i]["vertices"]
        del verts[j]
        if len(verts) < 3:
            self.polygons[i]["closed"] = False
        if not verts:
            del self.polygons[i]
            self.current = None
        self.selected = None
        self.dragging = False
        self.message = "vertex deleted"
        return True

    # -- files --------------------------------------------------------------------------
    def to_geojson(self) -> dict:
        """The outlines as a GeoJSON FeatureCollection in pixel coordinates.

        Outlines with fewer than 3 vertices are left out; several outlines of one element
        and role become one MultiPolygon (one feature per element and role, as the reader
        requires). Rings are written closed (RFC 7946, Sec. 3.1.6).
        """
        groups: dict[tuple[str, str], list[list]] = {}
        for poly in self.polygons:
            if len(poly["vertices"]) < 3:
                continue
            rings = [_closed(poly["vertices"])] + [_closed(h) for h in poly.get("holes", [])]
            groups.setdefault((poly["element"], poly["role"]), []).append(rings)
        features = []
        for (element, role), parts in groups.items():
            geom = ({"type": "Polygon", "coordinates": parts[0]} if len(parts) == 1
                    else {"type": "MultiPolygon", "coordinates": parts})
            features.append({"type": "Feature", "properties": {"element": element,
                                                                "role": role},
                             "geometry": geom})
        return {"type": "FeatureCollection", "features": features}

    def from_geojson(self, obj: dict) -> None:
        """Load outlines from a GeoJSON dict (lenient: what it cannot read it skips, and
        says so in `message`; `envelope.outlines.parse_outlines` does the strict check)."""
        polys, skipped = [], 0
        feats = obj.get("features", []) if isinstance(obj, dict) else []
        for feat in feats if isinstance(feats, list) else []:
            try:
                props = feat.get("properties") or {}
                geom = feat["geometry"]
                parts = ([geom["coordinates"]] if geom["type"] == "Polygon"
                         else list(geom["coordinates"]) if geom["type"] == "MultiPolygon"
                         else [])
                for rings in parts:
                    ring0 = _open(rings[0])
                    polys.append({"element": str(props.get("element", "")),
                                  "role": str(props.get("role", "element")),
                                  "vertices": ring0,
                                  "holes": [_open(r) for r in rings[1:]],
                                  "closed": len(ring0) >= 3})
            except (KeyError, TypeError, ValueError, IndexError, AttributeError):
                skipped += 1
        self.polygons = polys
        self.current = None
        self.selected = None
        self._history.clear()
        self.message = f"{len(polys)} outlines loaded" + (
            f", {skipped} features skipped" if skipped else "")

    def save(self, path, overwrite: bool = False) -> Path:
        """Write `to_geojson` to `path` (sorted keys, indent 2).

        Raises
        ------
        FileExistsError
            If `path` exists and `overwrite` is False.
        """
        path = Path(path)
        text = json.dumps(self.to_geojson(), sort_keys=True, indent=2) + "\n"
        path.parent.mkdir(parents=True, exist_ok=True)
        mode = "w" if overwrite else "x"
        with open(path, mode, encoding="utf-8") as f:
            f.write(text)
        self.message = f"saved {path}"
        return path

    def problems(self) -> list[str]:
        """What would stop the saved file from being read (unnamed, open, unknown)."""
        out = []
        for i, poly in enumerate(self.polygons):
            if not poly["element"]:
                out.append(f"outline {i} has no element name")
            elif self.element_names and poly["element"] not in self.element_names:
                out.append(f"outline {i}: {poly['element']!r} is not a survey element")
            if not poly["closed"]:
                out.append(f"outline {i} is not closed")
        return out


def _closed(verts) -> list[list[float]]:
    ring = [[float(x), float(y)] for x, y in verts]
    return ring + [list(ring[0])] if ring and ring[0] != ring[-1] else ring


def _open(ring) -> list[list[float]]:
    pts = [[round(float(p[0]), ROUND_DECIMALS), round(float(p[1]), ROUND_DECIMALS)]
           for p in ring]
    if len(pts) > 1 and pts[0] == pts[-1]:
        pts = pts[:-1]
    return pts




def build_editor_figure(image_c, geojson_path, element_names=(), title="", **kwargs):
    """Build the editor figure; see `envelope.editor_window.build_editor_figure`."""
    from .editor_window import build_editor_figure as build

    return build(image_c, geojson_path, element_names, title, **kwargs)


def run_editor(image_c, geojson_path, element_names=(), title="", **kwargs) -> None:
    """Open the editor window; see `envelope.editor_window.run_editor`."""
    from .editor_window import run_editor as run

    run(image_c, geojson_path, element_names, title, **kwargs)
