"""Stage: everything one thermogram gives — flux, defects, undisturbed areas, element results.

Order (SPEC §2): corrected view → surface heat flux → fRsi → defects (against the
element's reference level) → each element's undisturbed area (`zones.undisturbed_mask`)
→ U over it (Monte Carlo) and over the whole area → condensation / mould verdict.
"""

from __future__ import annotations

from collections.abc import Mapping
from dataclasses import replace

import numpy as np

from envelope import budget, condensation, convection, infiltration, zones
from envelope import defects as defects_mod
from envelope.stages.data import CorrectedView, SurfaceFlux, ViewResult
from envelope.stages.elements import (
    DesignConditions,
    element_result,
    ensemble_of,
    frsi_map,
    surface_flux,
    view_inputs,
)
from envelope.stages.risk import element_risk
from envelope.survey import Analysis, Camera, Conditions, Element
from envelope.validity import check_night_sky

__all__ = ["view_defects", "assess_view"]

def _is_warm(d) -> bool:
    return d.defect_class == "unexplained" and defects_mod.WARM_NOTE in d.notes


SHIELDING = {"sheltered": "well-shielded", "normal": "normal", "exposed": "exposed"}
"""Survey shielding words → those of `envelope.infiltration`."""


def leak_airtightness(air) -> infiltration.Airtightness | None:
    """The survey's blower-door result for the infiltration model, or None."""
    if air is None or air.volume_m3 is None:
        return None
    return infiltration.Airtightness(
        volume_m3=air.volume_m3, n50_per_h=air.n50_per_h, q50_m3_h_m2=air.q50_m3_h_m2,
        envelope_area_m2=air.envelope_area_m2, storeys=float(air.storeys or 1),
        shielding=SHIELDING.get(air.shielding, "normal"))


def view_defects(cv: CorrectedView, flux: SurfaceFlux, frsi, frsi_design, elements,
                 conditions: Conditions, camera: Camera, analysis: Analysis, hdd_kd: float,
                 limits, pair=None, junction_psi=None, airtightness=None,
                 checks_ok: bool = True) -> list:
    """Defects of one view (interior: cold anomalies of fRsi; exterior: warm ones)."""
    c = conditions
    dt = c.indoor_air_c - c.outdoor_air_c
    air = c.indoor_air_c if cv.side == "interior" else c.outdoor_air_c
    u_rel = {}
    for name, reg in cv.regions.items():
        zone = reg.reference_mask if reg.reference_mask is not None and reg.reference_mask.any() \
            else reg.mask
        m = zone & np.isfinite(cv.object_c)
        t_zone = float(np.mean(cv.object_c[m])) if m.any() else air
        h_rel = budget.H_C_REL_STD
        if cv.side == "interior":
            mean, std, _ = convection.ensemble_spread(ensemble_of(elements[name], analysis),
                                                      t_zone, air)
            h_rel = std / mean if mean > 0 else h_rel
        u_rel[name] = budget.defect_relative_uncertainty(abs(t_zone - air),
                                                         camera.relative_accuracy_k, h_rel)
    settings = defects_mod.DefectSettings(delta_f=analysis.defect_threshold,
                                          min_area_m2=analysis.defect_min_area_m2)
    lim = tuple(x.value if x is not None else None for x in limits)
    return defects_mod.find_defects(
        cv.object_c, frsi, flux.q_w_m2, cv.area_map_m2, cv.regions, cv.side, dt, hdd_kd,
        limits=lim, settings=settings, pair=pair, u_rel_std=u_rel,
        thermogram_id=cv.thermogram.id, frsi_design=frsi_design, junction_psi=junction_psi,
        airtightness=airtightness,
        viewed_area_m2=sum(r.area_m2 for r in cv.regions.values()), checks_ok=checks_ok)


def assess_view(cv: CorrectedView, elements: Mapping[str, Element], conditions: Conditions,
                camera: Camera, analysis: Analysis, limits, design: DesignConditions,
                hdd_kd: float, survey_checks, pair=None, survey_file: str = "survey.toml",
                junction_psi=None, airtightness=None) -> ViewResult:
    """One corrected view → its `ViewResult` (element results and defects).

    Parameters
    ----------
    cv : CorrectedView
    elements : mapping of str to Element
    conditions, camera, analysis
        Survey inputs.
    limits : (FrsiLimit or None, FrsiLimit or None)
        Mould and condensation limits.
    design : DesignConditions
    hdd_kd : float
        Heating degree-days [K·day] (NaN when unknown).
    survey_checks : sequence of Check
    pair : (ndarray, float), optional
        Depressurised image of the same view [°C] and its pressure difference [Pa].
    junction_psi : dict, optional
        Junction type → specified psi [W/(m·K)] (the survey's junctions).
    airtightness : infiltration.Airtightness, optional
        Blower-door result: leaks then carry their air's heat.
    """
    c = conditions
    dt = c.indoor_air_c - c.outdoor_air_c
    flux = surface_flux(cv, elements, c, analysis)
    frsi = frsi_map(cv, c)
    f_design = (condensation.design_factor_map(flux.q_w_m2, cv.object_c, c.outdoor_air_c,
                                               cv.regions) if cv.side == "interior" else None)
    checks_ok = all(ch.status != "fail" for ch in (*survey_checks, *cv.checks))
    found = view_defects(cv, flux, frsi, f_design, elements, c, camera, analysis, hdd_kd,
                         limits, pair, junction_psi, airtightness, checks_ok)
    vin = view_inputs(cv, c, camera, analysis)
    # every zone of the view counts for every element: a junction's zone crosses into both
    all_warm = [d.zone_mask for d in found if _is_warm(d) and d.zone is not None]
    all_cold = [d.zone_mask for d in found if not _is_warm(d) and d.zone is not None]
    results, kept, draws = [], {}, {}
    for name, reg in cv.regions.items():
        on_el = [d for d in found if name in (d.elements or (d.element,))]
        warm = [z for z in all_warm if (z & reg.mask).any()]
        undisturbed, zone_name = zones.undisturbed_mask(reg.mask, reg.reference_mask, all_cold,
                                                        all_warm)
        kept[name] = undisturbed
        whole = zones.whole_area_mask(reg.mask, warm)
        notes = ()
        if warm:
            notes = (f"whole-area U leaves out {len(warm)} warm spot"
                     f"{'s' if len(warm) > 1 else ''} (likely reflection or heat source)",)
        res, draws[name] = element_result(cv, flux, vin, elements[name], undisturbed, whole,
                                          zone_name, c, analysis, survey_checks, survey_file,
                                          notes)
        if cv.side == "interior":
            ok = reg.mask & np.isfinite(frsi)
            res = element_risk(res, frsi[ok], limits, design,
                               [d.risk for d in on_el if not _is_warm(d)], f_design[ok])
        bad = sum(d.area_m2 for d in on_el if d.element == name
                  and d.defect_class != "unexplained")
        share = max(0.0, 1.0 - bad / reg.area_m2) if reg.area_m2 > 0 else None
        results.append(replace(res, coverage_share=share))
    u_map = np.where(np.isfinite(flux.q_w_m2), flux.q_w_m2 / dt, np.nan).astype(np.float32)
    checks = tuple(cv.checks)
    if cv.side == "exterior":  # the view's own night-sky check, over all its elements
        on = np.zeros(cv.object_c.shape, bool)
        for reg in cv.regions.values():
            on |= reg.mask
        on &= np.isfinite(cv.object_c)
        if on.any():
            checks += (check_night_sky(float(np.mean(cv.object_c[on])), c.outdoor_air_c,
                                       "exterior"),)
    return ViewResult(cv.thermogram, "assessed", corrected=cv,
                      frsi=frsi if cv.side == "interior" else None, frsi_design=f_design,
                      u_map_w_m2k=u_map,
                      elements=tuple(results), defects=tuple(found), checks=checks,
                      undisturbed=kept, u_draws=draws)
