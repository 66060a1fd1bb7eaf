"""Outline editor: draw element outlines on a thermogram and save them as GeoJSON.

`OutlineEditor` holds the state and the editing logic and imports no GUI code; the
matplotlib glue (`build_editor_figure`, `run_editor`) turns mouse and key events into calls
on it. Coordinates are pixel coordinates ``(x, y)`` = (column, row), y down, as in the
outline files (DEVELOPERS.md).

Shortcuts (`SHORTCUTS`)::

    left click      add a vertex to the current outline, or pick a vertex and drag it
    right click     delete the nearest vertex (within the pick radius)
    enter / c       close the current outline
    n               start a new outline with the next click
    e               edit the element name of the current outline (text box)
    r               toggle role: element / reference zone
    p               make the next outline current
    d / delete      delete the selected vertex
    u               undo
    x               toggle snapping
    s               save (press twice to overwrite an existing file)
"""

from __future__ import annotations

import copy
import json
import textwrap
from pathlib import Path

import numpy as np

SHORTCUTS = (
    ("left click", "add / pick + drag vertex"),
    ("right click", "delete nearest vertex"),
    ("enter, c", "close outline"),
    ("n", "new outline"),
    ("e", "element name (type, enter)"),
    ("r", "role: element / reference"),
    ("p", "next outline"),
    ("d, delete", "delete picked vertex"),
    ("u", "undo"),
    ("x", "snapping on / off"),
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
        Known element names (for the GUI's hints and `problems`).

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
    """

    def __init__(self, shape_px=None, pick_radius_px: float = 6.0, snap_px: float = 4.0,
                 element_names=()):
        self.shape_px = None if shape_px is None else tuple(int(v) for v in shape_px[:2])
        self.pick_radius_px = float(pick_radius_px)
        self.snap_px = float(snap_px)
        self.element_names = tuple(element_names)
        self.polygons: list[dict] = []
        self.current: int | None = None
        self.selected: tuple[int, int] | None = None
        self.snap = True
        self.dragging = False
        self._moved = False
        self.message = ""
        self._history: list[tuple] = []

    # -- state helpers ------------------------------------------------------------------
    def _push(self) -> None:
        self._history.append((copy.deepcopy(self.polygons), self.current, self.selected))
        del self._history[:-MAX_UNDO]

    def undo(self) -> bool:
        """Restore the state before the last change; False when there is nothing to undo."""
        if not self._history:
            self.message = "nothing to undo"
            return False
        self.polygons, self.current, self.selected = self._history.pop()
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
        if k == "escape":
            self.selected = None
            self.dragging = False
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
        """Set the element name of the current outline; True on success."""
        name = str(name).strip()
        if self.current is None or not name:
            self.message = "no outline selected" if name else "empty name"
            return False
        self._push()
        self.polygons[self.current]["element"] = name
        unknown = self.element_names and name not in self.element_names
        self.message = f"outline {self.current} is {name!r}" + (
            " (not an element of the survey)" if unknown else "")
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


# -- matplotlib glue ---------------------------------------------------------------------
def build_editor_figure(image_c, geojson_path, element_names=(), title=""):
    """Build the editor figure (any backend) and connect its events.

    Parameters
    ----------
    image_c : array_like, shape (H, W)
        Surface temperatures [°C].
    geojson_path : str or Path
        Outline file; loaded when it exists, written on "s".
    element_names : iterable of str
    title : str

    Returns
    -------
    (fig, editor, handlers)
        ``handlers`` holds the connected callbacks (``"press"``, ``"motion"``,
        ``"release"``, ``"key"``, ``"name"``), the ``"textbox"`` widget and ``"redraw"``.
    """
    import matplotlib.pyplot as plt
    from matplotlib.widgets import TextBox

    img = np.asarray(image_c, dtype=float)
    path = Path(geojson_path)
    editor = OutlineEditor(shape_px=img.shape, element_names=element_names)
    if path.exists():
        editor.from_geojson(json.loads(path.read_text(encoding="utf-8")))
    finite = img[np.isfinite(img)]
    lo, hi = (np.percentile(finite, [1, 99]) if finite.size else (0.0, 1.0))
    fig = plt.figure(figsize=(11.0, 6.5))
    ax = fig.add_axes((0.07, 0.12, 0.58, 0.8))
    im = ax.imshow(img, cmap="inferno", vmin=lo, vmax=hi if hi > lo else lo + 1,
                   interpolation="nearest")
    fig.colorbar(im, ax=ax, fraction=0.046, pad=0.03).set_label("Surface temperature [°C]")
    ax.set_title(title or f"outlines: {path.name}")
    ax.set_xlabel("x [px]")
    ax.set_ylabel("y [px]")
    ax.set_autoscale_on(False)
    text_ax = fig.add_axes((0.12, 0.02, 0.45, 0.05))
    keys = "\n".join(f"{k:<12} {v}" for k, v in SHORTCUTS)
    names = "\n".join(textwrap.wrap(", ".join(element_names), 34))
    fig.text(0.73, 0.92, keys + (f"\n\nelements:\n{names}" if names else ""),
             va="top", family="monospace", fontsize=8)
    status = fig.text(0.05, 0.95, "", fontsize=9)
    artists: list = []
    state = {"confirm_overwrite": False}

    def redraw():
        for a in artists:
            a.remove()
        artists.clear()
        for i, poly in enumerate(editor.polygons):
            v = np.asarray(poly["vertices"], dtype=float).reshape(-1, 2)
            if poly["closed"] and len(v):
                v = np.vstack([v, v[:1]])
            ls = "--" if poly["role"] == "reference" else "-"
            colour = "cyan" if i == editor.current else "white"
            (line,) = ax.plot(v[:, 0], v[:, 1], ls, color=colour, lw=1.4, marker="o", ms=3)
            artists.append(line)
            if poly["element"] and len(v):
                cx, cy = v.mean(axis=0)
                artists.append(ax.text(cx, cy, f"{poly['element']} ({poly['role']})",
                                       color=colour, fontsize=8, ha="center", va="center"))
        if editor.selected is not None:
            i, j = editor.selected
            x, y = editor.polygons[i]["vertices"][j]
            artists.extend(ax.plot([x], [y], "s", mfc="none", mec="lime", ms=8))
        status.set_text(editor.message)
        fig.canvas.draw_idle()

    def on_press(event):
        if event.inaxes is not ax or textbox.capturekeystrokes:
            return
        button = int(event.button) if event.button is not None else 0
        if editor.click(event.xdata, event.ydata, button):
            redraw()

    def on_motion(event):
        if event.inaxes is ax and editor.drag(event.xdata, event.ydata):
            redraw()

    def on_release(event):
        editor.release()

    def on_key(event):
        # connected before the text box: while it captures keys they are not shortcuts
        if textbox.capturekeystrokes:
            return
        action = editor.key(event.key)
        if action == "save":
            exists = path.exists()
            try:
                editor.save(path, overwrite=exists and state["confirm_overwrite"])
                state["confirm_overwrite"] = False
            except FileExistsError:
                state["confirm_overwrite"] = True
                editor.message = f"{path.name} exists: press s again to overwrite it"
            else:
                left = editor.problems()
                if left:
                    editor.message += f" ({'; '.join(left[:2])})"
        else:
            state["confirm_overwrite"] = False
        if action == "edit-name":
            textbox.eventson = False
            textbox.set_val("")  # a fresh name; enter with an empty box changes nothing
            textbox.eventson = True
            textbox.cursor_index = 0
            state["start_typing"] = True  # after the text box has seen this "e"
        if action:
            redraw()

    def after_key(event):
        if state.pop("start_typing", False):
            textbox.begin_typing()

    def on_name(text):
        if textbox.capturekeystrokes:  # enter: stop typing, which submits once more
            textbox.stop_typing()
            return
        if editor.set_name(text):
            redraw()

    cids = [fig.canvas.mpl_connect("button_press_event", on_press),
            fig.canvas.mpl_connect("motion_notify_event", on_motion),
            fig.canvas.mpl_connect("button_release_event", on_release),
            fig.canvas.mpl_connect("key_press_event", on_key)]
    textbox = TextBox(text_ax, "element ")  # its key handler runs after on_key
    cids.append(fig.canvas.mpl_connect("key_press_event", after_key))
    textbox.on_submit(on_name)
    redraw()
    handlers = {"press": on_press, "motion": on_motion, "release": on_release, "key": on_key,
                "name": on_name, "textbox": textbox, "redraw": redraw, "axes": ax,
                "cids": cids}
    return fig, editor, handlers


_INTERACTIVE_BACKENDS = ("QtAgg", "TkAgg", "GTK4Agg", "GTK3Agg", "MacOSX", "WXAgg")


def run_editor(image_c, geojson_path, element_names=(), title="") -> None:
    """Open the outline editor on a thermogram and block until its window is closed.

    Parameters
    ----------
    image_c : array_like, shape (H, W)
        Surface temperatures [°C].
    geojson_path : str or Path
        Outline file to edit (loaded when it exists; saved with "s").
    element_names : iterable of str
        The survey's element names, shown as a reminder.
    title : str
        Figure title.

    Raises
    ------
    RuntimeError
        When no interactive matplotlib backend can be started (no display).
    """
    import matplotlib
    import matplotlib.pyplot as plt

    backend = matplotlib.get_backend().lower()
    if backend in ("agg", "pdf", "ps", "svg", "cairo", "template") or "inline" in backend:
        for name in _INTERACTIVE_BACKENDS:
            try:
                plt.switch_backend(name)
                break
            except (ImportError, RuntimeError, ValueError):
                continue
        else:
            raise RuntimeError("the outline editor needs an interactive matplotlib backend "
                               "(a display and Qt, Tk or GTK); none could be started")
    build_editor_figure(image_c, geojson_path, element_names, title)
    plt.show()
