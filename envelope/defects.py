"""Defects: classification, quantification and ranking of thermal anomalies.

Segmentation, shape description and image-pair registration live in `envelope.anomalies`;
this module turns the described regions into `Defect` records:

- **classification** by a transparent rule set (`classify`): every rule that fires adds a
  score to a class and a sentence with its numbers to ``reasons``; the confidences are the
  scores normalised to sum to 1;
- **quantification** (`quantify`): extra heat flow [W] at survey conditions from the
  excess surface heat flux integrated over a band around the region, psi [W/(m K)] for
  linear bridges, chi [W/K] for compact ones, the incidence factor, kWh per year from
  heating degree-days, and the fRsi risk against the mould and condensation limits;
- **ranking** (`rank_defects`): risk first, energy second, with the score parts spelled
  out.

`find_defects` runs all stages on one thermogram.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field, replace

import numpy as np
import shapely
from scipy import ndimage

from envelope.anomalies import (
    DefectSettings,
    PairChange,
    Region,
    align,
    describe_region,
    find_repetition,
    pair_change,
    register_translation,
    segment_element,
)
from envelope.errors import SurveyError

__all__ = [
    "CLASSES",
    "RISK_SCORES",
    "Defect",
    "DefectSettings",
    "DepressurisedPair",
    "classify",
    "quantify",
    "rank_defects",
    "find_defects",
    "defect_to_dict",
]

CLASSES = ("linear thermal bridge", "repeating thermal bridge", "missing insulation",
           "air leakage", "unexplained")
"""Defect classes, in the order of the confidence dictionaries."""

RISK_SCORES = {"condensation": 2, "mould": 1, "none": 0}
"""Risk part of the ranking score."""

MIN_PRESSURE_PA = 5.0
"""Smallest pressure difference for an air-leakage search (EN 13187:1998, 4.3; from memory)."""

BASE_SCORE = 0.5
"""Score of "unexplained" when no rule fires for another class."""

WARM_NOTE = "warmer than reference: likely reflection or heat source"


@dataclass(frozen=True)
class DepressurisedPair:
    """Second thermogram of the same view under a building pressure difference.

    Attributes
    ----------
    t_s_c : ndarray
        Corrected surface temperatures of the depressurised image [°C].
    pressure_difference_pa : float
        Indoor–outdoor pressure difference during the image [Pa] (≥ 5 Pa per EN 13187;
        50 Pa is common practice).
    """

    t_s_c: np.ndarray
    pressure_difference_pa: float


@dataclass
class Defect:
    """One defect found on a thermogram, with its class, numbers and ranking score.

    Units: areas [m2], lengths [m], heat flows [W], psi [W/(m K)], chi [W/K], energy
    [kWh/yr], pixel coordinates ``(x, y)`` in the thermogram frame.
    """

    id: str
    thermogram: str
    element: str
    defect_class: str
    confidence: dict[str, float]
    reasons: list[str]
    area_m2: float
    length_m: float
    width_m: float
    orientation_deg: float
    junction: str | None
    extra_w: float
    extra_w_std: float
    psi_w_mk: float | None
    chi_w_k: float | None
    incidence_factor: float
    kwh_per_year: float
    frsi_min: float
    frsi_p05: float
    risk: str
    score_risk: int
    score_energy_kwh: float
    rank: int
    centroid_px: tuple[float, float]
    bbox_px: tuple[float, float, float, float]
    polygon: object = field(repr=False, default=None)
    notes: list[str] = field(default_factory=list)
    junction_element: str | None = None
    edge_distance_m: float = math.nan
    spacing_m: float | None = None
    elongation: float = math.nan
    solidity: float = math.nan
    band_m: float = math.nan
    pressure_difference_pa: float | None = None
    cooling_k: float | None = None
    score_text: str = ""
    count: int = 1


def _parallel(region: Region, direction: str, tol_deg: float = 20.0) -> bool:
    if direction == "around":
        return True
    target = 0.0 if direction == "horizontal" else 90.0
    d = abs(region.orientation_deg - target) % 180.0
    return min(d, 180.0 - d) <= tol_deg


def classify(region: Region, change: PairChange | None = None, pressure_pa: float | None = None,
             group_size: int = 0, settings: DefectSettings | None = None):
    """Class of a cold region by a transparent rule set.

    Parameters
    ----------
    region : Region
        Described region (`envelope.anomalies.describe_region`), with ``repetition`` and
        ``spacing_m`` set by `find_repetition`.
    change : PairChange, optional
        Its change between the baseline and the depressurised image.
    pressure_pa : float, optional
        Pressure difference of the depressurised image [Pa].
    group_size : int
        Number of members of its repetition group (0 if none).
    settings : DefectSettings, optional

    Returns
    -------
    defect_class : str
    confidence : dict[str, float]
        Scores normalised to sum to 1, over `CLASSES`.
    reasons : list of str
        The rules that fired, in words with their numbers.
    notes : list of str

    Notes
    -----
    Scores (each rule adds to one class; "unexplained" starts at 0.5):

    ========================  ===============================================  =====
    class                     rule                                             score
    ========================  ===============================================  =====
    linear thermal bridge     elongated: length/width ≥ ``elongated``          1.0
    linear thermal bridge     within ``junction_m`` of a junction, parallel     1.0
    repeating thermal bridge  member of a repetition (regular spacing)          2.5
    missing insulation        compact: length/width < 3                        1.0
    missing insulation        regular outline: solidity ≥ 0.8                   0.5
    missing insulation        large: area ≥ 0.1 m²                              0.5
    missing insulation        away from junctions                               0.5
    missing insulation        on a ceiling or roof (gaps in loft insulation)    1.0
    air leakage               absent from the baseline, appears under ≥ 5 Pa    2.5
    air leakage               grows by ≥ 50 % under ≥ 5 Pa                      1.0
    air leakage               cools by ≥ 0.3 K under ≥ 5 Pa                     1.0
    air leakage               irregular: solidity < 0.8 (with a pair)           0.5
    air leakage               at an opening (with a pair)                       0.5
    ========================  ===============================================  =====

    Air-leakage rules need a depressurised image at ≥ 5 Pa (EN 13187); below that a note
    is added instead. The highest score gives the class.
    """
    settings = DefectSettings() if settings is None else settings
    score = dict.fromkeys(CLASSES, 0.0)
    score["unexplained"] = BASE_SCORE
    reasons: list[str] = []
    notes: list[str] = []

    def fire(cls, pts, text):
        score[cls] += pts
        reasons.append(text)

    e = region.elongation
    near = [j for j in region.junctions if j.distance_m <= settings.junction_m]
    if e >= settings.elongated:
        fire("linear thermal bridge", 1.0, f"elongated (length/width {e:.1f})")
    for j in near:
        if e >= settings.elongated * 0.75 and _parallel(region, j.direction):
            where = "the element edge" if j.name.startswith("edge:") else j.name
            fire("linear thermal bridge", 1.0,
                 f"within {j.distance_m:.2f} m of the {j.kind} junction ({where}) and "
                 f"parallel to it")
            break
    if region.repetition is not None and group_size >= settings.min_repeats:
        fire("repeating thermal bridge", 2.5,
             f"one of {group_size} parallel elongated regions at a regular spacing of "
             f"{region.spacing_m:.2f} m")
    if e < 3.0:
        fire("missing insulation", 1.0, f"compact (length/width {e:.1f})")
    if region.solidity >= 0.8 and e < settings.elongated:
        fire("missing insulation", 0.5, f"regular outline (solidity {region.solidity:.2f})")
    if region.area_m2 >= 0.1 and e < settings.elongated:
        fire("missing insulation", 0.5, f"large ({region.area_m2:.2f} m²)")
    if not near and e < settings.elongated:
        fire("missing insulation", 0.5,
             f"away from junctions ({region.edge_distance_m:.2f} m from the element edge)")
    if region.element_kind.lower() in ("ceiling", "roof") and e < settings.elongated:
        fire("missing insulation", 1.0,
             f"on a {region.element_kind.lower()}, where gaps in the insulation are the "
             f"usual cause")
    if change is not None:
        p = pressure_pa if pressure_pa is not None else math.nan
        if not p >= MIN_PRESSURE_PA:
            notes.append(f"pressure difference {p:.0f} Pa is under the {MIN_PRESSURE_PA:.0f} Pa "
                         f"of EN 13187: air leakage not assessed")
        else:
            if change.appears:
                fire("air leakage", 2.5, f"absent from the baseline, appears at {p:.0f} Pa "
                     f"({change.area_dep_m2:.3f} m²)")
            elif change.growth_ratio >= 0.5:
                fire("air leakage", 1.0,
                     f"grows by {100 * change.growth_ratio:.0f} % at {p:.0f} Pa")
            if change.cooling_k >= 0.3:
                fire("air leakage", 1.0, f"cools by {change.cooling_k:.2f} K on average at "
                     f"{p:.0f} Pa")
            if score["air leakage"] > 0:
                if region.solidity < 0.8:
                    fire("air leakage", 0.5,
                         f"irregular, plume-like (solidity {region.solidity:.2f})")
                if any(j.kind == "around opening" for j in near):
                    fire("air leakage", 0.5, "at an opening")
    elif region.solidity < 0.8 and any(j.kind == "around opening" for j in near):
        notes.append("irregular region at an opening: a depressurised image pair would show "
                     "whether it is air leakage")
    best = max(CLASSES, key=lambda c: (score[c], -CLASSES.index(c)))
    if best == "unexplained":
        reasons.append(f"no class rule scored above the base level {BASE_SCORE}")
    total = sum(score.values())
    confidence = {c: score[c] / total for c in CLASSES}
    return best, confidence, reasons, notes


def quantify(region: Region, q_w_m2, area_map_m2, element_mask, q_ref_w_m2, delta_t_k, hdd_kd,
             other_regions=None, band_m=0.15, linear=False, q_sigma_w_m2=0.0,
             u_rel_std=None):
    """Extra heat flow of a region and what follows from it.

    Parameters
    ----------
    region : Region
    q_w_m2 : ndarray
        Surface heat flux map [W/m2] (full frame), positive through the element.
    area_map_m2 : ndarray
        Pixel area [m2/px].
    element_mask : ndarray of bool
        Net element mask (full frame).
    q_ref_w_m2 : float
        Mean heat flux of the reference zone [W/m2].
    delta_t_k : float
        Indoor–outdoor air temperature difference of the survey [K].
    hdd_kd : float
        Heating degree-days [K day].
    other_regions : ndarray of bool, optional
        Pixels of the element's other anomaly regions (kept out of the band).
    band_m : float
        Half-width of the band around the region [m].
    linear : bool
        Return psi over the region's length (else chi).
    q_sigma_w_m2 : float
        Pixel-to-pixel standard deviation of q in the reference zone [W/m2].
    u_rel_std : float, optional
        Relative standard uncertainty of the element U [-].

    Returns
    -------
    dict
        ``extra_w``, ``extra_w_std``, ``psi_w_mk``, ``chi_w_k``, ``incidence_factor``,
        ``kwh_per_year``, ``length_m``.

    Notes
    -----
    Following the excess-heat-flux integration of O'Grady et al. [1], the extra heat flow
    is integrated over a band Z reaching ``band_m`` beyond the thresholded region (the
    tails of the excess, under the threshold, belong to the bridge):

    ``Q_extra = Σ_Z (q - q_ref) A_px``,  ``psi = Q_extra / (ΔT L)``,  ``chi = Q_extra / ΔT``

    with L the region's extent along its major axis (the junction length). The incidence
    factor of Asdrubali et al. [2] is ``I = Σ_Z q A_px / (q_ref A_Z)``. Annual energy:
    ``E = Q_extra / ΔT · HDD · 24 / 1000`` [kWh/yr].

    Uncertainty: q scales with the film coefficients and emissivity that dominate the
    element's U uncertainty, so their relative uncertainty carries over to Q_extra;
    pixel noise adds ``σ_q sqrt(Σ A_px²)`` and the reference mean ``σ_q A_Z / sqrt(N_ref)``
    (taken as N_ref ≥ N_Z); the parts are added in quadrature.

    References
    ----------
    [1] M. O'Grady, A. A. Lechowska and A. M. Harte, "Infrared thermography technique as
        an in-situ method of assessing heat loss through thermal bridging", Energy and
        Buildings 135 (2017) 20–32, doi:10.1016/j.enbuild.2016.11.039.
    [2] F. Asdrubali, G. Baldinelli and F. Bianchi, "A quantitative methodology to
        evaluate thermal bridges in buildings", Applied Energy 97 (2012) 365–373,
        doi:10.1016/j.apenergy.2011.12.054.
    """
    if not delta_t_k > 0:
        raise SurveyError(f"indoor-outdoor difference must be > 0 K, got {delta_t_k}",
                          field="delta_t_k")
    h, w = element_mask.shape
    band_px = int(math.ceil(band_m / region.pixel_m)) if region.pixel_m > 0 else 0
    r0 = max(region.slices[0].start - band_px, 0)
    r1 = min(region.slices[0].stop + band_px, h)
    c0 = max(region.slices[1].start - band_px, 0)
    c1 = min(region.slices[1].stop + band_px, w)
    win = (slice(r0, r1), slice(c0, c1))
    own = np.zeros((r1 - r0, c1 - c0), dtype=bool)
    rr, cc = region.slices[0].start - r0, region.slices[1].start - c0
    own[rr:rr + region.mask.shape[0], cc:cc + region.mask.shape[1]] = region.mask
    if band_px > 0:
        zone = ndimage.distance_transform_edt(~own) <= band_px
    else:
        zone = own.copy()
    q = np.asarray(q_w_m2, float)[win]
    a = np.asarray(area_map_m2, float)[win]
    zone &= np.asarray(element_mask, bool)[win] & np.isfinite(q) & np.isfinite(a)
    if other_regions is not None:
        zone &= ~(np.asarray(other_regions, bool)[win] & ~own)
    az = a[zone]
    extra = float(np.sum((q[zone] - q_ref_w_m2) * az))
    area_zone = float(az.sum())
    incidence = float(np.sum(q[zone] * az) / (q_ref_w_m2 * area_zone)) if (
        area_zone > 0 and q_ref_w_m2 != 0) else math.nan
    noise = q_sigma_w_m2 * math.sqrt(float(np.sum(az**2)) + area_zone**2 / max(az.size, 1))
    rel = 0.0 if u_rel_std is None else float(u_rel_std) * abs(extra)
    length = region.extent_m
    return {
        "extra_w": extra,
        "extra_w_std": math.hypot(noise, rel),
        "psi_w_mk": extra / (delta_t_k * length) if linear and length > 0 else None,
        "chi_w_k": None if linear else extra / delta_t_k,
        "incidence_factor": incidence,
        "kwh_per_year": extra / delta_t_k * hdd_kd * 24.0 / 1000.0,
        "length_m": length,
    }


def _risk(frsi_p05, limits, side):
    if side != "interior" or limits is None:
        return "none"
    f_mould, f_cond = limits
    if f_cond is not None and frsi_p05 < f_cond:
        return "condensation"
    if f_mould is not None and frsi_p05 < f_mould:
        return "mould"
    return "none"


def rank_defects(defects, assign_ids: bool = True):
    """Sort defects by risk then energy, fill in their score parts, ranks and ids.

    Parameters
    ----------
    defects : iterable of Defect
    assign_ids : bool
        Number the ids "D1", "D2", ... in rank order (replacing any earlier ids, so that a
        ranking over several thermograms gives unique ids). The order is total, so the ids
        are stable for a given input.

    Returns
    -------
    list of Defect
        Sorted; ``rank`` 1..N, ``score_risk`` (condensation 2, mould 1, none 0),
        ``score_energy_kwh`` and ``score_text`` set in place.

    Notes
    -----
    The score is the pair (risk part, energy part) compared in that order: a defect whose
    surface can reach condensation ranks above any defect that only costs energy, because
    mould is a health matter; among equal risks, the larger kWh/yr ranks first. Ties break
    on thermogram, element and position, so the order is deterministic.
    """
    items = list(defects)
    for d in items:
        d.score_risk = RISK_SCORES.get(d.risk, 0)
        d.score_energy_kwh = float(d.kwh_per_year) if np.isfinite(d.kwh_per_year) else 0.0
    items.sort(key=lambda d: (-d.score_risk, -d.score_energy_kwh, d.thermogram, d.element,
                              d.centroid_px[1], d.centroid_px[0]))
    for i, d in enumerate(items, start=1):
        d.rank = i
        d.score_text = (f"risk: {d.risk} ({d.score_risk}) · energy: "
                        f"{d.score_energy_kwh:.0f} kWh/yr")
        if assign_ids:
            d.id = f"D{i}"
    return items


def _pair_args(pair):
    if pair is None:
        return None, None
    if isinstance(pair, DepressurisedPair):
        return np.asarray(pair.t_s_c, float), float(pair.pressure_difference_pa)
    t, dp = pair
    return np.asarray(t, float), float(dp)


def _warm_defect(region, level, thermogram_id):
    reasons = [f"warmer than the reference level (fRsi {region.frsi_mean:.2f} against "
               f"{level:.2f})"]
    conf = dict.fromkeys(CLASSES, 0.0)
    conf["unexplained"] = 1.0
    return Defect(
        id="", thermogram=thermogram_id, element=region.element, defect_class="unexplained",
        confidence=conf, reasons=reasons, area_m2=region.area_m2, length_m=region.length_m,
        width_m=region.width_m, orientation_deg=region.orientation_deg, junction=None,
        extra_w=0.0, extra_w_std=0.0, psi_w_mk=None, chi_w_k=None, incidence_factor=math.nan,
        kwh_per_year=0.0, frsi_min=region.frsi_min, frsi_p05=region.frsi_p05, risk="none",
        score_risk=0, score_energy_kwh=0.0, rank=0, centroid_px=region.centroid_px,
        bbox_px=region.bbox_px, polygon=region.polygon, notes=[WARM_NOTE],
        edge_distance_m=region.edge_distance_m, elongation=region.elongation,
        solidity=region.solidity,
    )


def find_defects(t_s_c, frsi, q_w_m2, area_map_m2, regions, side, delta_t_k, hdd_kd,
                 limits=None, settings: DefectSettings | None = None, pair=None,
                 u_rel_std=None, thermogram_id: str = "") -> list[Defect]:
    """Find, describe, classify, quantify and rank the defects of one thermogram.

    Parameters
    ----------
    t_s_c : ndarray (H, W)
        Corrected surface temperatures [°C].
    frsi : ndarray (H, W)
        Temperature factor [-] of the same pixels.
    q_w_m2 : ndarray (H, W)
        Surface heat flux [W/m2] through the element (e.g.
        `envelope.transmittance.heat_flux_interior`).
    area_map_m2 : ndarray (H, W)
        Area of each pixel on the element plane [m2/px].
    regions : dict[str, ElementRegion]
        Elements of the thermogram (``name``, ``kind``, ``polygon_net``, ``mask``,
        ``reference_mask``). Kinds outside ``settings.kinds`` are not searched but count
        as neighbours (junctions, openings).
    side : {"interior", "exterior"}
        View side: interior views look for cold anomalies, exterior views for warm ones.
    delta_t_k : float
        Indoor–outdoor air temperature difference of the survey [K].
    hdd_kd : float
        Heating degree-days of the site [K day].
    limits : (f_mould, f_condensation), optional
        fRsi,min limits (`envelope.condensation.frsi_min`); None skips the risk check.
    settings : DefectSettings
    pair : DepressurisedPair or (t_s_c, pressure_difference_pa), optional
        Depressurised image of the same view. It is registered onto `t_s_c`
        (`register_translation`), its fRsi derived as ``frsi + (T_dep - T_base) / ΔT``
        (same air temperatures: the two images minutes apart), and a pixel anomalous in
        either image belongs to a region.
    u_rel_std : float or dict[str, float], optional
        Relative standard uncertainty of each element's U [-], carried to ``extra_w_std``.
    thermogram_id : str

    Returns
    -------
    list of Defect
        Ranked (`rank_defects`), ids "D1", "D2"...

    Examples
    --------
    See `tests/test_defects.py` for a synthetic scene with a wall–floor junction, studs,
    a missing batt, a leak and a reflection.
    """
    settings = DefectSettings() if settings is None else settings
    t = np.asarray(t_s_c, float)
    f = np.asarray(frsi, float)
    for name, arr in (("frsi", f), ("q_w_m2", q_w_m2), ("area_map_m2", area_map_m2)):
        if np.shape(arr) != t.shape:
            raise SurveyError(f"shape {np.shape(arr)} differs from t_s_c {t.shape}", field=name)
    q = np.asarray(q_w_m2, float)
    area = np.asarray(area_map_m2, float)
    dep_t, dp = _pair_args(pair)
    aligned = frsi_dep = None
    pair_notes: list[str] = []
    if dep_t is not None:
        if dep_t.shape != t.shape:
            raise SurveyError(f"shape {dep_t.shape} differs from t_s_c {t.shape}",
                              field="pair.t_s_c")
        shift = register_translation(t, dep_t)
        aligned = align(dep_t, shift)
        frsi_dep = f + (aligned - t) / delta_t_k
        pair_notes.append(f"depressurised image at {dp:.0f} Pa registered with a shift of "
                          f"({shift[0]:.2f}, {shift[1]:.2f}) px (rows, columns)")
        if side != "interior":
            pair_notes.append("image pair on an exterior view: air leakage not assessed")
    elements = list(regions.values())
    defects: list[Defect] = []
    group_of: dict[int, tuple[str, int]] = {}  # id(defect) -> (element, repetition group)
    for el in elements:
        if el.kind.lower() not in settings.kinds:
            continue
        use_pair = frsi_dep is not None and side == "interior"
        seg = segment_element(f, el.mask, el.reference_mask, area, side, settings,
                              extra=frsi_dep if use_pair else None)
        labels = seg["labels"]
        if labels is None or not seg["kept"]:
            continue
        sl = seg["slices"]
        objs = ndimage.find_objects(labels)
        described = []
        for lab, sign in seg["kept"]:
            o = objs[lab - 1]
            full = (slice(sl[0].start + o[0].start, sl[0].start + o[0].stop),
                    slice(sl[1].start + o[1].start, sl[1].start + o[1].stop))
            described.append(describe_region(labels[o] == lab, full, f, area, el, elements,
                                             sign, settings))
        is_defect = [(r.sign == "cold") == (side == "interior") for r in described]
        cold = [r for r, ok in zip(described, is_defect, strict=True) if ok]
        groups = find_repetition(cold, settings)
        sizes = {gi: len(g) for gi, g in enumerate(groups)}
        ref = seg["reference"]
        qc = q[sl]
        qz = qc[ref & np.isfinite(qc)]
        if qz.size == 0:
            continue
        q_ref, q_sig = float(qz.mean()), float(qz.std())
        others = np.zeros(t.shape, dtype=bool)
        others[sl] = labels > 0
        m_el = el.mask[sl]
        t_e_est = float(np.nanmedian(t[sl][m_el] - f[sl][m_el] * delta_t_k))
        t_thr = t_e_est + (seg["level"] - seg["threshold"]) * delta_t_k
        u_rel = u_rel_std.get(el.name) if isinstance(u_rel_std, dict) else u_rel_std
        for r, ok in zip(described, is_defect, strict=True):
            if not ok:
                defects.append(_warm_defect(r, seg["level"], thermogram_id))
                continue
            change = None
            if use_pair:
                change = pair_change(t[r.slices], aligned[r.slices], None, r.mask,
                                     cold_threshold_c=t_thr, area_map_m2=area[r.slices])
            cls, conf, reasons, notes = classify(
                r, change, dp, sizes.get(r.repetition, 0) if r.repetition is not None else 0,
                settings)
            linear = cls in ("linear thermal bridge", "repeating thermal bridge")
            qn = quantify(r, q, area, el.mask, q_ref, delta_t_k, hdd_kd, others,
                          settings.band_m, linear, q_sig, u_rel)
            if cls == "air leakage":
                notes.append("extra heat flow is the conductive surface excess at survey "
                             "conditions; the enthalpy of the leaking air is not included")
            near = [j for j in r.junctions if j.distance_m <= settings.junction_m]
            risk = _risk(r.frsi_p05, limits, side)
            if limits is not None and side == "interior":
                given = [f"{n} {v:.3f}" for n, v in zip(("mould", "condensation"), limits,
                                                         strict=True) if v is not None]
                if given:
                    notes.append(f"fRsi p05 {r.frsi_p05:.3f} against limits "
                                 + ", ".join(given))
            defects.append(Defect(
                id="", thermogram=thermogram_id, element=el.name, defect_class=cls,
                confidence=conf, reasons=reasons, area_m2=r.area_m2,
                length_m=r.length_m, width_m=r.width_m, orientation_deg=r.orientation_deg,
                junction=near[0].kind if near else None, extra_w=qn["extra_w"],
                extra_w_std=qn["extra_w_std"], psi_w_mk=qn["psi_w_mk"],
                chi_w_k=qn["chi_w_k"], incidence_factor=qn["incidence_factor"],
                kwh_per_year=qn["kwh_per_year"], frsi_min=r.frsi_min, frsi_p05=r.frsi_p05,
                risk=risk, score_risk=0, score_energy_kwh=0.0, rank=0,
                centroid_px=r.centroid_px, bbox_px=r.bbox_px, polygon=r.polygon,
                notes=notes + (pair_notes if change is not None else []),
                junction_element=near[0].name if near else None,
                edge_distance_m=r.edge_distance_m, spacing_m=r.spacing_m,
                elongation=r.elongation, solidity=r.solidity, band_m=settings.band_m,
                pressure_difference_pa=dp, cooling_k=None if change is None
                else change.cooling_k,
            ))
            if cls == "repeating thermal bridge" and r.repetition is not None:
                group_of[id(defects[-1])] = (el.name, r.repetition)
    return rank_defects(merge_repeating(defects, group_of, delta_t_k))


def merge_repeating(defects: list, group_of: dict, delta_t_k: float) -> list:
    """One defect per repetition group (studs, rafters, ties), as a surveyor lists them.

    The members' extra heat flows add up; psi is the total extra heat flow over the total
    length, ``sum(Q_i) / (delta_T sum(L_i))`` (the members' mean psi weighted by length);
    the risk is the worst member's; the polygon is the union of the members'.
    """
    groups: dict[tuple, list] = {}
    for d in defects:
        key = group_of.get(id(d))
        if key is not None:
            groups.setdefault(key, []).append(d)
    merged, done = [], set()
    for d in defects:
        key = group_of.get(id(d))
        if key is None or len(groups[key]) < 2:
            merged.append(d)
            continue
        if key in done:
            continue
        done.add(key)
        ms = groups[key]
        extra = sum(m.extra_w for m in ms)
        length = sum(m.length_m for m in ms)
        area = sum(m.area_m2 for m in ms)
        worst = max(ms, key=lambda m: (m.score_risk, -m.frsi_p05))
        polys = [m.polygon for m in ms if m.polygon is not None]
        poly = shapely.union_all(polys) if polys else None
        x0 = min(m.bbox_px[0] for m in ms)
        y0 = min(m.bbox_px[1] for m in ms)
        x1 = max(m.bbox_px[2] for m in ms)
        y1 = max(m.bbox_px[3] for m in ms)
        cx = sum(m.centroid_px[0] * m.area_m2 for m in ms) / area
        cy = sum(m.centroid_px[1] * m.area_m2 for m in ms) / area
        psis = [m.psi_w_mk for m in ms if m.psi_w_mk is not None]
        spacing = ms[0].spacing_m
        reasons = [f"{len(ms)} parallel elongated regions at a regular spacing of "
                   f"{spacing:.2f} m (e.g. studs, rafters or ties)"] + [
            r for r in ms[0].reasons if not r.startswith("one of")]
        notes = list(dict.fromkeys(n for m in ms for n in m.notes))
        if psis:
            notes.append(f"psi of the members {min(psis):.3f}–{max(psis):.3f} W/(m·K)")
        merged.append(replace(
            worst, area_m2=area, length_m=length, extra_w=extra,
            extra_w_std=math.sqrt(sum(m.extra_w_std**2 for m in ms)) if all(
                math.isfinite(m.extra_w_std) for m in ms) else math.nan,
            psi_w_mk=extra / (delta_t_k * length) if length > 0 else None, chi_w_k=None,
            incidence_factor=sum(m.incidence_factor * m.area_m2 for m in ms) / area,
            kwh_per_year=sum(m.kwh_per_year for m in ms),
            frsi_min=min(m.frsi_min for m in ms), frsi_p05=min(m.frsi_p05 for m in ms),
            centroid_px=(cx, cy), bbox_px=(x0, y0, x1, y1), polygon=poly, reasons=reasons,
            notes=notes, count=len(ms)))
    return merged


def _num(x):
    if x is None:
        return None
    x = float(x)
    return x if math.isfinite(x) else None


def defect_to_dict(d: Defect) -> dict:
    """JSON-ready dictionary of a defect: keys carry their units, no shapely objects.

    The outline is the exterior ring of the region's polygon (its largest part when the
    region is in several pieces) as ``[[x, y], ...]`` in pixel coordinates.
    """
    poly = d.polygon
    outline, parts = [], []
    if poly is not None and not poly.is_empty:
        pieces = sorted(getattr(poly, "geoms", [poly]), key=lambda g: -g.area)
        parts = [[[float(x), float(y)] for x, y in g.exterior.coords] for g in pieces]
        outline = parts[0]
    return {
        "id": d.id, "thermogram": d.thermogram, "element": d.element, "rank": d.rank,
        "class": d.defect_class,
        "confidence": {k: round(float(v), 4) for k, v in d.confidence.items()},
        "reasons": list(d.reasons), "notes": list(d.notes),
        "area_m2": _num(d.area_m2), "length_m": _num(d.length_m), "width_m": _num(d.width_m),
        "orientation_deg": _num(d.orientation_deg), "elongation": _num(d.elongation),
        "solidity": _num(d.solidity), "junction": d.junction,
        "junction_element": d.junction_element, "edge_distance_m": _num(d.edge_distance_m),
        "spacing_m": _num(d.spacing_m), "count": int(d.count), "extra_w": _num(d.extra_w),
        "extra_w_std": _num(d.extra_w_std), "psi_w_mk": _num(d.psi_w_mk),
        "chi_w_k": _num(d.chi_w_k), "incidence_factor": _num(d.incidence_factor),
        "band_m": _num(d.band_m), "kwh_per_year": _num(d.kwh_per_year),
        "frsi_min": _num(d.frsi_min), "frsi_p05": _num(d.frsi_p05), "risk": d.risk,
        "score_risk": int(d.score_risk), "score_energy_kwh_per_year": _num(d.score_energy_kwh),
        "score_text": d.score_text,
        "pressure_difference_pa": _num(d.pressure_difference_pa),
        "cooling_k": _num(d.cooling_k),
        "centroid_px": [float(v) for v in d.centroid_px],
        "outline_parts_px": parts,
        "bbox_px": [float(v) for v in d.bbox_px], "outline_px": outline,
    }
