"""Junctions: their type from the element outlines, a bridge's run along one, default psi
values and checks against design.

A cold region sits at a junction when the outline of its element meets the outline of
another element along it. The type comes from the kinds of the two elements whose outlines
meet there (wall–floor, wall–ceiling, wall–roof, a corner between two walls, around an
opening: head, sill or jamb), never from the side of the image a region lies on. An element
edge with no neighbouring outline (the edge of the picture, or a neighbour that was not
outlined) is an "outline edge": a junction of unknown type.

Pixel coordinates are ``(x, y)`` = (column, row), y down, as in `envelope.outlines`.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass

import numpy as np
import shapely

from envelope import bridges
from envelope.geometry import OPENING_KINDS

__all__ = [
    "OPENING_KINDS",
    "OUTLINE_EDGE",
    "DEFAULT_PSI",
    "Junction",
    "junction_label",
    "junction_type_from_slug",
    "find_junctions",
    "default_psi",
    "junction_verdict",
    "junction_groups",
    "span_along",
    "extend_along",
    "length_along",
]


OUTLINE_EDGE = "outline edge"
"""Junction kind of an element edge with no neighbouring outline (type unknown)."""

_PAIR_LABELS = {
    frozenset(("wall", "floor")): "wall–floor",
    frozenset(("wall", "ceiling")): "wall–ceiling",
    frozenset(("wall", "roof")): "wall–roof",
    frozenset(("wall",)): "corner",
    frozenset(("roof", "ceiling")): "roof–ceiling",
    frozenset(("roof",)): "roof–roof",
    frozenset(("ceiling",)): "ceiling–ceiling",
    frozenset(("floor",)): "floor–floor",
}

_K1 = ("UK SAP 2012 Appendix K, Table K1, default (not accredited) value, internal "
       "dimensions; from memory")
DEFAULT_PSI = {
    "wall–floor": (0.32, f"{_K1}: E5 ground floor"),
    "wall–ceiling": (0.12, f"{_K1}: E10 eaves, insulation at ceiling level"),
    "corner": (0.18, f"{_K1}: E16 corner (normal)"),
    "around opening (sill)": (0.08, f"{_K1}: E3 sill"),
    "around opening (jamb)": (0.10, f"{_K1}: E4 jamb"),
}
"""Default psi per junction type [W/(m K)] with its source. Types not listed (heads, whose
default depends on the lintel type; wall–roof; outline edges) need a specified value."""


@dataclass
class Junction:
    """A neighbouring element whose outline meets the region's element near the region."""

    name: str
    """Neighbour element name, or ``"edge:<side>"`` for an outline edge with no neighbour."""
    kind: str
    """Junction type: "wall–floor", "wall–ceiling", "corner", "around opening (head)"..."""
    distance_m: float
    """Shortest distance from the region to the shared outline edge [m]."""
    direction: str
    """Orientation of the shared edge near the region: "horizontal" or "vertical"."""
    contact_m: float = 0.0
    """Length of the shared edge within the junction distance of the region [m]."""
    direction_px: tuple[float, float] = (1.0, 0.0)
    """Unit vector along the shared edge near the region, in pixel coordinates (x, y)."""


_SLUG_TYPES = {"jamb": "around opening (jamb)", "sill": "around opening (sill)",
               "head": "around opening (head)", "window-reveal": "around opening",
               "around-opening": "around opening", "opening": "around opening"}


def junction_type_from_slug(slug: str) -> str:
    """The junction type of a survey's ``junction_type`` slug: "wall-floor" → "wall–floor",
    "jamb" → "around opening (jamb)", "corner" → "corner"."""
    s = str(slug).strip().lower()
    return _SLUG_TYPES.get(s, s.replace("-", "–"))


def junction_label(kind_a: str, kind_b: str) -> str:
    """Junction type between two element kinds ("wall–floor", "around opening", "corner"...)."""
    a, b = kind_a.lower(), kind_b.lower()
    if a in OPENING_KINDS or b in OPENING_KINDS:
        return "around opening"
    return _PAIR_LABELS.get(frozenset((a, b)), f"{a}–{b}")


def _orientation_tensor(geom) -> np.ndarray:
    """``Σ l u uᵀ`` over the segments of a line geometry (length l, unit direction u)."""
    tensor = np.zeros((2, 2))
    parts = getattr(geom, "geoms", [geom])
    for part in parts:
        pts = shapely.get_coordinates(part)
        if len(pts) < 2:
            continue
        d = pts[1:] - pts[:-1]
        ln = np.hypot(d[:, 0], d[:, 1])
        keep = ln > 0
        if not keep.all():
            d, ln = d[keep], ln[keep]
        u = d / ln[:, None]
        tensor += (u * ln[:, None]).T @ u
    return tensor


def _principal_directions(geoms) -> list[tuple[float, float]]:
    """Unit vector of the dominant direction of each line geometry (x, y).

    The eigenvector of the orientation tensor ``Σ l u uᵀ`` over its segments (length l,
    unit direction u): short side pieces do not tilt a long straight edge. The tensors'
    eigenvectors come from one stacked `numpy.linalg.eigh`.
    """
    tensors = np.array([_orientation_tensor(g) for g in geoms]).reshape(-1, 2, 2)
    out = [(1.0, 0.0)] * len(tensors)
    some = [i for i, t in enumerate(tensors) if t.any()]
    if not some:
        return out
    w, v = np.linalg.eigh(tensors[some])
    for i, wi, vi in zip(some, w, v, strict=True):
        ux, uy = vi[:, int(np.argmax(wi))]
        if ux < 0 or (ux == 0 and uy < 0):
            ux, uy = -ux, -uy
        out[i] = (float(ux), float(uy))
    return out


def _principal_direction(geom) -> tuple[float, float]:
    """Unit vector of the dominant direction of a line geometry (x, y) (`_principal_directions`)."""
    return _principal_directions([geom])[0]


def _side(vec_x: float, vec_y: float) -> str:
    """Where a point lies seen from the region (y grows downwards)."""
    if abs(vec_y) >= abs(vec_x):
        return "below" if vec_y > 0 else "above"
    return "right" if vec_x > 0 else "left"


@functools.lru_cache(maxsize=512)
def _shared_edge(poly_el, poly_other, tolerance_px: float):
    """Part of an element's boundary within `tolerance_px` of another outline (cached: the
    same pair of outlines serves every region of a thermogram)."""
    return poly_el.boundary.intersection(poly_other.buffer(tolerance_px))


@functools.lru_cache(maxsize=128)
def _free_edge(poly_el, others: tuple, tolerance_px: float):
    """Part of an element's boundary that no other outline shares (cached per element)."""
    free = poly_el.boundary
    for onet in others:
        shared = _shared_edge(poly_el, onet, tolerance_px)
        if not shared.is_empty:
            free = free.difference(shared.buffer(tolerance_px))
    return free


def find_junctions(region_polygon, element, others, pixel_m: float, junction_m: float,
                   tolerance_px: float = 1.5) -> list[Junction]:
    """Junctions of a region from the outlines that meet its element's outline near it.

    Parameters
    ----------
    region_polygon : shapely geometry
        The region's outline [px].
    element : object
        Its element (``name``, ``kind``, ``polygon_net`` [px]).
    others : sequence
        The thermogram's elements (same fields); the element itself is skipped.
    pixel_m : float
        Local pixel size [m].
    junction_m : float
        A shared edge within this distance of the region makes a junction [m].
    tolerance_px : float
        Gap between two outlines still counted as shared [px] (hand-drawn outlines rarely
        coincide exactly).

    Returns
    -------
    list of Junction
        Longest contact first. An element edge within the distance that no other outline
        shares gives one `OUTLINE_EDGE` junction (type unknown).

    Notes
    -----
    The shared edge of the element and a neighbour is the part of the element's boundary
    within `tolerance_px` of the neighbour's outline; its contact with the region is the
    part within `junction_m` of the region. The type follows from the two kinds
    (`junction_label`); around an opening the side of the opening seen from the region
    names it: below the region → "head" (lintel), above → "sill", beside → "jamb".
    """
    poly_el = getattr(element, "polygon_net", None)
    if poly_el is None or poly_el.is_empty or region_polygon is None or region_polygon.is_empty:
        return []
    s = float(pixel_m) if pixel_m and np.isfinite(pixel_m) and pixel_m > 0 else 1.0
    reach_px = junction_m / s
    near_region = region_polygon.buffer(reach_px)
    cx, cy = region_polygon.centroid.x, region_polygon.centroid.y
    neighbours = [o for o in others if o.name != element.name
                  and getattr(o, "polygon_net", None) is not None and not o.polygon_net.is_empty]
    onets = [o.polygon_net for o in neighbours]
    close = ~(shapely.distance(onets, region_polygon) > reach_px + tolerance_px) if onets else []
    found = []  # (name, kind, contact)
    for other, onet, ok in zip(neighbours, onets, close, strict=True):
        if not ok:
            continue
        shared = _shared_edge(poly_el, onet, float(tolerance_px))
        if shared.is_empty:
            continue
        contact = shared.intersection(near_region)
        if contact.is_empty or contact.length <= 0:
            continue
        kind = junction_label(element.kind, other.kind)
        if kind == "around opening":
            oc = onet.centroid
            pos = {"below": "head", "above": "sill"}.get(_side(oc.x - cx, oc.y - cy), "jamb")
            kind = f"around opening ({pos})"
        found.append((other.name, kind, contact))
    free = _free_edge(poly_el, tuple(onets), float(tolerance_px))
    edge = free.intersection(near_region) if not free.is_empty else free
    if not edge.is_empty and edge.length > 0:
        ec = edge.centroid
        side = {"below": "bottom", "above": "top"}.get(_side(ec.x - cx, ec.y - cy),
                                                       _side(ec.x - cx, ec.y - cy))
        found.append((f"edge:{side}", OUTLINE_EDGE, edge))
    out: list[Junction] = []
    for (name, kind, line), (ux, uy) in zip(
            found, _principal_directions([c for _, _, c in found]), strict=True):
        out.append(Junction(
            name=name, kind=kind, distance_m=float(region_polygon.distance(line)) * s,
            direction="horizontal" if abs(ux) >= abs(uy) else "vertical",
            contact_m=float(line.length) * s, direction_px=(ux, uy)))
    out.sort(key=lambda j: (-j.contact_m, j.distance_m))
    return out


def default_psi(kind: str | None, specified: dict | None = None):
    """Design psi of a junction type: ``(psi_w_mk, source)`` or ``(None, reason)``.

    Parameters
    ----------
    kind : str or None
        Junction type (`Junction.kind`).
    specified : dict, optional
        Specified values by junction type [W/(m K)] (from the design); they take precedence
        over `DEFAULT_PSI`. A plain "around opening" key applies to head, sill and jamb.
    """
    if kind is None or kind == OUTLINE_EDGE:
        return None, "junction type unknown (no neighbouring outline)"
    spec = specified or {}
    for key in (kind, "around opening" if kind.startswith("around opening") else None):
        if key is not None and key in spec and spec[key] is not None:
            v = float(spec[key])
            if not math.isfinite(v):
                raise ValueError(f"specified psi for {key!r} must be finite; got {spec[key]!r}")
            return v, "specified"
    if kind in DEFAULT_PSI:
        return DEFAULT_PSI[kind]
    return None, f"no specified or default psi for a {kind} junction"


def junction_verdict(psi_low95: float, psi_high95: float, psi_design: float | None,
                     tolerance: float = 0.0, checks_ok: bool = True) -> tuple[str, str]:
    """Pass / fail / inconclusive of a measured psi against its design value.

    Parameters
    ----------
    psi_low95, psi_high95 : float
        95 % interval of the measured psi [W/(m K)].
    psi_design : float or None
        Specified or default psi (`default_psi`) [W/(m K)]; None gives "inconclusive".
    tolerance : float
        Allowance added to the design value [W/(m K)], >= 0.
    checks_ok : bool
        False when a survey validity check failed.

    Notes
    -----
    The rule of the builder's U check (``builder_verdict``), with psi in place
    of U: with ``limit = psi_design + tolerance``, pass when ``psi_high95 <= limit``, fail
    when ``psi_low95 > limit``, otherwise inconclusive; a failed survey check downgrades a
    pass to inconclusive. Both are measured with internal dimensions here; a design value
    given with external dimensions must be converted first
    (`envelope.bridges.psi_internal_to_external`).
    """
    if tolerance is None or not np.isfinite(tolerance) or tolerance < 0:
        raise ValueError(f"tolerance must be >= 0, got {tolerance!r}")
    if psi_design is None:
        return "inconclusive", "no design psi for this junction: give a specified value."
    if not np.isfinite(psi_design):
        raise ValueError(f"psi_design must be finite, got {psi_design!r}")
    if not (np.isfinite(psi_low95) and np.isfinite(psi_high95)):
        return "inconclusive", "no measured psi interval for this junction."
    if psi_low95 > psi_high95:
        raise ValueError(f"psi_low95 {psi_low95} is above psi_high95 {psi_high95}")
    limit = float(psi_design) + float(tolerance)
    iv = f"measured 95 % interval {psi_low95:.3f} to {psi_high95:.3f} W/(m·K)"
    lim = f"{limit:.3f} W/(m·K)"
    if psi_high95 <= limit:
        if not checks_ok:
            return ("inconclusive", f"{iv} is within the design psi {lim}, but a survey "
                    "validity check failed, so the evidence does not support a pass.")
        return "pass", f"{iv} lies wholly at or below the design psi {lim}."
    if psi_low95 > limit:
        note = "" if checks_ok else " A survey validity check failed: confirm first."
        return "fail", f"{iv} lies wholly above the design psi {lim}.{note}"
    return "inconclusive", f"{iv} straddles the design psi {lim}."


def _angle_deg(ux: float, uy: float) -> float:
    """Angle of a pixel-coordinate direction from the x axis, counter-clockwise as seen."""
    return math.degrees(math.atan2(-uy, ux)) % 180.0


def _angle_diff(a: float, b: float) -> float:
    d = abs(a - b) % 180.0
    return min(d, 180.0 - d)


def _width_across(region, j: Junction) -> float:
    """Extent of a region across a junction (along the junction's normal) [m]."""
    ux, uy = j.direction_px
    rows, cols = np.nonzero(region.mask)
    proj = (cols + region.slices[1].start + 0.5) * -uy + (rows + region.slices[0].start + 0.5) * ux
    return float((proj.max() - proj.min() + 1.0) * region.pixel_m) if rows.size else 0.0


def junction_groups(regions, classes, junction_m: float, width_factor: float = 2.0,
                    parallel_deg: float = 20.0) -> list[tuple[list[int], Junction]]:
    """Fragments of one linear bridge along one junction, to be merged into one defect.

    Parameters
    ----------
    regions : sequence of `envelope.anomalies.Region`
        Cold regions of one thermogram, of every element.
    classes : sequence of str
        Their classes (`envelope.defects.classify`).
    junction_m : float
        Distance within which a region sits at a junction [m].
    width_factor : float
        A region of another class (compact pieces of a broken line) joins the group when
        its width across the junction is at most this multiple of the widest linear member.
    parallel_deg : float
        Largest angle between a linear fragment and the junction [deg].

    Returns
    -------
    list of (member indices, junction)
        Groups of two or more regions: the linear-bridge regions sharing a junction (the
        same pair of outlines and the same junction type, seen from either side: a
        wall–floor bridge found on the wall and on the floor is one group), with the
        compact pieces that lie along it. Air-leakage, repeating-bridge and warm regions
        never join.
    """
    def key_of(r):
        near = [j for j in r.junctions if j.distance_m <= junction_m]
        if not near:
            return None, None
        j = near[0]
        pair = (frozenset((r.element, j.name)) if not j.name.startswith("edge:")
                else (r.element, j.name))
        return (pair, j.kind), j

    keyed = [key_of(r) for r in regions]
    groups: dict = {}
    for i, (r, c) in enumerate(zip(regions, classes, strict=True)):
        key, j = keyed[i]
        if key is None or c != "linear thermal bridge" or getattr(r, "sign", "cold") != "cold":
            continue
        if _angle_diff(r.orientation_deg, _angle_deg(*j.direction_px)) > parallel_deg:
            continue
        groups.setdefault(key, ([], j))[0].append(i)
    for key, (members, j) in groups.items():
        widest = max(_width_across(regions[i], j) for i in members)
        for i, (r, c) in enumerate(zip(regions, classes, strict=True)):
            if i in members or keyed[i][0] != key or getattr(r, "sign", "cold") != "cold":
                continue
            if c in ("air leakage", "repeating thermal bridge", "linear thermal bridge"):
                continue
            if _width_across(r, keyed[i][1]) <= width_factor * widest:
                members.append(i)
    return [(sorted(m), j) for m, j in groups.values() if len(m) >= 2]


# ------------------------------------------------------------ a bridge's run along its junction
def _pixels(mask):
    """Rows and columns of a full-frame mask's pixels, or of a `envelope.bridges.Zone`'s."""
    if isinstance(mask, bridges.Zone):
        rows, cols = np.nonzero(mask.mask)
        return rows + mask.slices[0].start, cols + mask.slices[1].start
    return bridges._nonzero(np.asarray(mask, bool))


def span_along(mask, direction_px=(1.0, 0.0)) -> tuple[float, float, float, float]:
    """``(ux, uy, lo, hi)``: unit direction and the span of a full-frame mask's pixels (or a
    `envelope.bridges.Zone`'s) along it [px], pixel edges included (half a pixel beyond the
    extreme centres)."""
    rows, cols = _pixels(mask)
    ux, uy = (float(v) for v in direction_px)
    n = math.hypot(ux, uy)
    if n == 0:
        raise ValueError("direction_px must not be the zero vector")
    ux, uy = ux / n, uy / n
    if rows.size == 0:
        return ux, uy, 0.0, -1.0
    proj = (cols + 0.5) * ux + (rows + 0.5) * uy
    return ux, uy, float(proj.min()) - 0.5, float(proj.max()) + 0.5


def _in_box(zone, box) -> np.ndarray:
    """A `envelope.bridges.Zone`'s mask placed in the slices `box` that hold it."""
    out = np.zeros((box[0].stop - box[0].start, box[1].stop - box[1].start), bool)
    if zone.mask.size:
        out[zone.slices[0].start - box[0].start:zone.slices[0].stop - box[0].start,
            zone.slices[1].start - box[1].start:zone.slices[1].stop - box[1].start] = zone.mask
    return out


def extend_along(q_w_m2, area_map_m2, seed, labels, q_ref_w_m2, direction_px, valid=None,
                 q_sigma_w_m2=None, fraction: float = 0.5, window_m: float = 0.05,
                 noise_z: float = 2.0):
    """A linear bridge's run along its junction, from its seed (fragments may miss its ends).

    Parameters
    ----------
    q_w_m2, area_map_m2 : ndarray (H, W)
    seed : bool (H, W) or envelope.bridges.Zone
        The bridge's seed (its fragments and the gaps between them).
    labels, q_ref_w_m2 : as in `envelope.bridges.integration_zones`
    direction_px : (ux, uy)
        Direction of the junction in pixel coordinates.
    valid : bool (H, W) or envelope.bridges.Zone, optional
        Pixels the run may extend over (the bridge's elements).
    q_sigma_w_m2 : array_like, optional
        Pixel spread of q per element index [W/m²] (noise of the profile).
    fraction : float
        The run goes on while the excess along the line stays at least this fraction of the
        seed's (and above the noise).
    window_m : float
        Length of the moving window along the line [m].

    Returns
    -------
    (span, band)
        ``span = (ux, uy, lo, hi)`` (`span_along` of the run) and ``band``, the pixels across
        the seed's width over the whole run, which extend the seed: bool (H, W), or a `Zone`
        when the seed is one.

    Notes
    -----
    Over the band of pixels whose projection across the junction lies within the seed's,
    the area-weighted mean excess is profiled along the junction (1-px bins). From each end
    of the seed's span the run extends while a window of `window_m` keeps a mean excess of
    at least ``max(fraction ē_seed, noise_z σ_ē)``: through a bridge that goes on but broke
    up under the threshold, not past a bridge's real end (where the excess drops within a
    few centimetres). Only the bounding box of the seed and the valid pixels is read.
    """
    q, a = bridges._check_maps(q_w_m2, area_map_m2)
    shape = q.shape
    boxed = isinstance(seed, bridges.Zone)
    if not boxed:
        seed = np.asarray(seed, bool)
    labels = bridges._int_labels(labels)

    def unchanged():
        if boxed:
            return bridges.Zone(seed.slices, seed.mask.copy(), seed.distance_m, seed.stop,
                                shape)
        return seed.copy()

    ux, uy, lo, hi = span_along(seed, direction_px)
    if hi < lo:
        return (ux, uy, lo, hi), unchanged()
    nx, ny = -uy, ux
    rows, cols = _pixels(seed)
    across = (cols + 0.5) * nx + (rows + 0.5) * ny
    a_lo, a_hi = float(across.min()) - 0.5, float(across.max()) + 0.5
    if valid is None:
        valid = labels >= 0
    if isinstance(valid, bridges.Zone) or boxed:
        zs = [z if isinstance(z, bridges.Zone) else bridges.Zone.from_full(z)
              for z in (valid, seed)]
        box = bridges.Zone.union_of(zs).slices
        region = _in_box(zs[0], box) | _in_box(zs[1], box)
    else:
        valid = np.asarray(valid, bool)
        box = bridges._box_of(valid | seed)
        region = valid[box] | seed[box]
    # the pixels across the seed's width: projections of the pixel centres, as
    # ``(c + 0.5) n_x + (r + 0.5) n_y`` pixel by pixel
    rows = np.arange(box[0].start, box[0].stop) + 0.5
    cols = np.arange(box[1].start, box[1].stop) + 0.5
    acr = (cols * nx)[None, :] + (rows * ny)[:, None]
    across_ok = region & (acr >= a_lo) & (acr <= a_hi)
    band_box = bridges._box_of(across_ok)
    if band_box is None:
        return (ux, uy, lo, hi), unchanged()
    r0, c0 = box[0].start + band_box[0].start, box[1].start + band_box[1].start
    sub = (slice(r0, r0 + band_box[0].stop - band_box[0].start),
           slice(c0, c0 + band_box[1].stop - band_box[1].start))
    q, a, labels = q[sub], a[sub], labels[sub]
    ok = across_ok[band_box] & (labels >= 0) & np.isfinite(q) & np.isfinite(a)
    rr, cc = np.nonzero(ok)
    if not rr.size:
        return (ux, uy, lo, hi), unchanged()
    rr, cc = rr + r0, cc + c0
    alg = (cc + 0.5) * ux + (rr + 0.5) * uy
    q_ref = np.asarray(q_ref_w_m2, dtype=float).ravel()
    lab, a_ok = labels[ok], a[ok]
    exc = q[ok] - q_ref[lab]
    base = float(np.floor(alg.min()))
    b = np.floor(alg - base).astype(np.int64)
    nb = int(b.max()) + 1
    s_a = np.bincount(b, weights=a_ok, minlength=nb)
    s_e = np.bincount(b, weights=exc * a_ok, minlength=nb)
    if q_sigma_w_m2 is not None:
        sg = np.asarray(q_sigma_w_m2, dtype=float).ravel()
        sgv = np.where(np.isfinite(sg), sg, 0.0)[lab]
        s_v = np.bincount(b, weights=sgv**2 * a_ok**2, minlength=nb)
    else:
        s_v = np.zeros(nb)
    b_lo = max(int(np.floor(lo - base + 0.5)), 0)
    b_hi = min(int(np.floor(hi - base - 0.5)), nb - 1)
    a_seed = s_a[b_lo:b_hi + 1].sum()
    level = float(s_e[b_lo:b_hi + 1].sum() / a_seed) if a_seed > 0 else math.nan
    if not level > 0:
        return (ux, uy, lo, hi), unchanged()
    pix = float(np.sqrt(bridges.median(a_ok)))
    w = max(1, int(round(window_m / pix)))

    def keeps(i0: int, i1: int) -> bool:
        i0, i1 = max(i0, 0), min(i1, nb)
        aw = s_a[i0:i1].sum()
        if i1 <= i0 or aw <= 0:
            return False
        mean = s_e[i0:i1].sum() / aw
        return mean >= max(fraction * level, noise_z * math.sqrt(s_v[i0:i1].sum()) / aw)

    up = b_hi
    while up + 1 < nb and keeps(up + 1, up + 1 + w):
        up += 1
    down = b_lo
    while down - 1 >= 0 and keeps(down - w, down):
        down -= 1
    lo2, hi2 = base + down, base + up + 1
    run = (alg >= lo2) & (alg <= hi2)
    if boxed:
        band = _in_box(seed, box)
        band[rr[run] - box[0].start, cc[run] - box[1].start] = True
        band = bridges.Zone.from_box(box, band, seed.distance_m, seed.stop)
        band.frame_shape = shape
    else:
        band = seed.copy()
        band[rr[run], cc[run]] = True
    return (ux, uy, min(lo, lo2), max(hi, hi2)), band


def length_along(mask, direction_px=(1.0, 0.0), pixel_m: float = 1.0,
                 offset=(0, 0)) -> float:
    """Extent of a pixel mask along a direction [m]: (max - min projection + 1 px) × size.

    Parameters
    ----------
    mask : bool ndarray
    direction_px : (ux, uy)
        Direction in pixel coordinates (x = column, y = row); normalised here.
    pixel_m : float
        Pixel size [m].
    offset : (row, col)
        Position of ``mask[0, 0]`` in the full frame (does not change the extent).
    """
    rows, cols = bridges._nonzero(np.asarray(mask, bool))
    if rows.size == 0:
        return 0.0
    ux, uy = (float(v) for v in direction_px)
    n = math.hypot(ux, uy)
    if n == 0:
        raise ValueError("direction_px must not be the zero vector")
    proj = (cols + offset[1] + 0.5) * ux / n + (rows + offset[0] + 0.5) * uy / n
    return float((proj.max() - proj.min() + 1.0) * pixel_m)
