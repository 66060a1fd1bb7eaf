"""Element outlines: GeoJSON in pixel coordinates → validated shapely polygons.

An outline file is an RFC 7946 ``FeatureCollection`` whose coordinates are pixel
coordinates of the thermogram, ``(x, y)`` = (column, row), frame ``[0, W] x [0, H]``,
y pointing down (DEVELOPERS.md). Each feature carries the properties

``element``
    Name of the building element, one of the survey's element names.
``role``
    ``"element"`` (the element's outline; default when absent) or ``"reference"`` (a zone of
    the element that is taken as representative of its clear field, e.g. for the U-value).

Geometry is a ``Polygon`` or a ``MultiPolygon`` (several parts of one element). Each element
has at most one feature per role in one file; a ``MultiPolygon`` is how several parts are
given. Rings may be given closed (first position repeated, as RFC 7946 asks) or open.

Reading uses the standard library ``json`` only; validation uses shapely. `rasterise`
turns an outline into a pixel mask.

References
----------
[1] Butler, H. et al. (2016). The GeoJSON Format. IETF RFC 7946.
"""

from __future__ import annotations

import difflib
import json
import math
from collections.abc import Iterable
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import shapely
from shapely.geometry import MultiPolygon, Polygon, box

from envelope.errors import GeometryError

ROLES = ("element", "reference")
"""Valid values of the ``role`` property."""
FRAME_TOLERANCE_PX = 1.0
"""How far [px] a vertex may lie outside the frame before the outline is rejected."""
MAX_FILE_BYTES = 20_000_000
"""Largest outline file read [bytes]."""
MAX_VERTICES = 200_000
"""Largest number of vertices in one outline file."""
_FAR_PX = 1e6
MIN_AREA_PX = 16.0
"""Smallest outline or reference zone [px²] (4 × 4 px): a smaller one holds too few pixels
to measure, and is usually drawn in metres or in fractions of the image by mistake."""


@dataclass(frozen=True)
class Outline:
    """One validated outline feature.

    Attributes
    ----------
    element : str
        Element name.
    role : str
        ``"element"`` or ``"reference"``.
    polygon : shapely.Polygon or shapely.MultiPolygon
        Outline in pixel coordinates, clipped to the frame.
    index : int
        Index of the feature in the file's ``features`` list.
    """

    element: str
    role: str
    polygon: Polygon | MultiPolygon
    index: int


def read_outlines(path, shape_px, element_names=None) -> list[Outline]:
    """Read and validate a GeoJSON outline file.

    Parameters
    ----------
    path : str or Path
        The GeoJSON file.
    shape_px : tuple of int
        Image shape ``(H, W)`` [px] (rows, columns) of the thermogram.
    element_names : iterable of str, optional
        Known element names; ``None`` accepts any non-empty name.

    Returns
    -------
    list of Outline
        In file order.

    Raises
    ------
    GeometryError
        For a file that cannot be read or parsed, or any invalid feature (see
        `parse_outlines`).
    """
    path = Path(path)
    try:
        size = path.stat().st_size
    except OSError as exc:
        raise GeometryError(f"cannot read outline file ({exc.strerror})", file=str(path)) from None
    if size > MAX_FILE_BYTES:
        raise GeometryError(f"outline file is {size} bytes, more than the limit "
                            f"{MAX_FILE_BYTES}", file=str(path))
    try:
        with open(path, encoding="utf-8-sig") as fh:  # a BOM, as some editors write, is fine
            text = fh.read()
        if not text.strip():
            raise GeometryError("the outline file is empty; expected a GeoJSON "
                                "FeatureCollection (draw the outlines with `envelope outline`)",
                                file=str(path))
        obj = json.loads(text)
    except OSError as exc:
        raise GeometryError(f"cannot read outline file ({exc.strerror or type(exc).__name__})",
                            file=str(path)) from None
    except UnicodeDecodeError as exc:
        raise GeometryError(f"not UTF-8 text (byte {exc.start}); expected GeoJSON",
                            file=str(path)) from None
    except json.JSONDecodeError as exc:
        raise GeometryError(f"not valid JSON ({exc.msg} at line {exc.lineno}, column "
                            f"{exc.colno})", file=str(path)) from None
    except RecursionError:
        raise GeometryError("JSON nested too deeply; expected a GeoJSON FeatureCollection",
                            file=str(path)) from None
    return parse_outlines(obj, shape_px, element_names, source=str(path))


def parse_outlines(obj, shape_px, element_names=None, source="<memory>") -> list[Outline]:
    """Validate a loaded GeoJSON dict of outlines (see `read_outlines`).

    Parameters
    ----------
    obj : object
        The decoded JSON document.
    shape_px : tuple of int
        Image shape ``(H, W)`` [px].
    element_names : iterable of str, optional
        Known element names; ``None`` accepts any non-empty name.
    source : str
        Name used as ``file`` in errors.

    Returns
    -------
    list of Outline

    Raises
    ------
    GeometryError
        Not a FeatureCollection; a feature without ``properties``/``element``; an unknown
        element or role; a geometry other than Polygon/MultiPolygon; empty coordinates; a
        non-numeric or non-finite vertex; a ring with fewer than 3 distinct vertices; a
        self-intersecting or otherwise invalid polygon (shapely's reason is given); zero
        area; a vertex more than `FRAME_TOLERANCE_PX` outside the frame; two features of one
        element with the same role. The error's ``field`` names the feature, e.g.
        ``features[2].geometry.coordinates[0][3]``.
    """
    h_px, w_px = _shape(shape_px)
    names = None if element_names is None else {str(n) for n in element_names}
    if not isinstance(obj, dict) or obj.get("type") != "FeatureCollection":
        raise GeometryError('expected a GeoJSON object with "type": "FeatureCollection"',
                            file=source, field="type")
    features = obj.get("features")
    if not isinstance(features, list):
        raise GeometryError('"features" must be a list of Feature objects', file=source,
                            field="features")
    frame = box(0.0, 0.0, float(w_px), float(h_px))
    seen: dict[tuple[str, str], int] = {}
    n_vertices = 0
    out = []
    for i, feat in enumerate(features):
        where = f"features[{i}]"
        if not isinstance(feat, dict) or feat.get("type") != "Feature":
            raise GeometryError('expected a Feature object ("type": "Feature")', file=source,
                                field=where)
        props = feat.get("properties")
        if not isinstance(props, dict):
            raise GeometryError('missing "properties" with "element" (and "role")',
                                file=source, field=f"{where}.properties")
        element = props.get("element")
        if not isinstance(element, str) or not element.strip():
            raise GeometryError('missing or empty "element" name', file=source,
                                field=f"{where}.properties.element")
        if names is not None and element not in names:
            folded = {n.casefold(): n for n in names}
            close = folded.get(element.strip().casefold()) or next(iter(
                difflib.get_close_matches(element, sorted(names), n=1)), None)
            hint = f" (did you mean {close!r}?)" if close else ""
            raise GeometryError(f"unknown element {element!r}{hint}; known: "
                                f"{', '.join(sorted(names)) or '(none)'}", file=source,
                                field=f"{where}.properties.element")
        role = props.get("role", "element")
        if role not in ROLES:
            raise GeometryError(f"element {element!r}: unknown role {role!r}; valid: "
                                f"{', '.join(ROLES)}", file=source,
                                field=f"{where}.properties.role")
        key = (element, role)
        if key in seen:
            raise GeometryError(f"element {element!r} has a second {role!r} outline "
                                f"(first in features[{seen[key]}]); give several parts as "
                                "one MultiPolygon", file=source, field=where)
        seen[key] = i
        geom = feat.get("geometry")
        polygon, nv = _geometry(geom, f"{where}.geometry", element, source)
        n_vertices += nv
        if n_vertices > MAX_VERTICES:
            raise GeometryError(f"more than {MAX_VERTICES} vertices in the file",
                                file=source, field=where)
        xmin, ymin, xmax, ymax = polygon.bounds
        tol = FRAME_TOLERANCE_PX
        if xmin < -tol or ymin < -tol or xmax > w_px + tol or ymax > h_px + tol:
            raise GeometryError(
                f"element {element!r}: outline reaches ({xmin:.6g}..{xmax:.6g}, "
                f"{ymin:.6g}..{ymax:.6g}) px, outside the {w_px}x{h_px} px frame",
                file=source, field=f"{where}.geometry.coordinates")
        if polygon.area < MIN_AREA_PX:
            raise GeometryError(
                f"element {element!r}: the {role} outline covers {polygon.area:.3g} px², less "
                f"than {MIN_AREA_PX:g}; outlines are in the thermogram's pixel coordinates (x "
                f"to the right, y down, the image {w_px} × {h_px} px), not in metres or "
                "fractions of the image", file=source, field=f"{where}.geometry.coordinates")
        if not frame.contains(polygon):
            polygon = _as_polygonal(polygon.intersection(frame))
        out.append(Outline(element=element, role=role, polygon=polygon, index=i))
    return out


def _shape(shape_px) -> tuple[int, int]:
    try:
        h_px, w_px = (int(v) for v in shape_px[:2])
    except (TypeError, ValueError):
        raise ValueError(f"shape_px must be (H, W) in pixels, got {shape_px!r}") from None
    if h_px <= 0 or w_px <= 0:
        raise ValueError(f"shape_px must be positive, got {shape_px!r}")
    return h_px, w_px


def _geometry(geom, where, element, source):
    """Build and validate a shapely (Multi)Polygon; return it and its vertex count."""
    if not isinstance(geom, dict):
        raise GeometryError(f"element {element!r}: missing geometry", file=source, field=where)
    gtype = geom.get("type")
    coords = geom.get("coordinates")
    if gtype not in ("Polygon", "MultiPolygon"):
        raise GeometryError(f"element {element!r}: geometry type {gtype!r}; expected "
                            "Polygon or MultiPolygon", file=source, field=f"{where}.type")
    where_c = f"{where}.coordinates"
    if not isinstance(coords, list) or len(coords) == 0:
        raise GeometryError(f"element {element!r}: empty coordinates", file=source,
                            field=where_c)
    if gtype == "Polygon":
        parts = [(coords, where_c)]
    else:
        parts = [(p, f"{where_c}[{k}]") for k, p in enumerate(coords)]
    polys = []
    nv = 0
    for rings, w in parts:
        if not isinstance(rings, list) or len(rings) == 0:
            raise GeometryError(f"element {element!r}: empty coordinates", file=source,
                                field=w)
        clean = []
        for r, ring in enumerate(rings):
            pts = _ring(ring, f"{w}[{r}]", element, source)
            nv += len(pts)
            clean.append(pts)
        poly = Polygon(clean[0], clean[1:])
        _check_valid(poly, w, element, source)
        polys.append(poly)
    result = polys[0] if len(polys) == 1 else MultiPolygon(polys)
    if len(polys) > 1:
        _check_valid(result, where_c, element, source)
    return result, nv


def _ring(ring, where, element, source) -> list[tuple[float, float]]:
    if not isinstance(ring, list) or len(ring) == 0:
        raise GeometryError(f"element {element!r}: empty coordinates", file=source,
                            field=where)
    pts = []
    for k, pos in enumerate(ring):
        if (not isinstance(pos, list | tuple) or len(pos) < 2
                or not all(_is_number(v) for v in pos[:2])):
            raise GeometryError(f"element {element!r}: vertex {pos!r} is not a pair of "
                                "numbers [x, y] in pixels", file=source, field=f"{where}[{k}]")
        x, y = float(pos[0]), float(pos[1])
        if not (math.isfinite(x) and math.isfinite(y)):
            raise GeometryError(f"element {element!r}: vertex {pos!r} is not finite",
                                file=source, field=f"{where}[{k}]")
        if abs(x) > _FAR_PX or abs(y) > _FAR_PX:
            raise GeometryError(f"element {element!r}: vertex ({x:.6g}, {y:.6g}) lies far "
                                "outside any thermogram; expected pixel coordinates",
                                file=source, field=f"{where}[{k}]")
        pts.append((x, y))
    if len(pts) > 1 and pts[0] == pts[-1]:
        pts = pts[:-1]
    if len(set(pts)) < 3:
        raise GeometryError(f"element {element!r}: a ring needs at least 3 distinct "
                            f"vertices, got {len(set(pts))}", file=source, field=where)
    return pts


def _is_number(v) -> bool:
    return isinstance(v, int | float) and not isinstance(v, bool)


def _check_valid(poly, where, element, source):
    if not poly.area > 0.0:
        raise GeometryError(f"element {element!r}: outline has zero area", file=source,
                            field=where)
    reason = shapely.is_valid_reason(poly)
    if reason != "Valid Geometry":
        raise GeometryError(f"element {element!r}: invalid outline ({reason}); edges must "
                            "not cross or touch", file=source, field=where)


def _as_polygonal(geom) -> Polygon | MultiPolygon:
    """Keep the polygonal parts of a clipping result."""
    if isinstance(geom, Polygon | MultiPolygon):
        return geom
    parts = [g for g in getattr(geom, "geoms", []) if isinstance(g, Polygon) and g.area > 0]
    return parts[0] if len(parts) == 1 else MultiPolygon(parts)


def outlines_by_element(outlines: Iterable[Outline]) -> dict[str, dict[str, Outline]]:
    """Group outlines as ``{element: {role: Outline}}``."""
    grouped: dict[str, dict[str, Outline]] = {}
    for o in outlines:
        grouped.setdefault(o.element, {})[o.role] = o
    return grouped


def rasterise(polygon, shape_px) -> np.ndarray:
    """Boolean mask of the pixels whose centres lie inside `polygon`.

    Parameters
    ----------
    polygon : shapely.Polygon or shapely.MultiPolygon
        In pixel coordinates.
    shape_px : tuple of int
        Image shape ``(H, W)``.

    Returns
    -------
    ndarray of bool, shape (H, W)
        True where the centre ``(col + 0.5, row + 0.5)`` is strictly inside.
    """
    h_px, w_px = (int(v) for v in shape_px[:2])
    mask = np.zeros((h_px, w_px), dtype=bool)
    if polygon is None or polygon.is_empty:
        return mask
    xmin, ymin, xmax, ymax = polygon.bounds
    c0 = max(0, int(np.floor(xmin - 0.5)))
    c1 = min(w_px, int(np.ceil(xmax - 0.5)) + 1)
    r0 = max(0, int(np.floor(ymin - 0.5)))
    r1 = min(h_px, int(np.ceil(ymax - 0.5)) + 1)
    if c1 <= c0 or r1 <= r0:
        return mask
    shapely.prepare(polygon)
    t = _TILE_PX
    n_tr, n_tc = -(-(r1 - r0) // t), -(-(c1 - c0) // t)
    if n_tr * n_tc < 16:
        gx, gy = np.meshgrid(np.arange(c0, c1) + 0.5, np.arange(r0, r1) + 0.5)
        mask[r0:r1, c0:c1] = shapely.contains_xy(polygon, gx, gy)
        return mask
    # Tiles of t x t pixel centres: whole tiles inside or outside are settled by one test
    # on the box spanning their centres; only the tiles the boundary crosses are tested
    # centre by centre.
    tr, tc = np.meshgrid(r0 + t * np.arange(n_tr), c0 + t * np.arange(n_tc), indexing="ij")
    tr, tc = tr.ravel(), tc.ravel()
    boxes = shapely.box(tc + 0.5, tr + 0.5, np.minimum(tc + t, c1) - 0.5,
                        np.minimum(tr + t, r1) - 0.5)
    inside = shapely.contains_properly(polygon, boxes)
    mixed = ~inside & shapely.intersects(polygon, boxes)
    sub = mask[r0:r0 + n_tr * t, c0:c0 + n_tc * t]
    view = np.zeros((n_tr * t, n_tc * t), dtype=bool)
    blocks = view.reshape(n_tr, t, n_tc, t)
    blocks[inside.reshape(n_tr, n_tc)[:, None, :, None].repeat(t, 1).repeat(t, 3)] = True
    k = np.flatnonzero(mixed)
    if k.size:
        off = np.arange(t)
        rr = (tr[k][:, None, None] + off[None, :, None]) + np.zeros((1, 1, t), dtype=int)
        cc = (tc[k][:, None, None] + off[None, None, :]) + np.zeros((1, t, 1), dtype=int)
        hit = shapely.contains_xy(polygon, cc + 0.5, rr + 0.5)
        view[rr - r0, cc - c0] = hit
    sub[...] = view[:sub.shape[0], :sub.shape[1]]
    return mask


_TILE_PX = 16
