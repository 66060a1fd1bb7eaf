"""Stage: a corrected view → surface heat flux, then U, uncertainty and fRsi per element.

The heat flux map comes first (the defects are found on it); each element's U is then
taken over its undisturbed area (`envelope.zones.undisturbed_mask`), the same area the
defects' extra heat is measured against, so that H = ΣU·A + Σψ·L counts a defect once.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Mapping
from dataclasses import dataclass

import numpy as np

from envelope import calibration, condensation, films, transmittance, uncertainty, validity
from envelope.errors import EnvelopeWarning, SurveyError
from envelope.stages.data import CorrectedView, ElementResult, SurfaceFlux
from envelope.survey import Analysis, Camera, Climate, Conditions, Element

__all__ = ["DesignConditions", "design_conditions", "surface_flux", "frsi_map",
           "element_result"]


@dataclass(frozen=True)
class DesignConditions:
    """Indoor and outdoor conditions at which fRsi predicts the surface [°C, rh 0–1]."""

    t_i_c: float
    t_e_c: float
    rh_i: float


def design_conditions(climate: Climate, conditions: Conditions, limit_mould) -> DesignConditions:
    """Design conditions of the risk verdicts: the critical month of the ISO 13788 limit
    when there is a monthly climate, else the design temperatures, else the survey night."""
    t_i = climate.design_indoor_c if climate.design_indoor_c is not None else conditions.indoor_air_c
    crit = (limit_mould.critical_month - 1) if getattr(limit_mould, "critical_month", None) else 0
    if climate.monthly_outdoor_c is not None:
        t_e = climate.monthly_outdoor_c[crit]
    elif climate.design_outdoor_c is not None:
        t_e = climate.design_outdoor_c
    else:
        t_e = conditions.outdoor_air_c
    rh_i = conditions.indoor_rh if conditions.indoor_rh is not None else 0.5
    p_i = getattr(limit_mould, "p_i_pa", None)
    if p_i is not None and np.ndim(p_i) and np.isfinite(p_i[crit]):
        monthly_t_i = climate.monthly_indoor_c or (t_i,) * 12
        rh_i = float(condensation.relative_humidity(monthly_t_i[crit], p_i[crit]))
    return DesignConditions(float(t_i), float(t_e), float(rh_i))


def _preliminary_zone(reg, obj) -> np.ndarray:
    """Pixels whose mean temperature sets h_c before the defects are known: the reference
    zone when drawn, else the element's pixels within its interquartile range (robust to a
    defect or a reflection)."""
    if reg.reference_mask is not None and reg.reference_mask.any():
        return reg.reference_mask & np.isfinite(obj)
    m = reg.mask & np.isfinite(obj)
    if m.sum() >= 8:
        q1, q3 = np.percentile(obj[m], [25, 75])
        m = m & (obj >= q1) & (obj <= q3)
    return m


def _h_c(element: Element, side: str, analysis: Analysis, conditions: Conditions,
         t_s_c: float) -> tuple[float, str]:
    if side == "interior":
        model = analysis.interior_convection
        h = films.convective_coefficient(model, direction=element.heat_flow, t_s_c=t_s_c,
                                         t_a_c=conditions.indoor_air_c, height_m=element.height_m)
    else:
        model = analysis.exterior_convection
        h = films.convective_coefficient(model, wind_m_s=conditions.wind_m_s)
    return float(h), model


def _sky(element: Element, conditions: Conditions, analysis: Analysis) -> tuple[float, float]:
    c = conditions
    dp = condensation.dew_point(c.outdoor_air_c, c.outdoor_rh if c.outdoor_rh is not None else 0.85)
    t_sky = float(films.sky_temperature(c.outdoor_air_c, dew_point_c=dp,
                                        cloud_oktas=c.sky_cloud_oktas, model=analysis.sky_model))
    f_sky, _ = films.view_factors(element.tilt_deg)
    return t_sky, float(f_sky)


def surface_flux(cv: CorrectedView, elements: Mapping[str, Element], conditions: Conditions,
                 analysis: Analysis) -> SurfaceFlux:
    """Heat flux through each element's surface [W/m²], NaN outside the elements.

    Interior: q = h_c (T_ai − T_si) + ε σ (T_r⁴ − T_si⁴); exterior: the exterior balance with
    sky and ground (`transmittance.heat_flux_interior` / `heat_flux_exterior`). h_c is
    evaluated at the mean temperature of a preliminary zone (see `_preliminary_zone`).
    """
    obj, c = cv.object_c, conditions
    q_map = np.full(obj.shape, np.nan)
    h_c, models, sky = {}, {}, {}
    for name, reg in cv.regions.items():
        el = elements[name]
        zone = _preliminary_zone(reg, obj)
        if not zone.any():
            raise SurveyError(f"element '{name}' has no valid pixel", cv.thermogram.file.name, name)
        eps = float(cv.emissivity[reg.mask][0])
        h_c[name], models[name] = _h_c(el, cv.side, analysis, c, float(np.mean(obj[zone])))
        if cv.side == "interior":
            q = transmittance.heat_flux_interior(obj, c.indoor_air_c, cv.thermogram.reflected_c,
                                                 eps, h_c[name])
        else:
            sky[name] = _sky(el, c, analysis)
            q = transmittance.heat_flux_exterior(obj, c.outdoor_air_c, eps, h_c[name],
                                                 t_sky_c=sky[name][0],
                                                 t_ground_c=films.ground_temperature(c.outdoor_air_c),
                                                 f_sky=sky[name][1])
        q_map = np.where(reg.mask, np.asarray(q, dtype=float), q_map)
    return SurfaceFlux(q_map, h_c, models, sky)


def frsi_map(cv: CorrectedView, conditions: Conditions) -> np.ndarray:
    """Temperature factor per pixel [-] measured on the night: interior views, (T_si − T_e) /
    (T_i − T_e); exterior views, (T_se − T_e) / (T_i − T_e) (used to find warm anomalies)."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", EnvelopeWarning)
        f = condensation.temperature_factor(cv.object_c, conditions.indoor_air_c,
                                            conditions.outdoor_air_c)
    return np.asarray(f, dtype=np.float32)


def _reference_spots(tg, apparent_c, mask) -> uncertainty.Calibration | None:
    """Probe and tape readings lying on the element (first of each), for its Monte Carlo."""
    def on_element(xy):
        rc = calibration.spot_pixel(xy, mask.shape)
        return rc if rc is not None and mask[rc] else None

    kw = {}
    for p in tg.probes:
        rc = on_element(p.pixel_xy)
        if rc is not None:
            kw.update(probe_surface_c=p.surface_c, u_probe_k=p.uncertainty_k,
                      probe_apparent_c=calibration.spot_mean(apparent_c, *rc))
            break
    for t in tg.tapes:
        rc, rs = on_element(t.pixel_xy), on_element(t.surface_pixel_xy)
        if rc is not None and rs is not None:
            kw.update(tape_apparent_c=calibration.spot_mean(apparent_c, *rc),
                      tape_emissivity=t.emissivity,
                      surface_next_to_tape_apparent_c=calibration.spot_mean(apparent_c, *rs))
            break
    return uncertainty.Calibration(**kw) if kw else None


def _whole_u(q_w_m2, area_map, mask, dt: float) -> float:
    valid = mask & np.isfinite(q_w_m2)
    if not valid.any():
        return math.nan
    return float(np.sum(q_w_m2[valid] * area_map[valid]) / (np.sum(area_map[valid]) * dt))


def element_result(cv: CorrectedView, flux: SurfaceFlux, element: Element, undisturbed,
                   whole_mask, zone_name: str, conditions: Conditions, camera: Camera,
                   analysis: Analysis, survey_checks, survey_file: str = "survey.toml",
                   notes: tuple[str, ...] = ()) -> ElementResult:
    """U with its Monte Carlo interval over the undisturbed area, and U over the whole area.

    Parameters
    ----------
    cv, flux : CorrectedView, SurfaceFlux
    element : Element
    undisturbed : ndarray of bool
        The element's undisturbed pixels (`envelope.zones.undisturbed_mask`).
    whole_mask : ndarray of bool
        The pixels the whole-area U is taken over (net area, warm spots left out).
    zone_name : str
        What `undisturbed` is, in words.
    conditions, camera, analysis
        Survey inputs used.
    survey_checks : sequence of Check
        Checks of the night; the view's and the element's own are added.
    """
    c, tg, reg = conditions, cv.thermogram, cv.regions[element.name]
    obj = cv.object_c
    zone = undisturbed & np.isfinite(obj)
    where = f"thermograms[{tg.id}]"
    if not zone.any():
        raise SurveyError(f"element '{element.name}' has no valid undisturbed pixel",
                          survey_file, where)
    dt = c.indoor_air_c - c.outdoor_air_c
    eps = float(cv.emissivity[reg.mask][0])
    checks = list(survey_checks) + list(cv.checks)
    t_sky, f_sky = flux.sky.get(element.name, (None, None))
    if cv.side == "exterior":
        checks.append(validity.check_night_sky(float(np.mean(obj[zone])), c.outdoor_air_c,
                                               "exterior"))
    cal = _reference_spots(tg, cv.apparent_c, reg.mask)
    offset = cv.offset
    accuracy = camera.accuracy_k
    if offset.std_k is not None and not (cal is not None and cal.has_probe):
        # the offset is removed from the image: what is left of the camera's absolute error is
        # the reference's uncertainty (as a rectangular half-width of equal variance)
        accuracy = offset.std_k * math.sqrt(3.0)
    def estimate(pixels):
        apparent = float(np.average(cv.apparent_c[pixels], weights=cv.area_map_m2[pixels]))
        inputs = uncertainty.UInputs(
            apparent_c=apparent, emissivity=eps,
            u_emissivity=tg.emissivity_uncertainty, reflected_c=tg.reflected_c,
            u_reflected_k=tg.reflected_uncertainty_k, t_ai_c=c.indoor_air_c,
            u_t_ai_k=c.air_uncertainty_k, t_ae_c=c.outdoor_air_c, u_t_ae_k=c.air_uncertainty_k,
            camera_accuracy_k=accuracy, camera_relative_k=camera.relative_accuracy_k,
            transmittance=cv.transmittance, side=cv.side,
            h_c_model=flux.h_c_model[element.name], direction=element.heat_flow,
            wind_m_s=c.wind_m_s, u_wind=c.wind_uncertainty_m_s, height_m=element.height_m,
            t_sky_c=t_sky, f_sky=f_sky if f_sky is not None else 0.5, calibration=cal)
        try:
            return uncertainty.monte_carlo_u(inputs, n_draws=analysis.monte_carlo_draws,
                                             seed=analysis.seed)
        except ValueError as exc:
            raise SurveyError(f"element '{element.name}': {exc}", survey_file, where) from None

    est = estimate(zone)
    whole = whole_mask & np.isfinite(obj)
    est_whole = estimate(whole) if whole.any() else None
    u_valid, u_notes = True, list(notes)
    if any(ch.name == "night_sky" and ch.status == "fail" for ch in checks):
        u_valid = False
        u_notes.insert(0, "not a valid result: the exterior surface is colder than the outdoor "
                          "air (night-sky cooling), so the exterior balance cannot give U; use "
                          "an interior view")
    elif est.u_w_m2k <= 0:
        u_valid = False
        u_notes.insert(0, "not a valid result: the surface balance gives U ≤ 0 — the surface–"
                          "air difference is smaller than the temperature uncertainty; add a "
                          "contact-probe spot or survey on a colder night")
    area = reg.area_m2 if element.area_m2 is None else element.area_m2
    net_px = float(np.sum(cv.area_map_m2[reg.mask]))
    share = float(np.sum(cv.area_map_m2[zone]) / net_px) if net_px > 0 else math.nan
    cal_note = "; ".join(x for x in (offset.source, est.calibration_note if est.calibrated else "")
                         if x) or est.calibration_note
    return ElementResult(
        name=element.name, kind=element.kind, thermogram=tg.id, side=cv.side,
        area_net_m2=area, area_source="survey (measured)" if element.area_m2 is not None
        else f"outline ({tg.id})", emissivity=eps,
        emissivity_source=cv.emissivity_source.get(element.name, ""),
        u_w_m2k=est.u_w_m2k, u_std_w_m2k=est.u_std, u_low95_w_m2k=est.low95,
        u_high95_w_m2k=est.high95,
        u_whole_w_m2k=_whole_u(flux.q_w_m2, cv.area_map_m2, whole_mask, dt),
        u_whole_std_w_m2k=None if est_whole is None else est_whole.u_std,
        u_whole_low95_w_m2k=None if est_whole is None else est_whole.low95,
        u_whole_high95_w_m2k=None if est_whole is None else est_whole.high95,
        undisturbed_share=share, undisturbed_zone=zone_name,
        u_method=f"{cv.side} surface", h_c_model=flux.h_c_model[element.name],
        h_c_w_m2k=flux.h_c_w_m2k[element.name],
        calibrated=est.calibrated or offset.std_k is not None, calibration_note=cal_note,
        budget=tuple((k, float(v)) for k, v in est.budget.items()), u_valid=u_valid,
        u_note="; ".join(u_notes), u_specified_w_m2k=element.u_specified_w_m2k,
        checks=tuple(checks))
