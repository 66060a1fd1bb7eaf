"""Anomaly segmentation and region description: the first half of the defects engine.

`envelope.defects` holds classification, quantification and ranking; `envelope.bridges`
the excess-heat integration; `envelope.junctions` the junction types; and
`envelope.registration` the image pairs. Everything here works on plain arrays: a
temperature-factor map, boolean element masks, a per-pixel area map [m2/px] and shapely
polygons in pixel coordinates (x = column, y = row, pixel ``[r, c]`` centred at
``(c + 0.5, r + 0.5)``).

Steps, per element:

1. reference level of fRsi: median over the element's reference zone, else the median of
   the element with the median absolute deviation (MAD) as its robust spread;
2. anomaly map: pixels colder (interior view) or warmer (exterior view) than the reference
   by more than ``delta_f + k * sigma`` (`anomaly_threshold`);
3. binary opening then closing (`scipy.ndimage`), connected-component labelling, regions
   under ``min_area_m2`` dropped;
4. description (`describe_region`): area, principal-axis length and width from second
   moments, orientation, elongation, distance to the element edge, the junctions whose
   outlines meet near it (`envelope.junctions.find_junctions`), irregularity, solidity, a
   pixel-exact polygon;
5. repetition (`find_repetition`): parallel elongated regions at a regular spacing.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import shapely
import shapely.ops
from scipy import ndimage

from envelope.bridges import median
from envelope.errors import SurveyError
from envelope.junctions import Junction, find_junctions

__all__ = [
    "MAD_TO_SIGMA",
    "DefectSettings",
    "Junction",
    "Region",
    "reference_level",
    "anomaly_threshold",
    "segment_element",
    "pixel_polygon",
    "describe_region",
    "find_repetition",
]

MAD_TO_SIGMA = 1.4826
"""Scale from the median absolute deviation to sigma for normally distributed data."""


@dataclass(frozen=True)
class DefectSettings:
    """Thresholds and shape rules of the defects engine.

    Attributes
    ----------
    delta_f : float
        Fixed part of the anomaly threshold on the temperature factor [-]. 0.03 (about
        0.6 K at a 20 K indoor–outdoor difference) is common practice for "clearly colder
        than the undisturbed wall".
    delta_f_exterior : float
        The same on exterior views [-]. The exterior surface departs from the outdoor air
        by only ``U ΔT R_se`` (R_se = 0.04 against R_si = 0.13 m2K/W, ISO 6946:2017
        Table 7), so the fixed part is scaled by about R_se / R_si: 0.03 × 0.04 / 0.13
        ≈ 0.01.
    k_sigma : float
        Multiple of the robust spread (1.4826 MAD) of the reference zone added to
        ``delta_f``, so that camera noise and texture do not trigger anomalies.
    min_area_m2 : float
        Regions smaller than this are dropped [m2].
    opening_px, closing_px : int
        Radii of the binary opening (removes speckle) and closing (fills pinholes) [px].
    junction_m : float
        A region within this distance of another element's outline, or of the element's own
        edge, sits at a junction [m].
    repetition_tol : float
        Relative tolerance on the spacing of repeating regions (and on the spread of their
        orientations, as a fraction of 90°) [-].
    min_repeats : int
        Fewest parallel elongated regions that make a repetition.
    elongated : float
        Length/width ratio from which a region counts as elongated (linear) [-].
    cutoff_m : float
        Farthest distance from a defect's seed over which its excess heat flux is
        integrated [m] (`envelope.bridges.integration_zones`); at least the 1 m of the
        cut-off planes of ISO 10211:2017. Integration usually stops earlier, where the
        excess falls to the noise level.
    noise_z : float
        The excess of a ring of pixels counts as noise when it is within ``noise_z``
        standard errors of zero [-].
    ring_window_m : float
        Width of the moving window of rings whose mean excess is tested [m].
    tail_fraction : float
        Integration also stops when the excess falls under this fraction of the excess on
        the seed [-] (texture floor; the exponential tail left beyond is at most this
        fraction of the tail's integral).
    merge_width_factor : float
        A compact region at a junction joins the linear bridge there when its width across
        the junction is at most this multiple of the bridge's width [-].
    kinds : tuple of str
        Element kinds searched for defects (glazing is excluded: it is meant to be colder).
    report_warm : bool
        On an interior view, report warm anomalies as "unexplained" with a note
        (reflection or heat source) instead of dropping them.
    """

    delta_f: float = 0.03
    delta_f_exterior: float = 0.01
    k_sigma: float = 3.0
    min_area_m2: float = 0.01
    opening_px: int = 1
    closing_px: int = 1
    junction_m: float = 0.3
    repetition_tol: float = 0.2
    min_repeats: int = 3
    elongated: float = 4.0
    cutoff_m: float = 2.0
    noise_z: float = 2.0
    ring_window_m: float = 0.03
    tail_fraction: float = 0.005
    merge_width_factor: float = 2.0
    kinds: tuple[str, ...] = ("wall", "roof", "ceiling", "floor", "door")
    report_warm: bool = True

    def __post_init__(self):
        for name in ("delta_f", "delta_f_exterior", "k_sigma", "min_area_m2", "junction_m",
                     "noise_z", "ring_window_m", "tail_fraction", "merge_width_factor"):
            if not getattr(self, name) >= 0:
                raise SurveyError(f"must be >= 0, got {getattr(self, name)}", field=name)
        if not self.cutoff_m >= 1.0:
            raise SurveyError(f"must be >= 1 m (ISO 10211 cut-off planes), got {self.cutoff_m}",
                              field="cutoff_m")
        if self.min_repeats < 2:
            raise SurveyError(f"must be >= 2, got {self.min_repeats}", field="min_repeats")


@dataclass
class Region:
    """One connected anomaly region of an element, described by its shape.

    Lengths are in metres through the local pixel size ``sqrt(area per pixel)`` (locally
    square pixels, i.e. a rectified or fronto-parallel view).
    """

    element: str
    element_kind: str
    sign: str
    """"cold" (fRsi below the reference) or "warm" (above)."""
    slices: tuple[slice, slice]
    """Bounding slices of the region in the full image."""
    mask: np.ndarray
    """Boolean mask of the region inside `slices`."""
    n_px: int
    area_m2: float
    pixel_m: float
    length_m: float
    width_m: float
    extent_m: float
    """Extent along the major axis (max - min projection + one pixel) [m]."""
    orientation_deg: float
    """Major-axis angle from the image x axis, counter-clockwise as seen, in [0, 180)."""
    elongation: float
    centroid_px: tuple[float, float]
    bbox_px: tuple[float, float, float, float]
    """(x_min, y_min, x_max, y_max) pixel-edge coordinates."""
    polygon: object
    perimeter_m: float
    irregularity: float
    """perimeter² / (4 π area) of the outline simplified at half a pixel (1 for a disc)."""
    solidity: float
    """area / convex-hull area [-] (1 for a convex region)."""
    edge_distance_m: float
    edge_side: str
    junctions: list[Junction] = field(default_factory=list)
    frsi_min: float = np.nan
    frsi_p05: float = np.nan
    frsi_mean: float = np.nan
    repetition: int | None = None
    """Index of the repetition group the region belongs to (same element), else None."""
    spacing_m: float | None = None


def reference_level(frsi, mask, reference_mask=None) -> tuple[float, float]:
    """Reference temperature factor of an element and its robust spread.

    Parameters
    ----------
    frsi : ndarray
        Temperature-factor map [-] (NaN = invalid).
    mask : ndarray of bool
        Net element mask.
    reference_mask : ndarray of bool, optional
        The user's undisturbed reference zone. When absent (or with fewer than 10 valid
        pixels) the whole element is used with robust statistics.

    Returns
    -------
    level, sigma : float
        Median of fRsi over the zone, and 1.4826 × MAD (the MAD scaled to a normal sigma).

    Notes
    -----
    The median and MAD resist up to half the pixels being anomalous (Hampel 1974), so a
    defect covering part of the element does not drag its own reference.

    References
    ----------
    [1] F. R. Hampel, "The influence curve and its role in robust estimation", J. Am.
        Stat. Assoc. 69 (1974) 383–393.
    """
    frsi = np.asarray(frsi, dtype=float)
    zone = None
    if reference_mask is not None:
        zone = np.asarray(reference_mask, bool) & np.isfinite(frsi)
        if zone.sum() < 10:
            zone = None
    if zone is None:
        zone = np.asarray(mask, bool) & np.isfinite(frsi)
    v = frsi[zone]
    if v.size == 0:
        return np.nan, np.nan
    level = median(v)
    sigma = float(MAD_TO_SIGMA * median(np.abs(v - level)))
    return level, sigma


def anomaly_threshold(sigma: float, settings: DefectSettings, side: str = "interior") -> float:
    """Distance from the reference level beyond which a pixel is anomalous [-].

    Notes
    -----
    ``threshold = delta_f + k_sigma * sigma`` (``delta_f_exterior`` on exterior views) with ``sigma`` = 1.4826 MAD of the reference
    zone. The fixed part sets the smallest defect worth reporting; the noise part keeps a
    noisy or textured surface from being reported as defective.
    """
    s = 0.0 if not np.isfinite(sigma) else sigma
    fixed = settings.delta_f if side == "interior" else settings.delta_f_exterior
    return fixed + settings.k_sigma * s


def _disk(radius: int) -> np.ndarray:
    r = int(radius)
    y, x = np.ogrid[-r : r + 1, -r : r + 1]
    return x * x + y * y <= r * r + r  # r=1: the full 3x3 square; larger r: a rounded disc


def _dilate(a, r):
    """Binary dilation of a bool array by `_disk` (r) with False beyond the edge."""
    if r == 1:  # the full 3 x 3 square, separable: a row pass then a column pass
        h = a.copy()
        h[:, 1:] |= a[:, :-1]
        h[:, :-1] |= a[:, 1:]
        out = h.copy()
        out[1:] |= h[:-1]
        out[:-1] |= h[1:]
        return out
    return ndimage.binary_dilation(a, structure=_disk(r))


def _erode(a, r):
    """Binary erosion of a bool array by `_disk` (r) with False beyond the edge."""
    if r == 1:
        h = a[:, :-2] & a[:, 1:-1] & a[:, 2:]
        out = np.zeros_like(a)
        out[1:-1, 1:-1] = h[:-2] & h[1:-1] & h[2:]
        return out
    return ndimage.binary_erosion(a, structure=_disk(r))


def _clean(binary, settings: DefectSettings):
    """Binary opening then closing, on a False-padded copy so the frame edge is not eroded."""
    if not binary.any():
        return binary
    pad = max(settings.opening_px, settings.closing_px) + 1
    out = np.pad(np.asarray(binary, bool), pad)
    if settings.opening_px > 0:
        out = _dilate(_erode(out, settings.opening_px), settings.opening_px)
    if settings.closing_px > 0:
        out = _erode(_dilate(out, settings.closing_px), settings.closing_px)
    return out[pad:-pad, pad:-pad].copy()


def _bbox(mask):
    rows = np.flatnonzero(mask.any(axis=1))
    if rows.size == 0:
        return None
    cols = np.flatnonzero(mask[rows[0]:rows[-1] + 1].any(axis=0))
    return slice(rows[0], rows[-1] + 1), slice(cols[0], cols[-1] + 1)


def segment_element(frsi, mask, reference_mask, area_map_m2, side, settings, extra=None,
                    box=None):
    """Label the anomalous regions of one element.

    Parameters
    ----------
    frsi : ndarray
        Temperature-factor map [-], full frame.
    mask, reference_mask : ndarray of bool
        Net element mask and optional reference zone.
    area_map_m2 : ndarray
        Area of each pixel on the element plane [m2/px].
    side : {"interior", "exterior"}
        Interior views look for colder (lower fRsi) regions, exterior views for warmer.
    settings : DefectSettings
    extra : ndarray, optional
        A second fRsi map on the same pixels (the aligned depressurised image); a pixel is
        anomalous if it is anomalous in either map.
    box : (slice, slice), optional
        The bounding box of `mask` when the caller knows it.

    Returns
    -------
    dict
        ``level``, ``sigma``, ``threshold``, ``slices`` (element bbox), ``labels`` (int
        array in the bbox), ``kept`` (list of (label, sign)), ``reference`` (bool array in
        the bbox: the user's reference zone when given, else the element pixels within
        the threshold of the reference level).
    """
    if side not in ("interior", "exterior"):
        raise ValueError(f"side must be one of ['interior', 'exterior'], got {side!r}")
    mask = np.asarray(mask, bool)
    sl = _bbox(mask) if box is None else box
    if sl is None or sl[0].stop <= sl[0].start:
        return {"level": np.nan, "sigma": np.nan, "threshold": np.nan, "slices": None,
                "kept": [], "labels": None, "reference": None}
    level, sigma = reference_level(
        np.asarray(frsi)[sl], mask[sl],
        None if reference_mask is None else np.asarray(reference_mask, bool)[sl])
    thr = anomaly_threshold(sigma, settings, side)
    out = {"level": level, "sigma": sigma, "threshold": thr, "slices": sl, "kept": []}
    if not np.isfinite(level):
        out["labels"] = None
        out["reference"] = None
        return out
    # pad the crop by the morphology radius so that closing does not stick to the crop edge
    pad = max(settings.opening_px, settings.closing_px) + 1
    r0, r1 = max(sl[0].start - pad, 0), min(sl[0].stop + pad, mask.shape[0])
    c0, c1 = max(sl[1].start - pad, 0), min(sl[1].stop + pad, mask.shape[1])
    sl = (slice(r0, r1), slice(c0, c1))
    out["slices"] = sl
    m = mask[sl]
    f = np.asarray(frsi, float)[sl]
    dev = f - level
    if extra is not None:
        e = np.asarray(extra, float)[sl] - level
        cold_dev = np.fmin(dev, e)
        warm_dev = np.fmax(dev, e)
    else:
        cold_dev = warm_dev = dev
    bad = -cold_dev > thr if side == "interior" else warm_dev > thr
    other = warm_dev > thr if side == "interior" else -cold_dev > thr
    bad = _clean(bad & m, settings) & m
    area = np.asarray(area_map_m2, float)[sl]
    labels = np.zeros(m.shape, dtype=np.int32)
    n = 0
    for sign in ("cold", "warm"):
        if sign == "warm" and (side == "exterior" or not settings.report_warm):
            # only interior warm spots get a note; exterior cold spots are not defects
            continue
        binary = bad if sign == "cold" else _clean(other & m & ~bad, settings) & m
        if not binary.any():
            continue
        lab, k = ndimage.label(binary)
        # the area of each label, pixel by pixel in raster order (the sums of
        # `scipy.ndimage.sum`), over the labelled pixels only
        a_px = area[binary]
        sizes = np.bincount(lab[binary], weights=np.where(np.isfinite(a_px), a_px, 0.0),
                            minlength=k + 1)[1:]
        keep = np.flatnonzero(sizes >= settings.min_area_m2) + 1
        if n == 0 and keep.size == k:  # every region kept, numbered as labelled
            labels = lab
        else:
            remap = np.zeros(k + 1, dtype=np.int32)
            remap[keep] = np.arange(n + 1, n + 1 + keep.size)
            rr, cc = np.nonzero(binary)
            new = remap[lab[rr, cc]]
            took = new > 0
            labels[rr[took], cc[took]] = new[took]
        tag = sign if side == "interior" else "warm"
        out["kept"].extend((n + 1 + i, tag) for i in range(keep.size))
        n += keep.size
    out["labels"] = labels
    ref = m & (np.abs(dev) <= thr) & np.isfinite(f)
    if reference_mask is not None:
        user = np.asarray(reference_mask, bool)[sl] & m & np.isfinite(f)
        if user.sum() >= 10:
            ref = user
    out["reference"] = ref
    return out


def pixel_polygon(mask, offset=(0, 0)):
    """Pixel-exact polygon of a boolean mask (union of its row runs), in pixel coordinates.

    Parameters
    ----------
    mask : ndarray of bool
        The region within its bounding box.
    offset : (row, col)
        Position of ``mask[0, 0]`` in the full image.

    Notes
    -----
    Runs of set pixels on each row are merged with identical runs on the following rows
    into rectangles, and the rectangles are unioned (GEOS cascaded union): a rectangular
    region costs one box whatever its size.
    """
    boxes = _row_run_boxes(np.asarray(mask, bool))
    if not boxes.size:
        return shapely.Polygon()
    oy, ox = offset
    b = boxes.astype(float)
    polys = shapely.box(b[:, 0] + ox, b[:, 1] + oy, b[:, 2] + ox, b[:, 3] + oy)
    if len(polys) == 1:
        return polys[0]
    return shapely.union_all(polys)


def _row_run_boxes(m) -> np.ndarray:
    """Rectangles ``(x0, y0, x1, y1)`` [px] of a mask: runs of set pixels on a row stacked
    with identical runs on the following rows; in the order their last row ends, then by
    column (int array (n, 4))."""
    p = np.zeros((m.shape[0], m.shape[1] + 2), dtype=np.int8)
    p[:, 1:-1] = m
    d = np.diff(p, axis=1)
    rr, cs = np.nonzero(d == 1)
    _, ce = np.nonzero(d == -1)
    if not rr.size:
        return np.zeros((0, 4), int)
    # the runs of one (start, end) column pair, row by row: a stack goes on while the rows
    # follow one another
    order = np.lexsort((rr, ce, cs))
    r, s, e = rr[order], cs[order], ce[order]
    same = np.zeros(r.size, bool)
    same[1:] = (s[1:] == s[:-1]) & (e[1:] == e[:-1]) & (r[1:] == r[:-1] + 1)
    first = np.flatnonzero(~same)
    last = np.append(first[1:], r.size) - 1
    boxes = np.stack([s[first], r[first], e[first], r[last] + 1], axis=1)
    return boxes[np.lexsort((boxes[:, 0], boxes[:, 3]))]


def _side_of(vec_x: float, vec_y: float) -> str:
    """Side of the element edge seen from the region (y grows downwards)."""
    if abs(vec_y) >= abs(vec_x):
        return "bottom" if vec_y > 0 else "top"
    return "right" if vec_x > 0 else "left"


def describe_region(region_mask, slices, frsi, area_map_m2, element, others=(), sign="cold",
                    settings=DefectSettings()) -> Region:
    """Shape description of one labelled region.

    Parameters
    ----------
    region_mask : ndarray of bool
        The region inside `slices` (its own bounding box).
    slices : (slice, slice)
        Where `region_mask` sits in the full frame.
    frsi, area_map_m2 : ndarray
        Full-frame temperature factor [-] and pixel area [m2/px].
    element : object
        The element (``name``, ``kind``, ``polygon_net`` in pixel coordinates).
    others : sequence
        The other elements of the thermogram (same fields), for junctions.
    sign : {"cold", "warm"}
    settings : DefectSettings

    Notes
    -----
    With pixel centres ``(x, y)`` and their covariance eigenvalues λ1 ≥ λ2 [px²], the
    length and width are those of the rectangle with the same second moments:
    ``L = sqrt(12 (λ1 + 1/12)) s``, ``W = sqrt(12 (λ2 + 1/12)) s``, s the local pixel size
    [m]; the 1/12 px² restores the extent of the pixels themselves, so a one-pixel-wide
    line is one pixel wide. Orientation is the major axis' angle from the image x axis,
    counter-clockwise as seen (image y points down). Irregularity is
    ``P² / (4 π A)`` of the outline simplified at 0.5 px (1 for a disc, 1.27 for a square,
    large for ragged plumes); solidity is ``A / A_hull``.
    """
    rows, cols = np.nonzero(region_mask)
    r0, c0 = slices[0].start, slices[1].start
    y = rows + r0 + 0.5
    x = cols + c0 + 0.5
    area_px = np.asarray(area_map_m2, float)[rows + r0, cols + c0]
    area_px = np.where(np.isfinite(area_px), area_px, 0.0)
    area_m2 = float(area_px.sum())
    s = float(np.sqrt(np.mean(area_px))) if area_px.size else np.nan
    xm, ym = float(x.mean()), float(y.mean())
    dx, dy = x - xm, y - ym
    cxx, cyy, cxy = float(np.mean(dx * dx)), float(np.mean(dy * dy)), float(np.mean(dx * dy))
    tr, det = cxx + cyy, cxx * cyy - cxy * cxy
    disc = np.sqrt(max(tr * tr / 4 - det, 0.0))
    l1, l2 = tr / 2 + disc, max(tr / 2 - disc, 0.0)
    theta = 0.5 * np.arctan2(2 * cxy, cxx - cyy)  # major axis in image coordinates
    ux, uy = np.cos(theta), np.sin(theta)
    orientation = float(np.degrees(np.arctan2(-uy, ux)) % 180.0)
    length_px = np.sqrt(12 * (l1 + 1 / 12))
    width_px = np.sqrt(12 * (l2 + 1 / 12))
    proj = dx * ux + dy * uy
    extent_px = float(proj.max() - proj.min() + 1.0)
    f = np.asarray(frsi, float)[rows + r0, cols + c0]
    f = f[np.isfinite(f)]
    poly = pixel_polygon(region_mask, (r0, c0))
    simple = poly.simplify(0.5)
    perim_px = float(simple.length)
    irregularity = perim_px**2 / (4 * np.pi * max(float(poly.area), 1e-12))
    hull = poly.convex_hull.area
    solidity = float(poly.area / hull) if hull > 0 else 1.0
    # junctions: outlines that meet the element's outline near the region
    junctions = find_junctions(poly, element, others, s, settings.junction_m)
    # distance to the element's own edge, and the side it lies on
    edge = element.polygon_net.boundary if element.polygon_net is not None else None
    if edge is not None and not edge.is_empty:
        a, b = shapely.ops.nearest_points(poly, edge)
        edge_px = float(a.distance(b))
        edge_side = _side_of(b.x - xm, b.y - ym)
    else:
        edge_px, edge_side = np.nan, ""
    return Region(
        element=element.name, element_kind=element.kind, sign=sign, slices=slices,
        mask=region_mask, n_px=int(rows.size), area_m2=area_m2, pixel_m=s,
        length_m=float(length_px * s), width_m=float(width_px * s),
        extent_m=float(extent_px * s), orientation_deg=orientation,
        elongation=float(length_px / width_px), centroid_px=(xm, ym),
        bbox_px=(float(c0 + cols.min()), float(r0 + rows.min()),
                 float(c0 + cols.max() + 1), float(r0 + rows.max() + 1)),
        polygon=poly, perimeter_m=perim_px * s, irregularity=float(irregularity),
        solidity=solidity, edge_distance_m=edge_px * s, edge_side=edge_side,
        junctions=junctions,
        frsi_min=float(f.min()) if f.size else np.nan,
        frsi_p05=float(np.percentile(f, 5)) if f.size else np.nan,
        frsi_mean=float(f.mean()) if f.size else np.nan,
    )


def _angle_diff(a: float, b: float) -> float:
    d = abs(a - b) % 180.0
    return min(d, 180.0 - d)


def find_repetition(regions, settings=DefectSettings()) -> list[list[int]]:
    """Groups of parallel elongated regions at a regular spacing (studs, rafters, ties).

    Parameters
    ----------
    regions : sequence of Region
        Regions of one element.
    settings : DefectSettings
        ``elongated`` (length/width from which a region is linear), ``repetition_tol``
        (relative spread of spacings and lengths allowed), ``min_repeats``.

    Returns
    -------
    list of list of int
        Indices into `regions`, one list per group; the members' ``repetition`` and
        ``spacing_m`` are set in place.

    Notes
    -----
    Elongated regions are grouped by orientation (within ``repetition_tol`` × 90°) and
    width (within a factor ``1 + 2 repetition_tol``; lengths may differ, as under a gable). In each group the centroids are
    projected on the normal to the common direction and sorted; the group is a repetition
    when every gap is within ``repetition_tol`` of a whole multiple of the median gap (one
    hidden member is allowed for), the median gap is at least twice the widest member (the
    members stand side by side: pieces of one broken line are not a repetition) and at least
    ``min_repeats`` members remain. The spacing is the median gap [m].
    """
    idx = [i for i, r in enumerate(regions) if r.elongation >= settings.elongated * 0.75]
    groups: list[list[int]] = []
    used: set[int] = set()
    tol_deg = settings.repetition_tol * 90.0
    for i in idx:
        if i in used:
            continue
        ri = regions[i]
        # members share direction and width (studs of one frame have one width; their
        # lengths differ under a gable or around openings)
        members = [j for j in idx if j not in used
                   and _angle_diff(regions[j].orientation_deg, ri.orientation_deg) <= tol_deg
                   and max(regions[j].width_m, ri.width_m)
                   <= (1 + 2 * settings.repetition_tol) * min(regions[j].width_m, ri.width_m)]
        if len(members) < settings.min_repeats:
            continue
        th = np.radians(ri.orientation_deg)
        nx, ny = np.sin(th), np.cos(th)  # normal to the direction (x, -y) in image coords
        pos = np.array([regions[j].centroid_px[0] * nx + regions[j].centroid_px[1] * ny
                        for j in members])
        order = np.argsort(pos)
        members = [members[k] for k in order]
        gaps = np.diff(pos[order])
        base = float(np.median(gaps))
        if base <= 0:
            continue
        mult = np.rint(gaps / base)
        ok = (mult >= 1) & (np.abs(gaps - mult * base) <= settings.repetition_tol * base)
        if not ok.all():
            continue
        s = float(np.mean([regions[j].pixel_m for j in members]))
        widest = max(regions[j].width_m for j in members)
        if base * s < 2.0 * widest:
            continue  # side by side, not in a line: collinear pieces of one bridge are not studs
        for j in members:
            regions[j].repetition = len(groups)
            regions[j].spacing_m = base * s
            used.add(j)
        groups.append(members)
    return groups
