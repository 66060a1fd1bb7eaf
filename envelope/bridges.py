"""Excess heat of thermal bridges and other defects from a surface heat-flux map.

The extra heat flow of a defect is the excess surface heat flux over the undisturbed flux
of each element, integrated over an integration zone (O'Grady et al. [1]). The zone grows
from the defect's seed (its thresholded region) ring by ring, across the junction into the
neighbouring element where that is in view, until the excess of the rings falls to the
noise level (or to a small fraction of the excess on the seed), and never beyond a cut-off
no shorter than the 1 m cut-off planes of ISO 10211 [2]. The zones of one thermogram never
overlap: each pixel belongs to the zone of its nearest seed at most.

Each element's undisturbed area is its mask (or its reference zone) without every defect's
zone; its undisturbed flux is the area-weighted mean over that area. With those, the
element's whole heat flow splits exactly into U·A and the defects' extra heat (no double
counting; `undisturbed_masks`, `reference_fluxes`).

psi is the extra heat flow per kelvin per metre of junction, with **internal dimensions**:
the excess is integrated over the internal surfaces of both sides of the junction, which is
``L2D - Σ U_j l_j,int`` of ISO 10211 [2] / ISO 14683 [3]; `psi_internal_to_external`
converts it. The length psi is divided by is the bridge's run along its junction
(`envelope.junctions.extend_along`), the `length_m` reported.

References
----------
[1] M. O'Grady, A. A. Lechowska and A. M. Harte, "Infrared thermography technique as an
    in-situ method of assessing heat loss through thermal bridging", Energy and Buildings
    135 (2017) 20–32, doi:10.1016/j.enbuild.2016.11.039.
[2] ISO 10211:2017, Thermal bridges in building construction -- Heat flows and surface
    temperatures -- Detailed calculations (cut-off planes; psi = L2D - Σ U_j l_j; clause
    numbers from memory, so not given).
[3] ISO 14683:2017, Thermal bridges in building construction -- Linear thermal
    transmittance -- Simplified methods and default values (dimension systems).
[4] F. Asdrubali, G. Baldinelli and F. Bianchi, "A quantitative methodology to evaluate
    thermal bridges in buildings", Applied Energy 97 (2012) 365–373,
    doi:10.1016/j.apenergy.2011.12.054.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
from scipy import ndimage

from envelope.zones import undisturbed_mask

__all__ = [
    "MAD_TO_SIGMA",
    "median",
    "Zone",
    "reference_flux",
    "reference_fluxes",
    "undisturbed_masks",
    "ZoneGeometry",
    "zone_geometry",
    "integration_zones",
    "excess_heat",
    "incidence_factor",
    "psi_internal_to_external",
]

MAD_TO_SIGMA = 1.4826
"""Scale from the median absolute deviation to sigma for normally distributed data."""


@dataclass
class Zone:
    """An integration zone: a boolean mask inside bounding slices of the full frame.

    ``distance_m`` is how far beyond the seed the integration reached [m] and ``stop`` why
    it stopped: "noise" (the rings' excess fell to the noise level), "tail fraction" (to
    the fraction of the seed's excess), "cut-off" (the cut-off distance), "no more pixels"
    (the element ends) or "seed only" (not grown: no excess on the seed, or a warm spot).
    """

    slices: tuple[slice, slice]
    mask: np.ndarray
    distance_m: float = 0.0
    stop: str = "seed only"
    frame_shape: tuple[int, int] | None = None
    """Shape of the full frame (set by `integration_zones`), for `full_mask`."""

    @classmethod
    def from_full(cls, full_mask, distance_m: float = 0.0, stop: str = "seed only") -> Zone:
        m = np.asarray(full_mask, bool)
        rows = np.flatnonzero(m.any(axis=1))
        cols = np.flatnonzero(m.any(axis=0))
        if rows.size == 0:
            return cls((slice(0, 0), slice(0, 0)), np.zeros((0, 0), bool), distance_m, stop)
        sl = (slice(int(rows[0]), int(rows[-1]) + 1), slice(int(cols[0]), int(cols[-1]) + 1))
        return cls(sl, m[sl].copy(), distance_m, stop, m.shape)

    @classmethod
    def from_box(cls, box, mask, distance_m: float = 0.0, stop: str = "seed only") -> Zone:
        """The zone of `mask`, given inside the slices `box` of the full frame (trimmed)."""
        m = np.asarray(mask, bool)
        rows = np.flatnonzero(m.any(axis=1))
        cols = np.flatnonzero(m.any(axis=0))
        if rows.size == 0:
            return cls((slice(0, 0), slice(0, 0)), np.zeros((0, 0), bool), distance_m, stop)
        r0, c0 = box[0].start, box[1].start
        sl = (slice(r0 + int(rows[0]), r0 + int(rows[-1]) + 1),
              slice(c0 + int(cols[0]), c0 + int(cols[-1]) + 1))
        inner = (slice(int(rows[0]), int(rows[-1]) + 1), slice(int(cols[0]), int(cols[-1]) + 1))
        return cls(sl, m[inner].copy(), distance_m, stop)

    @classmethod
    def union_of(cls, zones, shape=None) -> Zone:
        """The union of zones (their masks ORed inside the union of their slices)."""
        zs = [z for z in zones if z.mask.size]
        if not zs:
            return cls((slice(0, 0), slice(0, 0)), np.zeros((0, 0), bool), frame_shape=shape)
        r0 = min(z.slices[0].start for z in zs)
        r1 = max(z.slices[0].stop for z in zs)
        c0 = min(z.slices[1].start for z in zs)
        c1 = max(z.slices[1].stop for z in zs)
        m = np.zeros((r1 - r0, c1 - c0), bool)
        for z in zs:
            m[z.slices[0].start - r0:z.slices[0].stop - r0,
              z.slices[1].start - c0:z.slices[1].stop - c0] |= z.mask
        return cls((slice(r0, r1), slice(c0, c1)), m, frame_shape=shape)

    def full(self, shape=None) -> np.ndarray:
        """The zone as a full-frame boolean mask of `shape` (default: `frame_shape`)."""
        shape = self.frame_shape if shape is None else shape
        if shape is None:
            raise ValueError("the zone does not know its frame: give shape")
        out = np.zeros(shape, dtype=bool)
        out[self.slices] = self.mask
        return out

    @property
    def n_px(self) -> int:
        return int(self.mask.sum())


def _box_of(mask):
    """Bounding slices of a boolean mask (None when empty), from two cheap reductions."""
    rows = np.flatnonzero(mask.any(axis=1))
    if rows.size == 0:
        return None
    cols = np.flatnonzero(mask[rows[0]:rows[-1] + 1].any(axis=0))
    return slice(int(rows[0]), int(rows[-1]) + 1), slice(int(cols[0]), int(cols[-1]) + 1)


def _nonzero(mask):
    """``np.nonzero`` of a 2-D mask, searched inside its bounding box only."""
    box = _box_of(mask)
    if box is None:
        return np.zeros(0, np.int64), np.zeros(0, np.int64)
    r, c = np.nonzero(mask[box])
    return r + box[0].start, c + box[1].start


def _int_labels(labels) -> np.ndarray:
    """Element labels as an integer array (no copy when they already are)."""
    arr = np.asarray(labels)
    return arr if arr.dtype.kind in "iu" else arr.astype(np.intp)


def _check_maps(q_w_m2, area_map_m2):
    q = np.asarray(q_w_m2, dtype=float)
    a = np.asarray(area_map_m2, dtype=float)
    if q.ndim != 2 or q.shape != a.shape:
        raise ValueError(f"q_w_m2 {q.shape} and area_map_m2 {a.shape} must be 2-D of one shape")
    return q, a


def median(values) -> float:
    """Median of finite values, the number `numpy.median` gives (the mean of the two middle
    values for an even count), from one partition at the middle rank: numpy's partition at
    two neighbouring ranks can take several times longer. NaN for no values."""
    v = np.asarray(values, dtype=float).ravel()
    n = v.size
    if n == 0:
        return math.nan
    k = n // 2
    p = np.partition(v, k)
    return float(np.mean(p[k:k + 1] if n % 2 else np.array([p[:k].max(), p[k]])))


def reference_flux(q_w_m2, area_map_m2, mask) -> tuple[float, float, int]:
    """Undisturbed heat flux of a zone: area-weighted mean [W/m²], robust spread, pixels.

    Returns
    -------
    mean_w_m2, sigma_w_m2, n_px
        ``Σ q A / Σ A`` over the valid pixels of `mask`; ``1.4826 MAD`` of q there (the
        pixel-to-pixel noise, robust to a few odd pixels; from an even subsample of at most
        about 5 000 pixels, 1.4 % standard error); their number. NaN, NaN, 0 for an empty zone.
    """
    q, a = _check_maps(q_w_m2, area_map_m2)
    m = np.asarray(mask, bool)
    rows = np.flatnonzero(m.any(axis=1))
    if rows.size == 0:
        return math.nan, math.nan, 0
    cols = np.flatnonzero(m.any(axis=0))
    box = (slice(int(rows[0]), int(rows[-1]) + 1), slice(int(cols[0]), int(cols[-1]) + 1))
    q, a = q[box], a[box]
    m = m[box] & np.isfinite(q) & np.isfinite(a)
    if not m.any():
        return math.nan, math.nan, 0
    qv, av = q[m], a[m]
    mean = float(np.sum(qv * av) / np.sum(av))
    sub = qv[::max(1, qv.size // 5000)]  # the spread from at most ~5 000 pixels
    sigma = float(MAD_TO_SIGMA * median(np.abs(sub - median(sub))))
    return mean, sigma, int(qv.size)


def undisturbed_masks(element_masks: dict, zones, reference_masks: dict | None = None) -> dict:
    """One undisturbed mask per element: its reference zone (or mask) minus every zone.

    Parameters
    ----------
    element_masks : dict name -> bool (H, W)
    zones : iterable of `Zone` or bool (H, W)
        The integration zones of every defect of the thermogram (warm spots included).
    reference_masks : dict name -> bool (H, W) or None, optional
        The user's reference zones, where drawn.

    Returns
    -------
    dict name -> bool (H, W)
        The pixels that U, the defects' reference flux and the energy case all use: the one
        definition of `envelope.zones.undisturbed_mask`.
    """
    shape = None
    for m in element_masks.values():
        shape = np.shape(m)
        break
    if shape is None:
        return {}
    full = [z.full(shape) if isinstance(z, Zone) else np.asarray(z, bool) for z in zones]
    refs = reference_masks or {}
    return {name: undisturbed_mask(m, refs.get(name), full)[0]
            for name, m in element_masks.items()}


def reference_fluxes(q_w_m2, area_map_m2, masks: dict) -> dict:
    """`reference_flux` of each element's undisturbed mask: name -> (mean, sigma, n_px)."""
    return {name: reference_flux(q_w_m2, area_map_m2, m) for name, m in masks.items()}


def _ring_width(area) -> float:
    """Median pixel size [m]: the width of one ring (from every 7th pixel both ways, or
    from every pixel when none of those is valid; 1 without any valid pixel)."""
    sub = area[::7, ::7]
    sub = sub[np.isfinite(sub) & (sub > 0)]
    if sub.size:
        return float(np.sqrt(median(sub)))
    ok = np.isfinite(area) & (area > 0)
    return float(np.sqrt(median(area[ok]))) if ok.any() else 1.0


def _pixel_size(area_m2, median_m: float) -> np.ndarray:
    """Local pixel size ``sqrt(A)`` [m] of pixel areas [m²/px]; `median_m` where A is invalid."""
    ok = np.isfinite(area_m2) & (area_m2 > 0)
    return np.where(ok, np.sqrt(np.where(ok, area_m2, 1.0)), median_m)


def _boxed_seed(seed, shape, k: int):
    """A seed as ``(slices, mask inside them)``: a `Zone` as it is, a full-frame mask trimmed
    to its bounding box; ``(None, None)`` when empty."""
    if isinstance(seed, Zone):
        if seed.frame_shape is not None and tuple(seed.frame_shape) != tuple(shape):
            raise ValueError(f"seed {k} belongs to a frame of {seed.frame_shape}, the image {shape}")
        if seed.mask.size == 0:
            return None, None
        return seed.slices, np.asarray(seed.mask, bool)
    s = np.asarray(seed, bool)
    if s.shape != shape:
        raise ValueError(f"seed {k} has shape {s.shape}, the image {shape}")
    box = _box_of(s)
    return (None, None) if box is None else (box, s[box])


def _seed_pixels(seed_id, n: int):
    """Flat indices of each seed's pixels (raster order): ``px, starts`` with seed k at
    ``px[starts[k]:starts[k + 1]]``."""
    flat = seed_id.ravel()
    px = np.flatnonzero(flat)
    order = np.argsort(flat[px], kind="stable")
    px = px[order]
    return px, np.searchsorted(flat[px], np.arange(1, n + 2))


@dataclass
class ZoneGeometry:
    """What the zones of one set of seeds share whatever the reference flux (reused across
    the passes of `envelope.defects.find_defects`; built by `zone_geometry` from the pixel
    areas and labels that `integration_zones` is then given).

    Seed k's pixels are ``seed_px[seed_starts[k]:seed_starts[k + 1]]`` (flat indices into
    the frame, raster order; ``seed_rows``, ``seed_cols`` the same pixels). ``seed_id``
    (seed k + 1, 0 off every seed), ``valid`` (the pixels a zone may take), ``area`` [m²]
    and ``labels`` are full-frame maps; ``pix_min`` [m] bounds the local pixel size from
    below. The nearest seed of each pixel and the rings are computed on demand, only as
    far as the rings asked for (`ring_pixels`).
    """

    shape: tuple[int, int]
    ring_m: float
    max_ring: int
    n_seeds: int
    seed_px: np.ndarray
    seed_rows: np.ndarray
    seed_cols: np.ndarray
    seed_starts: np.ndarray
    seed_id: np.ndarray
    valid: np.ndarray
    area: np.ndarray
    labels: np.ndarray
    pix_min: float
    _inner: dict = field(default_factory=dict, repr=False)
    _nearest: dict = field(default_factory=dict, repr=False)
    last_masks: tuple | None = field(default=None, repr=False)
    """The zone masks of the last `integration_zones` pass, with what they were built from."""

    def ring_pixels(self, up_to: int) -> tuple:
        """The ring pixels of rings 1 ... `up_to` (valid pixels off every seed, in the cell
        of their nearest seed), in raster order: ``rows, cols`` (frame), their seed
        ``cell`` (1...), ``ring``, element label (0 outside every element), area [m²] and
        flat index (kept for the next pass).

        A pixel at distance d [px] from its nearest seed pixel, of local size s [m], is in
        ring ``ceil(d s / ring_m)`` (capped at ``max_ring + 1``); only the pixels with
        ``d < (up_to + 1) ring_m / pix_min + 1`` can be in the first `up_to` rings.
        """
        if up_to in self._inner:
            return self._inner[up_to]
        empty = np.zeros(0, np.intp)
        if self.seed_rows.size in (0, self.seed_id.size):  # no seed, or only seeds: no ring
            out = (empty, empty, empty, empty, empty, np.zeros(0), empty)
        else:
            reach = (up_to + 1) * self.ring_m / self.pix_min + 1.0
            near, d2, cell = self.nearest_seed(reach)
            lim = reach * reach
            near = near & (d2 <= (math.ceil(lim) if lim < np.iinfo(d2.dtype).max
                                  else np.iinfo(d2.dtype).max))
            px = np.flatnonzero(near & self.valid & (self.seed_id == 0))
            dist_px = np.sqrt(d2.ravel()[px].astype(np.float64))
            pix = _pixel_size(self.area.ravel()[px], self.ring_m)
            ring = np.minimum(np.ceil(dist_px * pix / self.ring_m - 1e-9),
                              self.max_ring + 1).astype(np.int32)
            keep = (ring > 0) & (ring <= self.max_ring) & (ring <= up_to)
            px, ring = px[keep], ring[keep]
            rr, cc = np.divmod(px, self.shape[1])
            out = (rr, cc, cell.ravel()[px], ring, np.maximum(np.take(self.labels, px), 0),
                   self.area.ravel()[px], px)
        self._inner[up_to] = out
        return out

    def nearest_seed(self, reach: float) -> tuple:
        """``known, d2, cell`` (full frame): the squared distance [px²] to the nearest seed
        pixel and that seed (1...), exact wherever that distance is under `reach` [px] (and
        never under the true distance where `known`; unknown pixels lie farther).

        The nearest seed pixel is the exact Euclidean feature transform's (Maurer et al.
        2003, `scipy.ndimage`), the first by (distance, column, row), so it can be taken
        over windows: every seed pixel within `reach` of a pixel lies in the window of the
        seeds within `reach` of it (their bounding boxes widened by twice `reach`, merged
        where they meet). When the windows would cover half the frame or more, one
        transform over the bounding box of the valid and seed pixels serves every pixel.

        References
        ----------
        C. R. Maurer, R. Qi and V. Raghavan, "A linear time algorithm for computing exact
        Euclidean distance transforms of binary images in arbitrary dimensions", IEEE
        Trans. PAMI 25 (2003) 265–270.
        """
        r = int(math.ceil(reach)) if reach < max(self.shape) else max(self.shape)
        if r in self._nearest:
            return self._nearest[r]
        if "all" in self._nearest:
            return self._nearest["all"]
        h, w = self.shape
        windows = []  # [served (r0, r1, c0, c1), window (r0, r1, c0, c1)]
        for k in range(self.n_seeds):
            part = slice(self.seed_starts[k], self.seed_starts[k + 1])
            if self.seed_starts[k + 1] == self.seed_starts[k]:
                continue
            rows, cols = self.seed_rows[part], self.seed_cols[part]
            b = (int(rows.min()), int(rows.max()) + 1, int(cols.min()), int(cols.max()) + 1)
            windows.append([_widen(b, r, h, w), _widen(b, 2 * r, h, w)])
        windows = _merge_windows(windows)
        whole = _box_of(self.valid | (self.seed_id > 0))
        whole_area = (whole[0].stop - whole[0].start) * (whole[1].stop - whole[1].start)
        if sum((b[1] - b[0]) * (b[3] - b[2]) for _, b in windows) >= 0.5 * whole_area:
            windows = [[(whole[0].start, whole[0].stop, whole[1].start, whole[1].stop)] * 2]
            key = "all"
        else:
            key = r
        known = np.zeros(self.shape, bool)
        wide = np.int32 if h * h + w * w < np.iinfo(np.int32).max else np.int64
        d2 = np.zeros(self.shape, wide)
        cell = np.zeros(self.shape, np.int32)
        for served, win in windows:
            sid = self.seed_id[win[0]:win[1], win[2]:win[3]]
            ft = ndimage.distance_transform_edt(sid == 0, return_distances=False,
                                                return_indices=True)
            rs = slice(served[0] - win[0], served[1] - win[0])
            cs = slice(served[2] - win[2], served[3] - win[2])
            fr, fc = ft[0][rs, cs], ft[1][rs, cs]
            dr = fr.astype(wide)
            dr -= np.arange(rs.start, rs.stop, dtype=wide)[:, None]
            dc = fc.astype(wide)
            dc -= np.arange(cs.start, cs.stop, dtype=wide)[None, :]
            out = (slice(served[0], served[1]), slice(served[2], served[3]))
            d2[out] = dr * dr + dc * dc
            cell[out] = np.take(sid, fr.astype(np.intp) * sid.shape[1] + fc)
            known[out] = True
        self._nearest[key] = (known, d2, cell)
        return self._nearest[key]


def _widen(b, r: int, h: int, w: int) -> tuple:
    """A box ``(r0, r1, c0, c1)`` widened by `r` on every side, within the frame (h, w)."""
    return max(b[0] - r, 0), min(b[1] + r, h), max(b[2] - r, 0), min(b[3] + r, w)


def _merge_windows(windows: list) -> list:
    """Merge ``[served, window]`` boxes whose windows meet, until none do (the served box
    of a merge is the bounding box of the served boxes, its window that of the windows)."""
    out = [list(x) for x in windows]
    merged = True
    while merged:
        merged = False
        for i in range(len(out)):
            for j in range(i + 1, len(out)):
                a, b = out[i][1], out[j][1]
                if a[0] < b[1] and b[0] < a[1] and a[2] < b[3] and b[2] < a[3]:
                    sa, sb = out[i][0], out[j][0]
                    out[i] = [(min(sa[0], sb[0]), max(sa[1], sb[1]), min(sa[2], sb[2]),
                               max(sa[3], sb[3])),
                              (min(a[0], b[0]), max(a[1], b[1]), min(a[2], b[2]),
                               max(a[3], b[3]))]
                    del out[j]
                    merged = True
                    break
            if merged:
                break
    return out


def zone_geometry(seeds, area_map_m2, labels, allowed=None, q_w_m2=None,
                  cutoff_m: float = 2.0) -> ZoneGeometry:
    """Seed pixels, and nearest seed and ring of every other pixel, for `integration_zones`.

    Every pixel goes to its nearest seed (Euclidean distance transform); its distance d
    [m] (pixels times the local pixel size) puts it in ring ``ceil(d / s)`` of width s, the
    median pixel size. A seed's cell holds the valid pixels nearest to it within the
    cut-off. Seeds are full-frame boolean masks or `Zone` (a mask inside its slices); a
    pixel of two seeds belongs to the first.
    """
    a = np.asarray(area_map_m2, dtype=float)
    labels = _int_labels(labels)
    shape = a.shape
    if labels.shape != shape:
        raise ValueError(f"labels {labels.shape} must have the image's shape {shape}")
    if not cutoff_m >= 1.0:
        raise ValueError(f"cutoff_m must be >= 1 m (ISO 10211 cut-off planes), got {cutoff_m}")
    n = len(seeds)
    seed_id = np.zeros(shape, dtype=np.int32)
    for k, s in enumerate(seeds):
        box, m = _boxed_seed(s, shape, k)
        if box is not None:
            sub = seed_id[box]
            sub[m & (sub == 0)] = k + 1
    valid = (labels >= 0) & np.isfinite(a)
    if q_w_m2 is not None:
        valid &= np.isfinite(np.asarray(q_w_m2, dtype=float))
    if allowed is not None:
        valid &= np.asarray(allowed, bool)
    ring_m = _ring_width(a)
    max_ring = int(math.ceil(cutoff_m / ring_m))
    seed_px, seed_starts = _seed_pixels(seed_id, n)
    seed_rows, seed_cols = np.divmod(seed_px, shape[1])
    # a lower bound of the local pixel size, over every pixel (valid or not)
    smallest = float(np.nanmin(a)) if np.isfinite(a).any() else math.nan
    if not smallest > 0:
        positive = a[np.isfinite(a) & (a > 0)]
        smallest = float(positive.min()) if positive.size else math.nan
    pix_min = min(ring_m, math.sqrt(smallest)) if smallest > 0 else ring_m
    return ZoneGeometry(shape, ring_m, max_ring, n, seed_px, seed_rows, seed_cols, seed_starts,
                        seed_id, valid, a, labels, pix_min)


def _first_stop(s_a, s_e, s_v, peak, win: int, noise_z: float, tail_fraction: float,
                max_ring: int):
    """First window of rings whose mean excess is at or under the noise, for each seed.

    ``s_a``, ``s_e``, ``s_v`` (n_seeds, top + 2): area [m²], excess heat [W] and its
    variance [W²] of rings 0 ... top + 1 (rings past ``top`` not summed); ``peak`` the
    seeds' excess [W/m²]. Returns ``r_stop`` (the first ring left out; ``max_ring + 1`` at
    the cut-off) and the reason ("no more pixels", "noise", "tail fraction" or "cut-off")
    of each seed; both None for a seed whose windows within ``top`` all pass (more rings
    needed) while ``top < max_ring``.
    """
    n, width = s_a.shape
    top = width - 2
    zero = np.zeros((n, 1))
    c_a, c_e, c_v = (np.concatenate([zero, np.cumsum(x, axis=1)], axis=1)
                     for x in (s_a, s_e, s_v))
    if top >= max_ring:
        r0 = np.arange(1, max_ring + 1)
        r1 = np.minimum(r0 + win, max_ring + 1)
    else:  # only the windows that end within the rings summed
        r0 = np.arange(1, max(top + 2 - win, 1))
        r1 = r0 + win
    w_a = c_a[:, r1] - c_a[:, r0]
    w_e = c_e[:, r1] - c_e[:, r0]
    w_v = c_v[:, r1] - c_v[:, r0]
    with np.errstate(divide="ignore", invalid="ignore"):
        mean = w_e / w_a
        noise = np.sqrt(w_v) / w_a
    floor = tail_fraction * np.asarray(peak, dtype=float)[:, None]
    thr = np.maximum(noise_z * noise, floor)
    stop = (w_a <= 0) | ~(mean > thr)
    first = np.argmax(stop, axis=1) if r0.size else np.zeros(n, int)
    r_stop, reasons = [], []
    for k in range(n):
        i = int(first[k])
        if r0.size and stop[k, i]:
            r_stop.append(int(r0[i]))
            reasons.append("no more pixels" if w_a[k, i] <= 0 else
                           "noise" if noise_z * noise[k, i] >= floor[k, 0] else "tail fraction")
        elif top >= max_ring:
            r_stop.append(max_ring + 1)
            reasons.append("cut-off")
        else:
            r_stop.append(None)
            reasons.append(None)
    return r_stop, reasons


def integration_zones(q_w_m2, area_map_m2, seeds, labels, q_ref_w_m2, q_sigma_w_m2,
                      allowed=None, grow=None, cutoff_m: float = 2.0, noise_z: float = 2.0,
                      ring_window_m: float = 0.03, tail_fraction: float = 0.005,
                      geometry: ZoneGeometry | None = None) -> list[Zone]:
    """Integration zones of the defects of one thermogram, grown from their seeds.

    Parameters
    ----------
    q_w_m2 : ndarray (H, W)
        Surface heat flux through the elements [W/m²] (positive through the element).
    area_map_m2 : ndarray (H, W)
        Area of each pixel on its element's plane [m²/px].
    seeds : sequence of bool (H, W) or of Zone
        Each defect's seed: its thresholded region (for a junction, its fragments and the
        gaps between them), full frame or as a `Zone` (a mask inside its slices).
    labels : int ndarray (H, W)
        Index of each pixel's element (into `q_ref_w_m2`), -1 outside every element.
    q_ref_w_m2, q_sigma_w_m2 : array_like
        Undisturbed flux [W/m²] and its pixel-to-pixel spread [W/m²] per element index.
    allowed : bool (H, W), optional
        Pixels a zone may grow into (default: every labelled pixel). Leave openings out.
    grow : sequence of bool, optional
        False for seeds that are not grown (warm spots); default all True.
    cutoff_m : float
        Farthest distance from the seed [m], >= 1 (ISO 10211 cut-off planes).
    noise_z : float
        A window of rings is noise when its mean excess is within ``noise_z`` standard
        errors of zero.
    ring_window_m : float
        Width of the window of rings tested [m].
    tail_fraction : float
        Stop also when the rings' excess falls under this fraction of the seed's.
    geometry : ZoneGeometry, optional
        `zone_geometry` of the same seeds, labels, allowed pixels and cut-off (saves the
        distance transform when only the reference flux changed).

    Returns
    -------
    list of Zone
        One per seed, disjoint.

    Notes
    -----
    Rings as in `zone_geometry`. For rings r... r + w - 1 (``w`` rings span
    `ring_window_m`) the area-weighted mean excess ``ē = Σ (q - q_ref) A / Σ A`` and its
    standard error ``σ_ē = sqrt(Σ σ² A²) / Σ A`` are compared with ``max(noise_z σ_ē,
    tail_fraction ē_seed)``; the zone is the seed and the rings before the first window at
    or under it. An exponential tail exp(-d/λ) stopped at a fraction f of its start leaves
    f of its integral out. The sums of every seed's rings are one labelled sum over the
    frame (`numpy.bincount` on (seed, ring) bins).
    """
    q, a = _check_maps(q_w_m2, area_map_m2)
    labels = _int_labels(labels)
    for name, v in (("noise_z", noise_z), ("ring_window_m", ring_window_m),
                    ("tail_fraction", tail_fraction)):
        if not v >= 0:
            raise ValueError(f"{name} must be >= 0, got {v}")
    q_ref = np.asarray(q_ref_w_m2, dtype=float).ravel()
    q_sig = np.asarray(q_sigma_w_m2, dtype=float).ravel()
    grow = [True] * len(seeds) if grow is None else [bool(g) for g in grow]
    if len(grow) != len(seeds):
        raise ValueError("grow must have one entry per seed")
    if not len(seeds):
        return []
    g = geometry if geometry is not None else zone_geometry(
        seeds, a, labels, allowed, q, cutoff_m)
    if g.n_seeds != len(seeds) or tuple(g.shape) != q.shape:
        raise ValueError("geometry was built for other seeds or another image")
    n, shape = g.n_seeds, q.shape
    win = max(1, int(round(ring_window_m / g.ring_m)))
    sig2 = np.where(np.isfinite(q_sig), q_sig, 0.0) ** 2
    # each seed's excess [W/m²]: area-weighted over its valid pixels
    lab, qs, as_ = (np.take(m, g.seed_px) for m in (labels, q, a))
    ok = (lab >= 0) & np.isfinite(qs) & np.isfinite(as_)
    exc = qs - q_ref[np.where(lab >= 0, lab, 0)]
    peak = np.full(n, np.nan)
    n_ok = np.zeros(n, int)
    for k in range(n):
        part = slice(g.seed_starts[k], g.seed_starts[k + 1])
        keep = ok[part]
        a_seed = as_[part][keep]
        n_ok[k] = a_seed.size
        if a_seed.sum() > 0:
            peak[k] = float(np.sum(exc[part][keep] * a_seed) / np.sum(a_seed))
    grown = [n_ok[k] > 0 and grow[k] and peak[k] > 0 for k in range(n)]
    # the rings of every seed: area, excess heat and its variance per (seed, ring), over as
    # few rings as decide where each grown zone stops (the sums of a ring do not depend on
    # how many rings are summed)
    top = min(win, g.max_ring)
    while True:
        _, _, cell, ring, lab, av, px = g.ring_pixels(top)
        bins = (cell - 1).astype(np.intp) * (top + 2) + ring
        size = n * (top + 2)
        s_a, s_e, s_v = (np.bincount(bins, weights=wt, minlength=size).reshape(n, top + 2)
                         for wt in (av, (np.take(q, px) - q_ref[lab]) * av, sig2[lab] * av * av))
        r_stop, reasons = _first_stop(s_a, s_e, s_v, peak, win, noise_z, tail_fraction,
                                      g.max_ring)
        if top >= g.max_ring or all(r is not None for r, gk in zip(r_stop, grown, strict=True)
                                    if gk):
            break
        top = min(4 * top, g.max_ring)
    # each zone: its seed's valid pixels and, when grown, its rings before the stop
    upto = np.zeros(n + 1, np.int32)
    upto[1:] = [r if gk else 0 for r, gk in zip(r_stop, grown, strict=True)]
    zones = []
    for k, (sl, mask) in enumerate(_zone_masks(g, upto, ok, top)):
        if sl is None:
            zones.append(Zone((slice(0, 0), slice(0, 0)), np.zeros((0, 0), bool),
                              frame_shape=shape))
            continue
        zones.append(Zone(sl, mask, (r_stop[k] - 1) * g.ring_m if grown[k] else 0.0,
                          reasons[k] if grown[k] else "seed only", shape))
    return zones


def _zone_masks(g: ZoneGeometry, upto, seed_ok, top: int) -> list:
    """``(slices, mask)`` of each zone (``(None, None)`` when empty): the valid pixels of its
    seed (`seed_ok` over the geometry's seed pixels) and its rings before ``upto[k + 1]``
    (all within rings 1 ... `top`). The last answer is kept in the geometry: a pass whose
    stops did not change reuses it."""
    key = (upto.tobytes(), np.asarray(seed_ok).tobytes())
    if g.last_masks is not None and g.last_masks[0] == key:
        return g.last_masks[1]
    n = g.n_seeds
    rr, cc, cell, ring = g.ring_pixels(top)[:4]
    inside = ring < upto[cell]
    ids = np.repeat(np.arange(1, n + 1), np.diff(g.seed_starts))[seed_ok]
    rows = np.concatenate([g.seed_rows[seed_ok], rr[inside]])
    cols = np.concatenate([g.seed_cols[seed_ok], cc[inside]])
    ids = np.concatenate([ids, cell[inside]])
    order = np.argsort(ids, kind="stable")
    starts = np.searchsorted(ids[order], np.arange(1, n + 2))
    out = []
    for k in range(n):
        part = order[starts[k]:starts[k + 1]]
        if not part.size:
            out.append((None, None))
            continue
        r, c = rows[part], cols[part]
        r0, r1, c0, c1 = int(r.min()), int(r.max()) + 1, int(c.min()), int(c.max()) + 1
        mask = np.zeros((r1 - r0, c1 - c0), bool)
        mask[r - r0, c - c0] = True
        out.append(((slice(r0, r1), slice(c0, c1)), mask))
    g.last_masks = (key, out)
    return out


def excess_heat(q_w_m2, area_map_m2, zone, labels, q_ref_w_m2, q_sigma_w_m2=None,
                n_ref_px=None, u_rel_std=None) -> dict:
    """Extra heat flow of a defect over its zone, per element, with its uncertainty.

    Parameters
    ----------
    q_w_m2, area_map_m2 : ndarray (H, W)
        Surface heat flux [W/m²] and pixel area [m²/px].
    zone : Zone or bool (H, W)
    labels : int ndarray (H, W)
        Element index of each pixel (-1 outside).
    q_ref_w_m2 : array_like
        Undisturbed flux per element index [W/m²].
    q_sigma_w_m2, n_ref_px : array_like, optional
        Pixel spread of q [W/m²] and number of undisturbed pixels per element index.
    u_rel_std : float, optional
        Relative standard uncertainty common to the whole flux map (film coefficients,
        emissivity) [-].

    Returns
    -------
    dict
        ``extra_w`` [W], ``extra_by_label`` {index: W}, ``extra_w_std`` [W],
        ``zone_area_m2`` [m²], ``area_by_label`` {index: m²}.

    Notes
    -----
    ``Q_extra = Σ_Z (q - q_ref,j) A`` (after [1], with each element's own reference).
    Uncertainty, added in quadrature: pixel noise ``sqrt(Σ σ_j² A²)``; the reference
    means ``σ_j A_Z,j / sqrt(N_j)`` per element; the common relative part
    ``u_rel |Q_extra|``. Pixels are taken as independent (spatially correlated texture
    makes the first two optimistic).
    """
    q, a = _check_maps(q_w_m2, area_map_m2)
    labels = _int_labels(labels)
    if not isinstance(zone, Zone):
        zone = Zone.from_full(zone)
    box = zone.slices
    q, a, labels = q[box], a[box], labels[box]
    m = zone.mask & (labels >= 0) & np.isfinite(q) & np.isfinite(a)
    q_ref = np.asarray(q_ref_w_m2, dtype=float).ravel()
    lab = labels[m]
    av = a[m]
    e = (q[m] - q_ref[lab]) * av
    n_lab = q_ref.size
    by = np.bincount(lab, weights=e, minlength=n_lab)
    area_by = np.bincount(lab, weights=av, minlength=n_lab)
    extra = float(by.sum())
    var = 0.0
    if q_sigma_w_m2 is not None:
        sg = np.asarray(q_sigma_w_m2, dtype=float).ravel()
        sgv = np.where(np.isfinite(sg), sg, 0.0)
        var += float(np.sum(sgv[lab] ** 2 * av**2))
        if n_ref_px is not None:
            n = np.maximum(np.asarray(n_ref_px, dtype=float).ravel(), 1.0)
            var += float(np.sum((sgv * area_by) ** 2 / n))
    if u_rel_std is not None and np.isfinite(u_rel_std):
        var += (float(u_rel_std) * extra) ** 2
    return {"extra_w": extra,
            "extra_by_label": {int(i): float(by[i]) for i in np.flatnonzero(area_by > 0)},
            "extra_w_std": math.sqrt(var), "zone_area_m2": float(av.sum()),
            "area_by_label": {int(i): float(area_by[i]) for i in np.flatnonzero(area_by > 0)}}


def incidence_factor(extra_w: float, q_ref_w_m2, area_m2) -> tuple[float, float]:
    """Incidence factor of a thermal bridge on the area it refers to (Asdrubali et al. [4]).

    Parameters
    ----------
    extra_w : float
        Extra heat flow of the bridge [W].
    q_ref_w_m2, area_m2 : array_like
        Undisturbed flux [W/m²] and in-view area [m²] of each element the bridge's zone
        touches (its whole area in the thermogram, as in [4]).

    Returns
    -------
    (incidence_factor, area_m2)
        ``I = Q_tb / Q_1D = (Σ q_1D,j A_j + Q_extra) / Σ q_1D,j A_j`` [-] (the definition of [4]:
        the heat flow through the area with the bridge over the heat flow without it) and
        the area it refers to [m²]. The factor depends on that area, so both are reported;
        other defects on the same area are not counted in this one's factor.
    """
    qr = np.asarray(q_ref_w_m2, dtype=float).ravel()
    ar = np.asarray(area_m2, dtype=float).ravel()
    if qr.shape != ar.shape:
        raise ValueError("q_ref_w_m2 and area_m2 must have one entry per element")
    q1d = float(np.sum(qr * ar))
    total = float(ar.sum())
    if not (np.isfinite(q1d) and q1d != 0):
        return math.nan, total
    return (q1d + float(extra_w)) / q1d, total


def psi_internal_to_external(psi_int_w_mk: float, u_w_m2k, extra_length_m) -> float:
    """psi with external dimensions from psi with internal dimensions [W/(m K)].

    Parameters
    ----------
    psi_int_w_mk : float
        psi with internal dimensions (what the thermographic integration gives).
    u_w_m2k : sequence of float
        U of the flanking elements [W/(m² K)].
    extra_length_m : sequence of float
        For each flanking element, its external length minus its internal length in the
        section [m] (e.g. the thickness of the other element at a corner).

    Notes
    -----
    ``L2D = psi_e + Σ U_j l_j,e = psi_i + Σ U_j l_j,i`` ([2], the dimension systems of
    [3]), so ``psi_e = psi_i - Σ U_j (l_j,e - l_j,i)``.
    """
    u = np.asarray(u_w_m2k, dtype=float).ravel()
    dl = np.asarray(extra_length_m, dtype=float).ravel()
    if u.shape != dl.shape:
        raise ValueError("u_w_m2k and extra_length_m must have one entry per element")
    return float(psi_int_w_mk) - float(np.sum(u * dl))
