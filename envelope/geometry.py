"""Façade geometry: homography pixel → metres, rectification, element masks and net areas.

Pixel coordinates are ``(x, y)`` = (column, row), frame ``[0, W] x [0, H]``, the centre of
pixel ``[row, col]`` at ``(col + 0.5, row + 0.5)``. Façade coordinates ``(X, Y)`` are metres
on the plane of the element. Outlines (GeoJSON) are read in `envelope.outlines`; their names
are re-exported here.

References
----------
[1] Hartley, R. I. (1997). In defense of the eight-point algorithm. IEEE Transactions on
    Pattern Analysis and Machine Intelligence 19(6), 580-593. doi:10.1109/34.601246
[2] Hartley, R. and Zisserman, A. (2004). Multiple View Geometry in Computer Vision, 2nd ed.
    Cambridge University Press. Algorithm 4.2 (normalised DLT), Sec. 4.4.4 (normalisation).
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import dataclass
from functools import cached_property

import numpy as np
import shapely
from scipy import ndimage
from shapely.geometry import MultiPolygon, Polygon

from envelope.errors import GeometryError
from envelope.outlines import (  # noqa: F401  (re-exported)
    Outline,
    outlines_by_element,
    parse_outlines,
    rasterise,
    read_outlines,
)

KINDS = ("wall", "window", "door", "roof", "floor", "ceiling")
"""Element kinds."""
OPENING_KINDS = ("window", "door")
GLAZED_KINDS = ("window",)
"""Element kinds that are glazing (design Rsi 0.13, window convection, outside defect zones)."""
HOST_KINDS = ("wall", "roof")
HOST_FRACTION_MIN = 0.95
"""Share of an opening's area that must lie inside its host."""
REFERENCE_TOLERANCE_PX = 1.0
"""How far [px] a reference zone may reach beyond its element's net outline."""
MAX_RECTIFIED_PIXELS = 16_000_000
"""Largest rectified grid [px]."""


@dataclass(frozen=True, eq=False)
class Homography:
    """A plane projective map from pixel coordinates to façade metres.

    Attributes
    ----------
    matrix : ndarray, shape (3, 3)
        Maps homogeneous pixel ``(x, y, 1)`` to homogeneous metres ``(X, Y, 1)`` up to scale;
        normalised so ``matrix[2, 2] == 1``.
    rms_error_m : float
        Root-mean-square reprojection error of the fitting points [m] (0 when the fit is
        exact by construction: four points, or a known-length scale).
    n_points : int
        Number of point pairs (2 for a known length).
    fronto_parallel_assumed : bool
        True when the map assumes the image plane is parallel to the façade.
    method : str
        ``"dlt"`` or ``"known-length"``.
    """

    matrix: np.ndarray
    rms_error_m: float
    n_points: int
    fronto_parallel_assumed: bool
    method: str

    @cached_property
    def inverse(self) -> np.ndarray:
        """The 3x3 matrix mapping façade metres to pixels, normalised to ``[2, 2] == 1``
        where that element is not zero."""
        inv = np.linalg.inv(self.matrix)
        return inv / inv[2, 2] if abs(inv[2, 2]) > 1e-300 else inv

    def to_metres(self, xy_px) -> np.ndarray:
        """Map pixel points ``(..., 2)`` [px] to façade metres ``(..., 2)`` [m]."""
        return _apply(self.matrix, xy_px)

    def to_pixels(self, xy_m) -> np.ndarray:
        """Map façade points ``(..., 2)`` [m] to pixel coordinates ``(..., 2)`` [px]."""
        return _apply(self.inverse, xy_m)


def _apply(matrix, xy) -> np.ndarray:
    xy = np.asarray(xy, dtype=float)
    if xy.shape[-1] != 2:
        raise ValueError(f"points must have shape (..., 2), got {xy.shape}")
    p = xy @ matrix[:, :2].T + matrix[:, 2]
    with np.errstate(divide="ignore", invalid="ignore"):
        return p[..., :2] / p[..., 2:3]


def _normaliser(pts: np.ndarray) -> np.ndarray:
    """Similarity moving the centroid to 0 and the mean distance to sqrt(2) (Sec. 4.4.4 [2])."""
    c = pts.mean(axis=0)
    d = np.mean(np.hypot(*(pts - c).T))
    s = np.sqrt(2.0) / d
    return np.array([[s, 0.0, -s * c[0]], [0.0, s, -s * c[1]], [0.0, 0.0, 1.0]])


def _check_points(pts: np.ndarray, name: str) -> None:
    n = len(pts)
    for i in range(n):
        dup = np.flatnonzero(np.all(pts[i + 1:] == pts[i], axis=1))
        if dup.size:
            raise GeometryError(f"points {i} and {i + 1 + dup[0]} are the same {tuple(pts[i])}",
                                field=name)
    t = _normaliser(pts)
    q = pts @ t[:2, :2].T + t[:2, 2]
    sv = np.linalg.svd(q, compute_uv=False)
    if sv[1] < 1e-9 * sv[0]:
        raise GeometryError("all points lie on one line; a homography needs four points "
                            "with no three on a line", field=name)
    if n == 4:
        for i, j, k in ((0, 1, 2), (0, 1, 3), (0, 2, 3), (1, 2, 3)):
            a, b, c = q[i], q[j], q[k]
            area2 = abs((b[0] - a[0]) * (c[1] - a[1]) - (b[1] - a[1]) * (c[0] - a[0]))
            if area2 < 1e-6:
                raise GeometryError(f"points {i}, {j} and {k} lie on one line; with four "
                                    "points no three may be collinear", field=name)


def fit_homography(pixel_xy, metre_xy) -> Homography:
    """Fit the homography pixel → metres from four or more point pairs (normalised DLT).

    Parameters
    ----------
    pixel_xy : array_like, shape (N, 2)
        Reference points in the image [px], ``(x, y)`` = (column, row).
    metre_xy : array_like, shape (N, 2)
        The same points on the façade plane [m].

    Returns
    -------
    Homography
        ``method="dlt"``, with the reprojection RMS error in metres.

    Raises
    ------
    GeometryError
        Fewer than four pairs, mismatched shapes, non-finite values, duplicate points, three
        collinear among exactly four points (or all collinear), points on both sides of the
        vanishing line, or a near-singular result.

    Notes
    -----
    Each pair gives two rows of :math:`A h = 0` (Eq. 4.3 of [2]) in coordinates normalised by
    similarities :math:`T, T'` (centroid at the origin, mean distance :math:`\\sqrt 2`,
    [1], Sec. 4.4.4 of [2]); :math:`h` is the right singular vector of the smallest singular
    value of :math:`A`, and :math:`H = T'^{-1} \\tilde H T` (Algorithm 4.2 of [2]). With more
    than four pairs this minimises the algebraic error; the reported RMS is the geometric
    error in metres, :math:`\\sqrt{\\mathrm{mean}\\,\\lVert H(x_i) - X_i\\rVert^2}`.

    References
    ----------
    [1] Hartley (1997), see module references.
    [2] Hartley and Zisserman (2004), Algorithm 4.2.

    Examples
    --------
    >>> h = fit_homography([[0, 0], [100, 0], [100, 50], [0, 50]],
    ...                    [[0, 0], [2, 0], [2, 1], [0, 1]])
    >>> h.to_metres([[50, 25]]).round(6).tolist()
    [[1.0, 0.5]]
    """
    try:
        px = np.asarray(pixel_xy, dtype=float)
        mx = np.asarray(metre_xy, dtype=float)
    except (TypeError, ValueError):
        raise GeometryError("reference points must be numbers", field="reference_points") \
            from None
    if px.ndim != 2 or px.shape[1] != 2 or mx.shape != px.shape:
        raise GeometryError(f"expected two (N, 2) arrays of the same shape, got {px.shape} "
                            f"and {mx.shape}", field="reference_points")
    n = len(px)
    if n < 4:
        raise GeometryError(f"a homography needs at least 4 point pairs, got {n}",
                            field="reference_points")
    if not (np.all(np.isfinite(px)) and np.all(np.isfinite(mx))):
        raise GeometryError("reference points contain non-finite values",
                            field="reference_points")
    _check_points(px, "reference_points.pixel_xy")
    _check_points(mx, "reference_points.metre_xy")
    tp, tm = _normaliser(px), _normaliser(mx)
    p = px @ tp[:2, :2].T + tp[:2, 2]
    m = mx @ tm[:2, :2].T + tm[:2, 2]
    a = np.zeros((2 * n, 9))
    x, y = p[:, 0], p[:, 1]
    u, v = m[:, 0], m[:, 1]
    one, zero = np.ones(n), np.zeros(n)
    a[0::2] = np.column_stack([zero, zero, zero, -x, -y, -one, v * x, v * y, v])
    a[1::2] = np.column_stack([x, y, one, zero, zero, zero, -u * x, -u * y, -u])
    _, sv, vt = np.linalg.svd(a)
    if sv[-2] < 1e-10 * sv[0]:
        raise GeometryError("reference points do not fix a unique homography (degenerate "
                            "configuration)", field="reference_points")
    hn = vt[-1].reshape(3, 3)
    mat = np.linalg.inv(tm) @ hn @ tp
    scale = np.abs(mat).max()
    mat = mat / scale
    if abs(np.linalg.det(mat)) < 1e-12 or abs(mat[2, 2]) < 1e-12:
        raise GeometryError("the fitted homography is near-singular; check the reference "
                            "points", field="reference_points")
    mat = mat / mat[2, 2]
    w = px @ mat[2, :2] + mat[2, 2]
    if not (np.all(w > 0) or np.all(w < 0)):
        raise GeometryError("reference points lie on both sides of the vanishing line; check "
                            "their order", field="reference_points")
    res = _apply(mat, px) - mx
    rms = 0.0 if n == 4 else float(np.sqrt(np.mean(np.sum(res**2, axis=1))))
    return Homography(matrix=mat, rms_error_m=rms, n_points=n, fronto_parallel_assumed=False,
                      method="dlt")


def scale_homography(pixel_a, pixel_b, length_m, shape_px=None) -> Homography:
    """A pure scale from one known length, assuming a fronto-parallel view.

    Parameters
    ----------
    pixel_a, pixel_b : array_like, shape (2,)
        End points of the known length in the image [px].
    length_m : float
        True length between them [m], > 0.
    shape_px : tuple of int, optional
        Image shape ``(H, W)``; if given, both points must lie in the frame.

    Returns
    -------
    Homography
        ``method="known-length"``, ``fronto_parallel_assumed=True``, ``n_points=2``.

    Notes
    -----
    :math:`X = s x,\\ Y = s y` with :math:`s = L / \\lVert b - a \\rVert` [m/px]: square
    pixels, origin at the image's top-left corner, and Y pointing **down** like the pixel y
    axis (not up as a height would). Areas are :math:`s^2` per pixel; they are right only as
    far as the image plane is parallel to the façade — a tilt of angle θ shortens lengths
    across the tilt by cos θ.
    """
    a = np.asarray(pixel_a, dtype=float).reshape(-1)
    b = np.asarray(pixel_b, dtype=float).reshape(-1)
    if a.shape != (2,) or b.shape != (2,) or not (np.all(np.isfinite(a))
                                                  and np.all(np.isfinite(b))):
        raise GeometryError("known-length end points must be two finite (x, y) pairs",
                            field="known_length")
    if not (np.isfinite(length_m) and length_m > 0):
        raise GeometryError(f"known length must be > 0 m, got {length_m}",
                            field="known_length.length_m")
    if shape_px is not None:
        h_px, w_px = shape_px[:2]
        for name, p in (("a", a), ("b", b)):
            if not (0 <= p[0] <= w_px and 0 <= p[1] <= h_px):
                raise GeometryError(f"point {name} {tuple(p)} lies outside the "
                                    f"{w_px}x{h_px} px frame", field=f"known_length.{name}")
    d = float(np.hypot(*(b - a)))
    if d < 1.0:
        raise GeometryError(f"known-length end points are {d:.2f} px apart; need at least "
                            "1 px", field="known_length")
    s = float(length_m) / d
    return Homography(matrix=np.diag([s, s, 1.0]), rms_error_m=0.0, n_points=2,
                      fronto_parallel_assumed=True, method="known-length")


def pixel_area_map(h: Homography, shape) -> np.ndarray:
    """Façade area covered by each pixel [m²], from the homography's Jacobian.

    Parameters
    ----------
    h : Homography
    shape : tuple of int
        Image shape ``(H, W)`` [px].

    Returns
    -------
    ndarray, shape (H, W), float64
        :math:`|\\det J|` at each pixel centre [m² per px].

    Notes
    -----
    With :math:`(X, Y) = (u/w, v/w)` and :math:`(u, v, w)^T = H (x, y, 1)^T`,

    .. math:: \\det J = \\frac{\\det H}{w^3},

    derived here: write :math:`H = [[A, b], [g^T, h_{22}]]` with :math:`A` 2x2, so that
    :math:`w = g^T p + h_{22}` and :math:`X' = (A p + b)/w`. Differentiating,
    :math:`J = (A - X' g^T)/w`. The matrix determinant lemma gives
    det(A - X' g^T) = det(A) (1 - g^T A^-1 X') = det(A) (h22 - g^T A^-1 b) / w, and the
    Schur complement gives det(H) = det(A) (h22 - g^T A^-1 b); with the factor w^-2 of
    the 2x2 determinant, det J = det(H) / w^3. It is invariant to the scale of H and is
    checked against finite differences in the
    tests. It is the first-order area of a pixel; the exact area of any
    polygon is computed by mapping its vertices (`element_regions`).
    """
    h_px, w_px = (int(v) for v in shape[:2])
    m = h.matrix
    x = np.arange(w_px) + 0.5
    y = np.arange(h_px) + 0.5
    w = m[2, 0] * x[None, :] + m[2, 1] * y[:, None] + m[2, 2]
    with np.errstate(divide="ignore"):
        return np.abs(np.linalg.det(m) / w**3)


@dataclass(frozen=True, eq=False)
class Rectified:
    """An image resampled onto a metric grid on the façade plane.

    Attributes
    ----------
    image : ndarray, shape (R, C)
        Resampled values; NaN outside the frame or next to invalid input pixels.
    valid : ndarray of bool, shape (R, C)
    cm_per_px : float
        Grid step [cm].
    origin_m : tuple of float
        Façade coordinates ``(X, Y)`` [m] of the outer corner of grid cell ``[0, 0]``.
    extent_m : tuple of float
        ``(x_min, x_max, y_min, y_max)`` [m] covered by the grid.
    y_down : bool
        True when row index grows with Y (as for a known-length scale); False when row 0 is
        at the largest Y, so the grid shows the façade upright like the photograph.
    """

    image: np.ndarray
    valid: np.ndarray
    cm_per_px: float
    origin_m: tuple[float, float]
    extent_m: tuple[float, float, float, float]
    y_down: bool


def rectify(image, h: Homography, cm_per_px: float, bounds_m=None) -> Rectified:
    """Resample an image onto a regular grid in façade metres (bilinear).

    Parameters
    ----------
    image : array_like, shape (H, W)
        Image, NaN marking invalid pixels.
    h : Homography
    cm_per_px : float
        Grid step [cm], > 0.
    bounds_m : tuple of float, optional
        ``(x_min, y_min, x_max, y_max)`` [m]; default: the bounding box of the frame mapped
        to metres.

    Returns
    -------
    Rectified

    Notes
    -----
    Each grid cell centre is mapped to pixel coordinates with :math:`H^{-1}` and sampled
    with ``scipy.ndimage.map_coordinates`` (order 1) at array index ``(y - 0.5, x - 0.5)``.
    A cell is invalid when it maps outside the frame, behind the camera (homogeneous scale of
    the other sign than the frame's), or when any input pixel with non-zero bilinear weight
    is NaN.
    """
    img = np.asarray(image, dtype=float)
    if img.ndim != 2:
        raise ValueError(f"image must be 2-D, got shape {img.shape}")
    if not (np.isfinite(cm_per_px) and cm_per_px > 0):
        raise ValueError(f"cm_per_px must be > 0, got {cm_per_px}")
    h_px, w_px = img.shape
    step = cm_per_px / 100.0
    if bounds_m is None:
        corners = np.array([[0, 0], [w_px, 0], [w_px, h_px], [0, h_px]], dtype=float)
        wc = corners @ h.matrix[2, :2] + h.matrix[2, 2]
        if not (np.all(wc > 0) or np.all(wc < 0)):
            raise GeometryError("the frame contains the façade's vanishing line; give "
                                "bounds_m for the rectified grid", field="bounds_m")
        cm = h.to_metres(corners)
        x0, y0 = cm.min(axis=0)
        x1, y1 = cm.max(axis=0)
    else:
        x0, y0, x1, y1 = (float(v) for v in bounds_m)
        if not (x1 > x0 and y1 > y0):
            raise GeometryError(f"bounds_m must be (x_min, y_min, x_max, y_max), got "
                                f"{bounds_m}", field="bounds_m")
    n_c = max(1, int(np.ceil((x1 - x0) / step - 1e-9)))
    n_r = max(1, int(np.ceil((y1 - y0) / step - 1e-9)))
    if n_c * n_r > MAX_RECTIFIED_PIXELS:
        raise GeometryError(f"rectified grid of {n_r}x{n_c} cells is too large; use a larger "
                            "cm_per_px or smaller bounds_m", field="cm_per_px")
    centre = np.array([w_px / 2.0, h_px / 2.0])
    jac = _jacobian(h.matrix, centre)
    y_down = bool(jac[1, 1] >= 0)
    xs = x0 + (np.arange(n_c) + 0.5) * step
    if y_down:
        ys = y0 + (np.arange(n_r) + 0.5) * step
        origin = (float(x0), float(y0))
    else:
        ys = y0 + n_r * step - (np.arange(n_r) + 0.5) * step
        origin = (float(x0), float(y0 + n_r * step))
    gx, gy = np.meshgrid(xs, ys)
    inv = h.inverse
    hom = np.stack([gx, gy, np.ones_like(gx)], axis=-1) @ inv.T
    w_ref = np.sign((inv @ np.append(h.to_metres(centre), 1.0))[2])
    with np.errstate(divide="ignore", invalid="ignore"):
        px = hom[..., 0] / hom[..., 2]
        py = hom[..., 1] / hom[..., 2]
    valid = ((np.sign(hom[..., 2]) == w_ref) & (px >= 0) & (px <= w_px)
             & (py >= 0) & (py <= h_px))
    coords = np.stack([np.where(valid, py - 0.5, 0.0), np.where(valid, px - 0.5, 0.0)])
    bad = ~np.isfinite(img)
    vals = ndimage.map_coordinates(np.where(bad, 0.0, img), coords, order=1, mode="nearest")
    if bad.any():
        spoil = ndimage.map_coordinates(bad.astype(float), coords, order=1, mode="nearest")
        valid &= spoil <= 1e-12
    vals[~valid] = np.nan
    extent = (float(x0), float(x0 + n_c * step), float(y0), float(y0 + n_r * step))
    return Rectified(image=vals, valid=valid, cm_per_px=float(cm_per_px), origin_m=origin,
                     extent_m=extent, y_down=y_down)


def _jacobian(m, xy) -> np.ndarray:
    """Jacobian d(X, Y)/d(x, y) of the map at one point."""
    u, v, w = m @ np.array([xy[0], xy[1], 1.0])
    return np.array([[m[0, 0] * w - u * m[2, 0], m[0, 1] * w - u * m[2, 1]],
                     [m[1, 0] * w - v * m[2, 0], m[1, 1] * w - v * m[2, 1]]]) / w**2


@dataclass(frozen=True, eq=False)
class ElementRegion:
    """One element's region in one thermogram.

    Attributes
    ----------
    name, kind : str
    polygon_net : shapely.Polygon or MultiPolygon
        Outline [px] with its openings cut out.
    mask : ndarray of bool, shape (H, W)
        Pixels of the net outline.
    reference_mask : ndarray of bool or None
        Pixels of the reference zone (clipped to the net outline), if one was drawn.
    area_m2 : float
        Net area on the façade [m²], exact for the polygon under the homography.
    area_gross_m2 : float
        Area before openings were cut out [m²].
    pixel_area_m2 : float
        Sum of the per-pixel area map over `mask` [m²] (agrees with `area_m2` to within the
        edge pixels).
    perimeter_m : float
        Boundary length of the net outline [m]: outer boundary plus opening edges.
    openings : tuple of str
        Names of the windows and doors cut out of this element.
    reference_polygon : shapely.Polygon or MultiPolygon or None
        The reference zone [px], clipped to the net outline.
    """

    name: str
    kind: str
    polygon_net: Polygon | MultiPolygon
    mask: np.ndarray
    reference_mask: np.ndarray | None
    area_m2: float
    area_gross_m2: float
    pixel_area_m2: float
    perimeter_m: float
    openings: tuple[str, ...]
    reference_polygon: Polygon | MultiPolygon | None = None


def metric_polygon(polygon, h: Homography, name: str = "outline"):
    """Map a pixel polygon to façade metres vertex by vertex (exact: lines map to lines).

    Raises
    ------
    GeometryError
        If the polygon reaches across the vanishing line (no finite façade area).
    """
    coords = shapely.get_coordinates(polygon)
    w = coords @ h.matrix[2, :2] + h.matrix[2, 2]
    if not (np.all(w > 0) or np.all(w < 0)):
        raise GeometryError(f"{name} reaches across the façade's vanishing line; its area on "
                            "the façade is not finite", field=name)
    return shapely.transform(polygon, h.to_metres)


def element_regions(outlines, elements: Mapping, shape_px, h: Homography,
                    source: str | None = None) -> dict[str, ElementRegion]:
    """Element masks and net areas from outlines: openings cut out of their host.

    Parameters
    ----------
    outlines : list of Outline
    elements : mapping
        ``name -> (kind, host_or_None)``; kind one of `KINDS`. A window's or door's host is a
        wall or roof; when None, the wall/roof outline holding at least
        `HOST_FRACTION_MIN` of the opening's area is taken.
    shape_px : tuple of int
        Image shape ``(H, W)``.
    h : Homography
    source : str, optional
        File name for errors.

    Returns
    -------
    dict of str to ElementRegion
        For each element with an outline, in outline order.

    Notes
    -----
    Net outline: :math:`P_{net} = P \\setminus \\bigcup_k O_k` (shapely difference). Areas are
    the shoelace areas of the outlines after each vertex is mapped through the homography,
    which is exact because a projective map takes straight edges to straight edges.
    """
    grouped = outlines_by_element(outlines)
    for name, roles in grouped.items():
        o = roles.get("element") or roles["reference"]
        field = f"features[{o.index}].properties.element"
        if name not in elements:
            raise GeometryError(f"outline of unknown element {name!r}", file=source,
                                field=field)
        if "element" not in roles:
            raise GeometryError(f"reference zone of {name!r} without an outline of the "
                                "element", file=source, field=field)
    kinds = {}
    for name, spec in elements.items():
        kind, _host = spec
        if kind not in KINDS:
            raise GeometryError(f"element {name!r}: unknown kind {kind!r}; valid: "
                                f"{', '.join(KINDS)}", file=source, field=f"{name}.kind")
        kinds[name] = kind
    hosts = [n for n in grouped if kinds[n] in HOST_KINDS]
    cut: dict[str, list[str]] = {n: [] for n in grouped}
    for name in grouped:
        if kinds[name] not in OPENING_KINDS:
            continue
        poly = grouped[name]["element"].polygon
        field = f"features[{grouped[name]['element'].index}]"
        given = elements[name][1]
        if given is not None:
            if given not in grouped or kinds.get(given) not in HOST_KINDS:
                raise GeometryError(f"{kinds[name]} {name!r}: host {given!r} is not a wall or "
                                    "roof outlined in this thermogram", file=source,
                                    field=field)
            frac = grouped[given]["element"].polygon.intersection(poly).area / poly.area
            if frac < HOST_FRACTION_MIN:
                raise GeometryError(f"{kinds[name]} {name!r}: only {frac:.0%} of it lies inside "
                                    f"its host {given!r}", file=source, field=field)
            cut[given].append(name)
            continue
        fracs = [(grouped[w]["element"].polygon.intersection(poly).area / poly.area, w)
                 for w in hosts]
        best = max(fracs, default=(0.0, None))
        if best[0] < HOST_FRACTION_MIN:
            raise GeometryError(f"{kinds[name]} {name!r} is not inside any wall or roof "
                                f"outline", file=source, field=field)
        cut[best[1]].append(name)
    area_map = pixel_area_map(h, shape_px)
    out = {}
    for name, roles in grouped.items():
        o = roles["element"]
        gross = o.polygon
        net = gross
        if cut[name]:
            net = gross.difference(shapely.union_all([grouped[k]["element"].polygon
                                                      for k in cut[name]]))
            net = _polygonal(net)
        field = f"features[{o.index}]"
        if net.is_empty or net.area <= 0:
            raise GeometryError(f"element {name!r}: nothing is left after cutting out "
                                f"{', '.join(cut[name])}", file=source, field=field)
        mask = rasterise(net, shape_px)
        ref_mask = ref = None
        if "reference" in roles:
            ref = roles["reference"].polygon
            rfield = f"features[{roles['reference'].index}]"
            if not net.buffer(REFERENCE_TOLERANCE_PX).covers(ref):
                raise GeometryError(f"reference zone of {name!r} reaches outside the "
                                    "element's net outline", file=source, field=rfield)
            ref = _polygonal(ref.intersection(net))
            if ref.is_empty:
                raise GeometryError(f"reference zone of {name!r} is empty once clipped to the "
                                    "element", file=source, field=rfield)
            ref_mask = rasterise(ref, shape_px)
        net_m = metric_polygon(net, h, name)
        out[name] = ElementRegion(
            name=name, kind=kinds[name], polygon_net=net, mask=mask, reference_mask=ref_mask,
            area_m2=float(net_m.area), area_gross_m2=float(metric_polygon(gross, h, name).area),
            pixel_area_m2=float(area_map[mask].sum()), perimeter_m=float(net_m.length),
            openings=tuple(cut[name]), reference_polygon=ref)
    return out


def _polygonal(geom):
    """Polygonal part of a shapely result (drop lines/points from touching edges)."""
    if isinstance(geom, Polygon | MultiPolygon):
        return geom
    parts = [g for g in getattr(geom, "geoms", []) if isinstance(g, Polygon)]
    if not parts:
        return Polygon()
    return parts[0] if len(parts) == 1 else MultiPolygon(parts)
