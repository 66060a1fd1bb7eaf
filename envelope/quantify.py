"""One defect from its grouped regions: extra heat, psi or chi, incidence factor, risk,
junction check and the air of leaks; the `Defect` record.

Called by `envelope.defects.find_defects` once the integration zones are known.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np
import shapely

from envelope import bridges, infiltration
from envelope.anomalies import Region
from envelope.classification import CLASSES
from envelope.constants import Z95
from envelope.junctions import OUTLINE_EDGE, default_psi, junction_verdict

__all__ = [
    "WARM_NOTE",
    "Z95",
    "DepressurisedPair",
    "Defect",
    "Group",
    "full_mask",
    "region_zone",
    "judge_risk",
    "build_defect",
    "apply_leak_air",
    "warm_defect",
]

WARM_NOTE = "warmer than reference: likely reflection or heat source"
"""Note on warm spots of interior views."""


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

    Units: areas [m²], lengths [m], heat flows [W], psi [W/(m K)], chi and heat-loss
    coefficients [W/K], energy [kWh/yr], pixel coordinates ``(x, y)`` in the thermogram.
    psi is with internal dimensions (``psi_dimensions``) over ``length_m``. ``risk`` is
    judged on ``frsi_design_p05`` (design convention) when it is known, the measured
    ``frsi_p05`` reported beside it (``risk_judged_on`` says which). ``zone`` is the
    integration zone in the full frame; ``h_w_k`` the defect's part of the heat-loss
    coefficient (psi L, chi, or for a leak the larger of its air share and its surface
    excess); ``energy_lower_bound`` flags a leak whose air is not counted;
    ``leak_flow_natural_m3_h`` / ``leak_flow_test_m3_h`` are a leak's share of the building's
    infiltration under natural conditions and at the pair's pressure difference [m³/h].
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
    annual_kwh: float
    frsi_min: float
    frsi_p05: float
    risk: str
    score_risk: int
    score_annual_kwh: float
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
    pressure_difference_pa: float | None = None
    cooling_k: float | None = None
    score_text: str = ""
    count: int = 1
    frsi_design_min: float = math.nan
    frsi_design_p05: float = math.nan
    risk_judged_on: str = "design convention"
    psi_std_w_mk: float | None = None
    chi_std_w_k: float | None = None
    psi_dimensions: str = "internal"
    elements: tuple[str, ...] = ()
    extra_by_element_w: dict[str, float] = field(default_factory=dict)
    reference_flux_w_m2: dict[str, float] = field(default_factory=dict)
    zone: bridges.Zone | None = field(repr=False, default=None)
    integration_distance_m: float = math.nan
    integration_stop: str = ""
    zone_area_m2: float = math.nan
    incidence_area_m2: float = math.nan
    h_w_k: float = math.nan
    air_h_w_k: float | None = None
    annual_kwh_air: float | None = None
    energy_lower_bound: bool = False
    psi_design_w_mk: float | None = None
    psi_design_source: str = ""
    junction_verdict: str | None = None
    junction_verdict_reason: str = ""
    leak_flow_natural_m3_h: float | None = None
    leak_flow_test_m3_h: float | None = None

    @property
    def zone_mask(self) -> np.ndarray | None:
        """The integration zone as a full-frame boolean mask (None without a zone)."""
        return None if self.zone is None else self.zone.full()


@dataclass
class Group:
    """Regions that become one defect, before quantification: indices into the cold
    regions, the kind of group ("single", "repeating", "junction"), the seed (a
    `envelope.bridges.Zone`: its pixels inside their bounding box), its junction and its
    run along it ``(ux, uy, lo, hi)`` [px]."""

    members: list[int]
    kind: str  # "single", "repeating", "junction", "warm"
    seed: bridges.Zone
    junction: object = None
    along: tuple | None = None


def full_mask(region: Region, shape) -> np.ndarray:
    m = np.zeros(shape, dtype=bool)
    m[region.slices] = region.mask
    return m


def region_zone(region: Region, shape) -> bridges.Zone:
    """A region's pixels as a `envelope.bridges.Zone` (its mask inside its slices)."""
    return bridges.Zone(region.slices, region.mask, frame_shape=shape)


def _stats(values) -> tuple[float, float]:
    v = np.asarray(values, float)
    v = v[np.isfinite(v)]
    return (float(v.min()), float(np.percentile(v, 5))) if v.size else (math.nan, math.nan)


def _judge(p05, limits):
    f_mould, f_cond = limits
    if f_cond is not None and p05 < f_cond:
        return "condensation"
    if f_mould is not None and p05 < f_mould:
        return "mould"
    return "none"


def judge_risk(cold, f, f_design, limits, side):
    """Risk of a defect's cold pixels: ``(risk, judged_on, f_min, f_p05, f_design_min,
    f_design_p05, note)``.

    Judged on the 5th percentile of the design-convention factor when given (the limits
    are defined for it, ISO 13788 §4), else on the measured factor with a note; "not
    assessed" on exterior views or without limits.
    """
    fmin, fp05 = _stats(f[cold])
    dmin, dp05 = _stats(f_design[cold]) if f_design is not None else (math.nan, math.nan)
    if side != "interior" or limits is None or all(v is None for v in limits):
        return "not assessed", "", fmin, fp05, dmin, dp05, None
    if math.isfinite(dp05):
        risk = _judge(dp05, limits)
        note = (f"fRsi at the design convention (Rsi 0.25 m²K/W) p05 {dp05:.3f}, measured on "
                f"the night {fp05:.3f}; judged on the design convention")
        return risk, "design convention", fmin, fp05, dmin, dp05, note
    note = ("no design-convention factor given: risk judged on the measured-night fRsi "
            f"p05 {fp05:.3f}, which reads higher than the convention (not conservative)")
    return _judge(fp05, limits), "measured night", fmin, fp05, dmin, dp05, note


def build_defect(g, zone, cold, info, elements, q, area, labels, q_ref, q_sig, n_ref,
                 in_view, f, fd, limits, side, delta_t_k, hdd_kd, settings, u_rel_of,
                 thermogram_id, dp, junction_psi, checks_ok) -> Defect:
    """Quantify one group of regions into a `Defect` (the arguments are the state of
    `envelope.defects.find_defects`: its regions, element labels and reference fluxes).

    Notes
    -----
    Extra heat over the zone (`envelope.bridges.excess_heat`); psi = Q / (ΔT L) with L the
    run along the junction (or the summed lengths of a repetition, or the major-axis
    extent), chi = Q / ΔT otherwise; incidence factor over the in-view area of the
    elements the zone touches; risk on the design-convention factor of the cold pixels
    (`judge_risk`); junction check against the specified or default psi.
    """
    shape = q.shape
    members = [cold[k] for k in g.members]
    primary_k = max(g.members, key=lambda k: cold[k].area_m2)
    r0, d0 = cold[primary_k], info[primary_k]
    el = elements[d0["el"]]
    ex = bridges.excess_heat(q, area, zone, labels, q_ref, q_sig, n_ref, u_rel_of(el.name))
    by = {elements[i].name: v for i, v in ex["extra_by_label"].items()}
    touched = sorted(ex["area_by_label"])
    inc, inc_area = bridges.incidence_factor(ex["extra_w"], q_ref[touched], in_view[touched])
    area_m2 = float(sum(r.area_m2 for r in members))
    pixel_m = float(np.mean([r.pixel_m for r in members]))
    cls = {"repeating": "repeating thermal bridge", "junction": "linear thermal bridge"}.get(
        g.kind, d0["cls"])
    linear = cls in ("linear thermal bridge", "repeating thermal bridge")
    near = [j for j in r0.junctions if j.distance_m <= settings.junction_m]
    # a linear bridge takes the junction it runs along; other defects the nearest as context
    junction = g.junction if (linear or g.junction is not None) else (near[0] if near else None)
    reasons = list(d0["reasons"])
    notes = list(dict.fromkeys(n for k in g.members for n in info[k]["notes"]))
    if g.kind == "repeating":
        length = float(sum(r.extent_m for r in members))
        reasons = [f"{len(members)} parallel elongated regions at a regular spacing of "
                   f"{r0.spacing_m:.2f} m (e.g. studs, rafters or ties)"] + [
            x for x in reasons if not x.startswith("one of")]
    elif g.along is not None:
        length = (g.along[3] - g.along[2]) * pixel_m
    else:
        length = float(r0.extent_m) if linear else float(r0.length_m)
    if g.kind == "junction":
        names = list(dict.fromkeys(elements[info[k]["el"]].name for k in g.members))
        reasons.insert(0, f"{len(members)} fragments along the {junction.kind} junction "
                          f"({' and '.join(names)}) merged into one bridge")
    dt = delta_t_k
    psi = ex["extra_w"] / (dt * length) if linear and length > 0 else None
    psi_std = ex["extra_w_std"] / (dt * length) if psi is not None else None
    chi = None if linear else ex["extra_w"] / dt
    cold_px = bridges.Zone.union_of([region_zone(r, shape) for r in members], shape)
    box = cold_px.slices
    risk, judged, fmin, fp05, dmin, dp05, rnote = judge_risk(
        cold_px.mask, f[box], None if fd is None else fd[box], limits, side)
    if rnote:
        notes.append(rnote)
    jkind = None if junction is None or junction.kind == OUTLINE_EDGE else junction.kind
    if junction is not None and junction.kind == OUTLINE_EDGE:
        notes.append("runs along an edge of the outline with no neighbouring outline: junction "
                     "type unknown (outline the neighbouring element to name it)")
    psi_design, source, verdict, why = None, "", None, ""
    if cls == "linear thermal bridge" and psi is not None:
        psi_design, source = default_psi(jkind, junction_psi)
        verdict, why = junction_verdict(psi - Z95 * psi_std, psi + Z95 * psi_std,
                                        psi_design, checks_ok=checks_ok)
        if psi_design is None:
            why = f"{source}; {why}"
    if g.kind == "repeating":
        notes.append(f"psi with internal dimensions over the members' summed length "
                     f"{length:.2f} m")
    elif linear:
        notes.append(f"psi with internal dimensions over {length:.2f} m" + (
            " along the junction" if g.along is not None else " (its major axis)"))
    if cls == "air leakage":
        notes.append("extra_w is the conductive surface excess at survey conditions")
    polys = [r.polygon for r in members if r.polygon is not None]
    poly = polys[0] if len(polys) == 1 else (shapely.union_all(polys) if polys else None)
    cx = sum(r.centroid_px[0] * r.area_m2 for r in members) / area_m2
    cy = sum(r.centroid_px[1] * r.area_m2 for r in members) / area_m2
    h = ex["extra_w"] / dt
    change = d0["change"]
    return Defect(
        id="", thermogram=thermogram_id, element=el.name, defect_class=cls,
        confidence=d0["conf"], reasons=reasons, area_m2=area_m2, length_m=length,
        width_m=area_m2 / length if g.kind == "junction" and length > 0 else r0.width_m,
        orientation_deg=r0.orientation_deg, junction=jkind, extra_w=ex["extra_w"],
        extra_w_std=ex["extra_w_std"], psi_w_mk=psi, chi_w_k=chi, incidence_factor=inc,
        annual_kwh=h * hdd_kd * 24.0 / 1000.0, frsi_min=fmin, frsi_p05=fp05, risk=risk,
        score_risk=0, score_annual_kwh=0.0, rank=0, centroid_px=(cx, cy),
        bbox_px=(min(r.bbox_px[0] for r in members), min(r.bbox_px[1] for r in members),
                 max(r.bbox_px[2] for r in members), max(r.bbox_px[3] for r in members)),
        polygon=poly, notes=notes,
        junction_element=None if junction is None or junction.name.startswith("edge:")
        else junction.name,
        edge_distance_m=min(r.edge_distance_m for r in members),
        spacing_m=r0.spacing_m if g.kind == "repeating" else None,
        elongation=r0.elongation, solidity=r0.solidity, pressure_difference_pa=dp,
        cooling_k=None if change is None else change.cooling_k,
        count=len(members) if g.kind == "repeating" else 1,
        frsi_design_min=dmin, frsi_design_p05=dp05, risk_judged_on=judged,
        psi_std_w_mk=psi_std, chi_std_w_k=None if chi is None else ex["extra_w_std"] / dt,
        elements=tuple(elements[i].name for i in touched), extra_by_element_w=by,
        reference_flux_w_m2={elements[i].name: float(q_ref[i]) for i in touched},
        zone=zone, integration_distance_m=zone.distance_m, integration_stop=zone.stop,
        zone_area_m2=ex["zone_area_m2"], incidence_area_m2=inc_area, h_w_k=h,
        psi_design_w_mk=psi_design, psi_design_source=source, junction_verdict=verdict,
        junction_verdict_reason=why)


def apply_leak_air(defects, idx, signal, leak_air_w_k, delta_t_k, hdd_kd, notes=()) -> None:
    """Give each leak its share of the view's infiltration heat loss, or flag it."""
    if not idx:
        return
    if leak_air_w_k is None:
        for i in idx:
            defects[i].energy_lower_bound = True
            defects[i].notes.append(infiltration.LOWER_BOUND_NOTE)
        return
    shares = infiltration.leak_shares(float(leak_air_w_k), signal)
    for i, share in zip(idx, shares, strict=True):
        d = defects[i]
        surface = d.extra_w / delta_t_k
        d.air_h_w_k = float(share)
        d.h_w_k = max(float(share), surface)
        d.annual_kwh_air = float(share) * hdd_kd * 24.0 / 1000.0
        d.annual_kwh = d.h_w_k * hdd_kd * 24.0 / 1000.0
        d.notes += list(notes)
        d.notes.append(
            f"air: {share:.2f} W/K of the infiltration heat loss (share by the cooling the "
            f"pressure difference draws over the leak's zone); the surface excess "
            f"{surface:.2f} W/K is part of the same heat (the wall warms the incoming air), "
            f"so the larger of the two is counted")


def warm_defect(region, level, thermogram_id, zone):
    reasons = [f"warmer than the reference level (fRsi {region.frsi_mean:.2f} against "
               f"{level:.2f})"]
    conf = dict.fromkeys(CLASSES, 0.0)
    conf["unexplained"] = 1.0
    return Defect(
        id="", thermogram=thermogram_id, element=region.element, defect_class="unexplained",
        confidence=conf, reasons=reasons, area_m2=region.area_m2, length_m=region.length_m,
        width_m=region.width_m, orientation_deg=region.orientation_deg, junction=None,
        extra_w=0.0, extra_w_std=0.0, psi_w_mk=None, chi_w_k=None, incidence_factor=math.nan,
        annual_kwh=0.0, frsi_min=region.frsi_min, frsi_p05=region.frsi_p05, risk="none",
        score_risk=0, score_annual_kwh=0.0, rank=0, centroid_px=region.centroid_px,
        bbox_px=region.bbox_px, polygon=region.polygon,
        notes=[WARM_NOTE, "left out of the element's undisturbed area and of its heat flow"],
        edge_distance_m=region.edge_distance_m, elongation=region.elongation,
        solidity=region.solidity, elements=(region.element,), zone=zone,
        integration_distance_m=0.0, integration_stop=zone.stop,
        zone_area_m2=region.area_m2, h_w_k=0.0, risk_judged_on="")
