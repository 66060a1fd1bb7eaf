"""Defects: classification, quantification and ranking of thermal anomalies.

Segmentation and shape description live in `envelope.anomalies`, the class rules in
`envelope.classification`, junction types and runs in `envelope.junctions`, the
excess-heat integration in `envelope.bridges`, the numbers of one defect in
`envelope.quantify`, image pairs in `envelope.registration`, the air of leaks in
`envelope.infiltration` and the ranking in `envelope.ranking`. This module runs them on the
described regions of one thermogram and returns `Defect` records:

- **classification** by a transparent rule set (`classify`): every rule that fires adds a
  score to a class and a sentence with its numbers to ``reasons``; the confidences are the
  scores normalised to sum to 1;
- **grouping**: studs at a regular spacing become one repeating bridge; the fragments of one
  linear bridge along one junction, on either side of it, become one bridge;
- **quantification**: extra heat flow [W] at survey conditions over an integration zone
  grown until the excess falls to the noise level (`envelope.bridges.integration_zones`),
  psi [W/(m K)] with internal dimensions over the length reported, chi [W/K], the
  incidence factor with its area, the heat-loss coefficient and kWh per year; for leaks the
  heat of the air when a blower-door result is given (else flagged as a lower bound);
- **risk** judged on the temperature factor at the design convention, the measured-night
  factor beside it; **junction check** of psi against a specified or default value;
- **ranking** (`rank_defects`): risk first, energy second, with the score parts spelled out.

`find_defects` runs all stages on one thermogram; each defect carries its integration zone
so that the pipeline can build one undisturbed mask per element (`envelope.zones`).
"""

from __future__ import annotations

import numpy as np
import shapely

from envelope import bridges, infiltration
from envelope.anomalies import (
    DefectSettings,
    Region,
    describe_region,
    find_repetition,
    segment_element,
)
from envelope.classification import CLASSES, classify, parallel_to
from envelope.errors import SurveyError
from envelope.geometry import GLAZED_KINDS
from envelope.junctions import extend_along, junction_groups
from envelope.outlines import rasterise
from envelope.quantify import (
    WARM_NOTE,
    Defect,
    DepressurisedPair,
    Group,
    apply_leak_air,
    build_defect,
    full_mask,
    region_zone,
    warm_defect,
)
from envelope.ranking import RISK_SCORES, defect_to_dict, rank_defects
from envelope.registration import align, pair_change, register_translation

__all__ = [
    "CLASSES",
    "RISK_SCORES",
    "ZONE_EXCLUDED_KINDS",
    "WARM_NOTE",
    "Defect",
    "DefectSettings",
    "DepressurisedPair",
    "classify",
    "rank_defects",
    "find_defects",
    "defect_to_dict",
]

ZONE_EXCLUDED_KINDS = GLAZED_KINDS
"""Element kinds an integration zone never enters (glazing has its own flux pattern)."""

ZONE_PASSES = 4
"""Most passes of zone growth and reference flux (they stop earlier once the zones settle)."""

MIN_UNDISTURBED_SHARE = 0.2
"""Below this share of an element left undisturbed, its defects carry a note (tails may
remain in the reference; measured on exponential tails in tests/test_bridges.py)."""


def _mask_zone(mask, shape) -> bridges.Zone:
    """An element's mask as a `envelope.bridges.Zone` (trimmed to its bounding box)."""
    m = np.asarray(mask, bool)
    box = bridges._box_of(m)
    if box is None:
        return bridges.Zone((slice(0, 0), slice(0, 0)), np.zeros((0, 0), bool), frame_shape=shape)
    return bridges.Zone(box, m[box], frame_shape=shape)


def _label_box(labels, i: int, box):
    """Bounding slices of ``labels == i`` (None when empty), searched inside `box`, the
    element's own bounding box (the pixels labelled i are its pixels)."""
    if box[0].stop <= box[0].start:
        return None
    inner = bridges._box_of(labels[box] == i)
    if inner is None:
        return None
    r0, c0 = box[0].start, box[1].start
    return (slice(r0 + inner[0].start, r0 + inner[0].stop),
            slice(c0 + inner[1].start, c0 + inner[1].stop))


def _label_boxes(labels, n: int) -> list:
    """Bounding slices of labels 1 ... n (None for an absent label), as
    `scipy.ndimage.find_objects` gives them, from the labelled pixels only."""
    px = np.flatnonzero(labels)
    ids = labels.ravel()[px]
    rr, cc = np.divmod(px, labels.shape[1])
    keep = ids <= n
    rr, cc, ids = rr[keep], cc[keep], ids[keep]
    order = np.argsort(ids, kind="stable")
    rr, cc, ids = rr[order], cc[order], ids[order]
    starts = np.searchsorted(ids, np.arange(1, n + 2))
    out = []
    for k in range(n):
        a, b = starts[k], starts[k + 1]
        if a == b:
            out.append(None)
            continue
        r, c = rr[a:b], cc[a:b]
        out.append((slice(int(r.min()), int(r.max()) + 1), slice(int(c.min()), int(c.max()) + 1)))
    return out


def _label_sums(labels, mask, weights, n: int) -> np.ndarray:
    """``np.bincount`` of the labels under `mask` (optionally weighted), length `n`; the
    pixels are taken in raster order either way, so the sums do not depend on the path."""
    lab = labels if mask.all() else np.where(mask, labels, n)  # the others in a bin past n
    with np.errstate(invalid="ignore"):
        return np.bincount(lab.ravel(), None if weights is None else weights.ravel(),
                           minlength=n + 1)[:n]


def _pair_args(pair):
    if pair is None:
        return None, None
    if isinstance(pair, DepressurisedPair):
        return np.asarray(pair.t_s_c, float), float(pair.pressure_difference_pa)
    t, dp = pair
    return np.asarray(t, float), float(dp)


def find_defects(t_s_c, frsi, q_w_m2, area_map_m2, regions, side, delta_t_k, hdd_kd,
                 limits=None, settings: DefectSettings | None = None, pair=None,
                 u_rel_std=None, thermogram_id: str = "", *, frsi_design=None,
                 junction_psi=None, leak_air_w_k=None, airtightness=None,
                 viewed_area_m2=None, checks_ok: bool = True) -> list[Defect]:
    """Find, describe, classify, group, quantify and rank the defects of one thermogram.

    Parameters
    ----------
    t_s_c : ndarray (H, W)
        Corrected surface temperatures [°C].
    frsi : ndarray (H, W)
        Temperature factor measured on the night [-] (`envelope.condensation.temperature_factor`).
    q_w_m2 : ndarray (H, W)
        Surface heat flux [W/m²] through the elements, every element's pixels (e.g.
        `envelope.transmittance.heat_flux_interior`).
    area_map_m2 : ndarray (H, W)
        Area of each pixel on its element's plane [m²/px].
    regions : dict[str, ElementRegion]
        Elements of the thermogram (``name``, ``kind``, ``polygon_net``, ``mask``,
        ``reference_mask``). Kinds outside ``settings.kinds`` are not searched but their
        outlines make junctions; zones spread into every element but glazing
        (`ZONE_EXCLUDED_KINDS`).
    side : {"interior", "exterior"}
        Interior views look for cold anomalies, exterior views for warm ones.
    delta_t_k : float
        Indoor–outdoor air temperature difference of the survey [K].
    hdd_kd : float
        Heating degree-days of the site [K day].
    limits : (f_mould, f_condensation), optional
        fRsi limits (`envelope.condensation.frsi_limit` values); None: risk "not assessed".
    settings : DefectSettings
    pair : DepressurisedPair or (t_s_c, pressure_difference_pa), optional
        Depressurised image of the same view, registered onto `t_s_c`
        (`register_translation`); its fRsi is ``frsi + (T_dep - T_base) / ΔT``.
    u_rel_std : float or dict[str, float], optional
        Relative standard uncertainty of each element's flux map [-].
    thermogram_id : str
    frsi_design : ndarray (H, W), optional
        Factor at the design convention (`envelope.condensation.design_factor_map`); risk is
        judged on it. Without it, on the measured factor (noted, not conservative).
    junction_psi : dict[str, float], optional
        Specified psi by junction type [W/(m K)], internal dimensions; otherwise the
        defaults of `envelope.junctions.DEFAULT_PSI`.
    airtightness : envelope.infiltration.Airtightness, optional
        The blower-door result (EN ISO 9972). The building's infiltration heat loss under
        natural conditions (`envelope.infiltration.infiltration_heat_loss`), the part of it
        this view carries (`view_share`, by `viewed_area_m2` over the envelope area) is
        shared among the view's leaks (`leak_shares`). Each leak also gets its air flow under
        natural conditions and at the pair's pressure difference (power law of EN ISO 9972).
        Without it (and without `leak_air_w_k`), leaks are flagged as lower bounds.
    viewed_area_m2 : float, optional
        Net area of the envelope in this view [m²] (the elements of the thermogram).
    leak_air_w_k : float, optional
        Instead of `airtightness`: the infiltration heat-loss coefficient the leaks of this
        view carry [W/K].
    checks_ok : bool
        False when a survey validity check failed (junction checks cannot pass).

    Returns
    -------
    list of Defect
        Ranked (`rank_defects`), ids "D1", "D2"...

    Notes
    -----
    Zones are grown from a first reference flux (the pixels within the anomaly threshold of
    the reference level, or the user's reference zone), then again from the mean over each
    element's undisturbed mask (mask or reference zone without every zone), until the zones
    settle (at most `ZONE_PASSES` passes): the tails left in the undisturbed area bias its
    mean upwards, which a further pass reduces. The extra heat is taken against the mean
    over the final undisturbed mask, so that without a user reference zone
    ``Σ q A (element) = q_ref A + Σ extra`` exactly (warm spots, whose extra is set to 0,
    left out of both sides).
    """
    settings = DefectSettings() if settings is None else settings
    t = np.asarray(t_s_c, float)
    f = np.asarray(frsi, float)
    for name, arr in (("frsi", f), ("q_w_m2", q_w_m2), ("area_map_m2", area_map_m2)):
        if np.shape(arr) != t.shape:
            raise SurveyError(f"shape {np.shape(arr)} differs from t_s_c {t.shape}", field=name)
    if frsi_design is not None and np.shape(frsi_design) != t.shape:
        raise SurveyError(f"shape {np.shape(frsi_design)} differs from t_s_c {t.shape}",
                          field="frsi_design")
    if not delta_t_k > 0:
        raise SurveyError(f"indoor-outdoor difference must be > 0 K, got {delta_t_k}",
                          field="delta_t_k")
    if airtightness is not None and leak_air_w_k is not None:
        raise ValueError("give airtightness or leak_air_w_k, not both")
    q = np.asarray(q_w_m2, float)
    area = np.asarray(area_map_m2, float)
    fd = None if frsi_design is None else np.asarray(frsi_design, float)
    shape = t.shape
    dep_t, dp = _pair_args(pair)
    aligned = frsi_dep = None
    pair_notes: list[str] = []
    if dep_t is not None:
        if dep_t.shape != shape:
            raise SurveyError(f"shape {dep_t.shape} differs from t_s_c {shape}",
                              field="pair.t_s_c")
        shift = register_translation(t, dep_t)
        aligned = align(dep_t, shift)
        frsi_dep = f + (aligned - t) / delta_t_k
        pair_notes.append(f"depressurised image at {dp:.0f} Pa registered with a shift of "
                          f"({shift[0]:.2f}, {shift[1]:.2f}) px (rows, columns)")
        if side != "interior":
            pair_notes.append("image pair on an exterior view: air leakage not assessed")
    use_pair = frsi_dep is not None and side == "interior"
    elements = list(regions.values())
    n_el = len(elements)
    own_zone = [_mask_zone(el.mask, shape) for el in elements]
    labels = np.full(shape, -1, dtype=np.intp)
    allowed = np.zeros(shape, dtype=bool)
    for i, (el, z) in enumerate(zip(elements, own_zone, strict=True)):
        if not z.mask.size:
            continue
        labels[z.slices][z.mask] = i
        if el.kind.lower() not in ZONE_EXCLUDED_KINDS:
            allowed[z.slices] |= z.mask
    zoned = [i for i, el in enumerate(elements) if el.kind.lower() not in ZONE_EXCLUDED_KINDS]
    q_ref = np.full(n_el, np.nan)
    q_sig = np.zeros(n_el)
    n_ref = np.ones(n_el)
    cold: list[Region] = []
    info: list[dict] = []  # per cold region: element index, class, confidence...
    warm: list[tuple[Region, float]] = []
    for i, el in enumerate(elements):
        if i not in zoned:
            continue
        if el.kind.lower() not in settings.kinds:
            q_ref[i], q_sig[i], _ = bridges.reference_flux(q, area, el.mask)
            continue
        seg = segment_element(f, el.mask, el.reference_mask, area, side, settings,
                              extra=frsi_dep if use_pair else None, box=own_zone[i].slices)
        sl = seg["slices"]
        if seg["reference"] is not None:
            q_ref[i], q_sig[i], _ = bridges.reference_flux(q[sl], area[sl], seg["reference"])
        else:
            q_ref[i], q_sig[i], _ = bridges.reference_flux(q, area, el.mask)
        labels_el = seg["labels"]
        if labels_el is None or not seg["kept"]:
            continue
        objs = _label_boxes(labels_el, max(lab for lab, _ in seg["kept"]))
        described = []
        for lab, sign in seg["kept"]:
            o = objs[lab - 1]
            full = (slice(sl[0].start + o[0].start, sl[0].start + o[0].stop),
                    slice(sl[1].start + o[1].start, sl[1].start + o[1].stop))
            described.append(describe_region(labels_el[o] == lab, full, f, area, el, elements,
                                             sign, settings))
        is_defect = [(r.sign == "cold") == (side == "interior") for r in described]
        mine = [r for r, ok in zip(described, is_defect, strict=True) if ok]
        groups = find_repetition(mine, settings)
        sizes = {gi: len(g) for gi, g in enumerate(groups)}
        if use_pair:
            m_el = el.mask[sl]
            t_e_est = float(np.nanmedian(t[sl][m_el] - f[sl][m_el] * delta_t_k))
            t_thr = t_e_est + (seg["level"] - seg["threshold"]) * delta_t_k
        for r, ok in zip(described, is_defect, strict=True):
            if not ok:
                warm.append((r, seg["level"]))
                continue
            change = None
            if use_pair:
                change = pair_change(t[r.slices], aligned[r.slices], None, r.mask,
                                     cold_threshold_c=t_thr, area_map_m2=area[r.slices])
            size = sizes.get(r.repetition, 0) if r.repetition is not None else 0
            cls, conf, reasons, notes = classify(r, change, dp, size, settings)
            cold.append(r)
            info.append({"el": i, "cls": cls, "conf": conf, "reasons": reasons,
                         "notes": notes, "change": change})
    # ---- groups: repetitions, junctions, singles, warm spots
    grouped: list[Group] = []
    used: set[int] = set()
    reps: dict[tuple, list[int]] = {}
    for k, (r, d) in enumerate(zip(cold, info, strict=True)):
        if d["cls"] == "repeating thermal bridge" and r.repetition is not None:
            reps.setdefault((d["el"], r.repetition), []).append(k)
    for members in reps.values():
        if len(members) >= 2:
            seed = bridges.Zone.union_of([region_zone(cold[k], shape) for k in members], shape)
            grouped.append(Group(members, "repeating", seed))
            used.update(members)
    classes = [d["cls"] if k not in used else "repeating thermal bridge"
               for k, d in enumerate(info)]
    for members, j in junction_groups(cold, classes, settings.junction_m,
                                      settings.merge_width_factor):
        members = [k for k in members if k not in used]
        if len(members) < 2:
            continue
        hull = shapely.union_all([cold[k].polygon for k in members]).convex_hull
        within = np.zeros(shape, bool)
        for k in members:
            within |= elements[info[k]["el"]].mask
        seed = rasterise(hull, shape) & within
        for k in members:
            seed |= full_mask(cold[k], shape)
        seed = bridges.Zone.from_full(seed)
        grouped.append(Group(members, "junction", seed, j))
        used.update(members)
    for k in range(len(cold)):
        if k not in used:
            grouped.append(Group([k], "single", region_zone(cold[k], shape)))
    for g in grouped:  # a linear bridge along a junction: its run, past fragments' ends
        cls = info[g.members[0]]["cls"]
        if g.kind == "single" and cls == "linear thermal bridge":
            r = cold[g.members[0]]
            near = [j for j in r.junctions if j.distance_m <= settings.junction_m
                    and parallel_to(r, j)]
            g.junction = near[0] if near else None
        if g.kind in ("single", "junction") and g.junction is not None and (
                g.kind == "junction" or cls == "linear thermal bridge"):
            own = bridges.Zone.union_of([own_zone[info[k]["el"]] for k in g.members], shape)
            g.along, g.seed = extend_along(q, area, g.seed, labels, q_ref,
                                           g.junction.direction_px, valid=own,
                                           q_sigma_w_m2=q_sig)
    warm_seeds = [region_zone(r, shape) for r, _ in warm]
    # ---- zones until they settle, and the reference flux of each element's undisturbed area
    seeds = [g.seed for g in grouped] + warm_seeds
    grow = [True] * len(grouped) + [False] * len(warm)
    ref_notes: dict[int, str] = {}
    zones: list[bridges.Zone] = []
    labelled = labels >= 0
    if sum(int(np.count_nonzero(z.mask)) for z in own_zone) == np.count_nonzero(labelled):
        boxes = [z.slices if z.mask.size else None for z in own_zone]  # no two overlap
    else:
        boxes = [_label_box(labels, i, z.slices) for i, z in enumerate(own_zone)]
    labelled_q = labelled & np.isfinite(q)
    n_valid = _label_sums(labels, labelled_q, None, n_el)
    geometry = bridges.zone_geometry(seeds, area, labels, allowed, q, settings.cutoff_m)
    for _ in range(ZONE_PASSES):
        previous = zones
        zones = bridges.integration_zones(
            q, area, seeds, labels, q_ref, q_sig, allowed=allowed, grow=grow,
            cutoff_m=settings.cutoff_m, noise_z=settings.noise_z,
            ring_window_m=settings.ring_window_m, tail_fraction=settings.tail_fraction,
            geometry=geometry)
        if previous and all(a.slices == b.slices and np.array_equal(a.mask, b.mask)
                            for a, b in zip(previous, zones, strict=True)):
            break  # settled: the undisturbed areas and their flux are those of the last pass
        taken = np.zeros(shape, bool)
        for z in zones:
            taken[z.slices] |= z.mask
        und = {}
        for i in zoned:
            bb = boxes[i]
            if bb is None:
                continue
            el = elements[i]
            ref = el.reference_mask
            base = ref[bb] if ref is not None and ref[bb].any() else el.mask[bb]
            und[i] = (bb, base & ~taken[bb])
            mean, sig, n = bridges.reference_flux(q[bb], area[bb], und[i][1])
            if n >= max(10, int(0.02 * n_valid[i])):
                q_ref[i], q_sig[i], n_ref[i] = mean, sig, n
                ref_notes.pop(i, None)
            else:
                ref_notes[i] = (f"undisturbed area of {el.name} too small ({n} px left "
                                "outside the defects' zones): reference flux from the pixels "
                                "near the reference level instead")
    for i, (bb, m) in und.items():
        valid = elements[i].mask[bb] & np.isfinite(q[bb]) & np.isfinite(area[bb])
        share = float(area[bb][m & valid].sum() / area[bb][valid].sum()) if valid.any() else 0.0
        if i not in ref_notes and share < MIN_UNDISTURBED_SHARE:
            ref_notes[i] = (f"only {100 * share:.0f} % of {elements[i].name} lies outside the "
                            "defects' integration zones: its undisturbed flux may still hold "
                            "their tails, so extra heat and psi may read low")
    # ---- quantify and build the defects
    u_rel_of = (lambda name: u_rel_std.get(name)) if isinstance(u_rel_std, dict) else (
        lambda name: u_rel_std)
    in_view = _label_sums(labels, labelled_q & np.isfinite(area), area, n_el)
    defects: list[Defect] = []
    leak_idx: list[int] = []
    leak_signal: list[float] = []
    for g, zone in zip(grouped, zones[:len(grouped)], strict=True):
        d = build_defect(g, zone, cold, info, elements, q, area, labels, q_ref, q_sig, n_ref,
                         in_view, f, fd, limits, side, delta_t_k, hdd_kd, settings, u_rel_of,
                         thermogram_id, dp, junction_psi, checks_ok)
        d.notes += [ref_notes[i] for i in sorted(ref_notes)
                    if elements[i].name in d.elements]
        if info[g.members[0]]["change"] is not None:
            d.notes += pair_notes
        if d.defect_class == "air leakage" and info[g.members[0]]["change"] is not None:
            zs = zone.slices
            cool = np.clip(t[zs] - aligned[zs], 0.0, None)
            zm = zone.mask & np.isfinite(cool) & np.isfinite(area[zs])
            leak_idx.append(len(defects))
            leak_signal.append(float(np.sum(cool[zm] * area[zs][zm])))
        defects.append(d)
    air_notes: list[str] = []
    h_inf = None
    if airtightness is not None:
        h_inf, how = infiltration.infiltration_heat_loss(airtightness)
        leak_air_w_k, share_note = infiltration.view_share(h_inf, viewed_area_m2,
                                                           airtightness.envelope_area_m2)
        air_notes = [f"blower door: {how}; H = {h_inf:.1f} W/K for the building; this view: "
                     f"{share_note}"]
    apply_leak_air(defects, leak_idx, leak_signal, leak_air_w_k, delta_t_k, hdd_kd, air_notes)
    if h_inf is not None and h_inf > 0:
        for i in leak_idx:
            d = defects[i]
            d.leak_flow_natural_m3_h = d.air_h_w_k * 3600.0 / infiltration.RHO_C_AIR_J_M3K
            if dp is not None and dp > 0:
                d.leak_flow_test_m3_h = (infiltration.leakage_flow_at(airtightness, dp)
                                         * d.air_h_w_k / h_inf)
    for (r, level), zone in zip(warm, zones[len(grouped):], strict=True):
        defects.append(warm_defect(r, level, thermogram_id, zone))
    return rank_defects(defects)

