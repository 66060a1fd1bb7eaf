"""Stage: a corrected view → surface heat flux, then U, uncertainty and fRsi per element.

The heat flux map comes first (the defects are found on it); each element's U is then
taken over its undisturbed area (`envelope.zones.undisturbed_mask`), the same area the
defects' extra heat is measured against, so that H = ΣU·A + Σψ·L counts a defect once.
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Mapping
from dataclasses import dataclass, replace

import numpy as np

from envelope import (
    budget,
    calibration,
    condensation,
    convection,
    films,
    readings,
    transmittance,
    uncertainty,
)
from envelope.errors import EnvelopeWarning, SurveyError
from envelope.stages.correct import emissivity_of
from envelope.stages.data import CorrectedView, ElementResult, SurfaceFlux
from envelope.survey import Analysis, Camera, Climate, Conditions, Element
from envelope.validity import check_night_sky

__all__ = ["DesignConditions", "design_conditions", "ensemble_of", "survey_hour",
           "surface_flux", "frsi_map", "view_inputs", "element_result"]


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


def ensemble_of(element: Element, analysis: Analysis) -> convection.Ensemble:
    """The interior convection ensemble of an element: the correlations that fit its
    orientation and heat-flow direction, or the one model the survey fixes."""
    model = analysis.interior_convection
    return convection.interior_ensemble(
        element.kind, element.heat_flow, height_m=element.height_m, tilt_deg=element.tilt_deg,
        model=None if model == "ensemble" else model)


def survey_hour(tg, conditions: Conditions):
    """Local time of a view [h] (its own ``time``, else the survey's), or None."""
    for text in (getattr(tg, "time", None), getattr(conditions, "time", None)):
        if text:
            hh, mm = str(text).split(":")[:2]
            return int(hh) + int(mm) / 60.0
    return None


def _sky(element: Element, tg, conditions: Conditions, analysis: Analysis):
    c = conditions
    dp = condensation.dew_point(c.outdoor_air_c, c.outdoor_rh if c.outdoor_rh is not None else 0.85)
    hour = survey_hour(tg, c)
    t_sky = float(films.sky_temperature(c.outdoor_air_c, dew_point_c=dp,
                                        cloud_oktas=c.sky_cloud_oktas, model=analysis.sky_model,
                                        hour_local="night" if hour is None else hour))
    f_sky, _ = films.view_factors(element.tilt_deg)
    return t_sky, float(f_sky)


def _radiant_c(tg) -> float:
    """Temperature the surface exchanges long-wave radiation with [°C]: the mean radiant
    temperature when measured, else the reflected apparent temperature."""
    mrt = getattr(tg, "mrt_c", None)
    return float(mrt) if mrt is not None else float(tg.reflected_c)


def surface_flux(cv: CorrectedView, elements: Mapping[str, Element], conditions: Conditions,
                 analysis: Analysis) -> SurfaceFlux:
    """Heat flux through each element's surface [W/m²], NaN outside the elements.

    Interior: q = h_c (T_ai − T_si) + ε σ (T_mrt⁴ − T_si⁴); exterior: the exterior balance
    with sky and ground (`transmittance.heat_flux_interior` / `heat_flux_exterior`). Interior
    h_c is the mean of the element's convection ensemble at the mean temperature of a
    preliminary zone (see `_preliminary_zone`): the correlations describe a whole surface's
    boundary layer, so one coefficient per surface, not one per pixel.
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
        t_zone = float(np.mean(obj[zone]))
        if cv.side == "interior":
            ens = ensemble_of(el, analysis)
            h_c[name] = float(np.mean(convection.ensemble_coefficients(ens, t_zone,
                                                                       c.indoor_air_c)))
            models[name] = (ens.members[0] if len(ens.members) == 1
                             else f"ensemble:{ens.name}")
            q = transmittance.heat_flux_interior(obj, c.indoor_air_c, _radiant_c(cv.thermogram),
                                                 eps, h_c[name])
        else:
            models[name] = analysis.exterior_convection
            h_c[name] = float(films.convective_coefficient(models[name], wind_m_s=c.wind_m_s))
            sky[name] = _sky(el, cv.thermogram, c, analysis)
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


def _camera(camera: Camera, side: str) -> readings.Camera:
    """The Monte Carlo's camera: one offset shared by every view seen from the same side
    (interior views in heated rooms, exterior views in the cold), unless calibrated."""
    known = camera.offset_k is not None
    return readings.Camera(
        id=f"{camera.label or 'camera'}:{side}", accuracy_k=camera.accuracy_k,
        relative_k=camera.relative_accuracy_k, noise_k=camera.noise_k, band_um=camera.band_um,
        offset_k=camera.offset_k if known else 0.0,
        offset_std_k=camera.offset_uncertainty_k if known else None)


def _flux_spot(tg, raw_c, eps_map):
    hfm = getattr(tg, "heat_flux_meter", None)
    if hfm is None:
        return None, ""
    rc = calibration.spot_pixel(hfm.pixel_xy, raw_c.shape)
    apparent = calibration.spot_mean(raw_c, *rc) if rc is not None else None
    return calibration.FluxSpot(hfm.q_w_m2, hfm.q_std_w_m2, apparent_c=apparent,
                                surface_c=getattr(hfm, "surface_c", None),
                                emissivity=float(eps_map[rc]) if rc is not None else None), rc


def view_inputs(cv: CorrectedView, conditions: Conditions, camera: Camera,
                analysis: Analysis) -> readings.ViewInputs:
    """What the view's readings share, for the Monte Carlo (raw readings: the Monte Carlo
    finds the camera offset itself, from the same probes the image path used)."""
    c, tg = conditions, cv.thermogram
    raw = cv.apparent_c + np.float32(cv.offset.value_k)
    flux, flux_rc = _flux_spot(tg, raw, cv.emissivity)
    flux_element = ""
    if flux is not None and flux_rc is not None:
        flux_element = next((n for n, r in cv.regions.items() if r.mask[flux_rc]), "")
    tape_element, tape = next(((n, spot) for n, (spot, res) in cv.tapes.items()
                               if res.accepted), ("", None))
    mrt = getattr(tg, "mrt_c", None)
    return readings.ViewInputs(
        view_id=tg.id, t_ai_c=c.indoor_air_c, t_ae_c=c.outdoor_air_c,
        reflected_c=cv.reflected_declared_c, camera=_camera(camera, cv.side), side=cv.side,
        t_ai_std_k=c.air_uncertainty_k, t_ae_std_k=c.air_uncertainty_k,
        reflected_std_k=tg.reflected_uncertainty_k, reflected_by_camera=tg.reflected_by_camera,
        mrt_c=mrt, mrt_std_k=getattr(tg, "mrt_std_k", None) or 0.0,
        transmittance=cv.transmittance, atmosphere_c=cv.atmosphere_c, probes=cv.probes,
        tape=tape, tape_element=tape_element, flux=flux, flux_element=flux_element,
        wind_m_s=c.wind_m_s, wind_std_m_s=c.wind_uncertainty_m_s,
        exterior_convection=(analysis.exterior_convection,))


def _whole_u(q_w_m2, area_map, mask, dt: float) -> float:
    valid = mask & np.isfinite(q_w_m2)
    if not valid.any():
        return math.nan
    return float(np.sum(q_w_m2[valid] * area_map[valid]) / (np.sum(area_map[valid]) * dt))


def element_result(cv: CorrectedView, flux: SurfaceFlux, vin: readings.ViewInputs,
                   element: Element, undisturbed, whole_mask, zone_name: str,
                   conditions: Conditions, analysis: Analysis, survey_checks,
                   survey_file: str = "survey.toml", notes: tuple[str, ...] = ()):
    """U with its Monte Carlo interval over the undisturbed area, and over the whole area.

    Parameters
    ----------
    cv, flux : CorrectedView, SurfaceFlux
    vin : readings.ViewInputs
        What the view's readings share (`view_inputs`).
    element : Element
    undisturbed : ndarray of bool
        The element's undisturbed pixels (`envelope.zones.undisturbed_mask`).
    whole_mask : ndarray of bool
        The pixels the whole-area U is taken over (net area, warm spots left out).
    zone_name : str
        What `undisturbed` is, in words.
    conditions, analysis
        Survey inputs used.
    survey_checks : sequence of Check
        Checks of the night; the view's and the element's own are added.

    Returns
    -------
    (ElementResult, ndarray)
        The result and the per-trial U draws of the undisturbed area (for H).
    """
    c, tg, reg = conditions, cv.thermogram, cv.regions[element.name]
    obj = cv.object_c
    zone = undisturbed & np.isfinite(obj)
    where = f"thermograms[{tg.id}]"
    if not zone.any():
        raise SurveyError(f"element '{element.name}' has no valid undisturbed pixel",
                          survey_file, where)
    dt = c.indoor_air_c - c.outdoor_air_c
    checks = list(survey_checks) + list(cv.checks)
    if cv.side == "exterior":
        checks.append(check_night_sky(float(np.mean(obj[zone])), c.outdoor_air_c, "exterior"))
        t_sky, f_sky = flux.sky[element.name]
        vin = replace(vin, t_sky_c=t_sky, f_sky=f_sky)
    raw = cv.apparent_c + np.float32(cv.offset.value_k)
    ens = ensemble_of(element, analysis) if cv.side == "interior" else 1.0
    eps_prior = float(emissivity_of(element, tg)[0])  # before any tape: the MC applies it

    def estimate(pixels, with_budget):
        zin = readings.ZoneInputs(
            element.name, float(np.average(raw[pixels], weights=cv.area_map_m2[pixels])),
            eps_prior, tg.emissivity_uncertainty, int(pixels.sum()), ens)
        try:
            return uncertainty.estimate_u(vin, zin, n_draws=analysis.monte_carlo_draws,
                                          seed=analysis.seed, budget=with_budget,
                                          keep_draws=with_budget)
        except ValueError as exc:
            raise SurveyError(f"element '{element.name}': {exc}", survey_file, where) from None

    est = estimate(zone, True)
    whole = whole_mask & np.isfinite(obj)
    est_whole = estimate(whole, False) if whole.any() else None
    checks.append(est.surface_air)
    u_valid, u_notes = True, list(notes) + list(est.notes)
    if any(ch.name == "night_sky" and ch.status == "fail" for ch in checks):
        u_valid = False
        u_notes.insert(0, "not a valid result: the exterior surface is colder than the outdoor "
                          "air (night-sky cooling), so the exterior balance cannot give U; use "
                          "an interior view")
    elif not est.u_w_m2k > 0:
        u_valid = False
        u_notes.insert(0, "not a valid result: the surface balance gives U ≤ 0 — the surface–"
                          "air difference is smaller than the temperature uncertainty; add a "
                          "contact-probe spot or survey on a colder night")
    area = reg.area_m2 if element.area_m2 is None else element.area_m2
    net_px = float(np.sum(cv.area_map_m2[reg.mask]))
    share = float(np.sum(cv.area_map_m2[zone]) / net_px) if net_px > 0 else math.nan
    advice = budget.narrowing_advice(est.budget, delta_t_k=dt)
    cal_note = "; ".join(x for x in (cv.offset.source, cv.emissivity_source.get(element.name, "")
                                     if element.name in cv.tapes else "") if x)
    w = est_whole
    res = ElementResult(
        name=element.name, kind=element.kind, thermogram=tg.id, side=cv.side,
        label=getattr(element, "label", None), area_net_m2=area, area_source="survey (measured)" if element.area_m2 is not None
        else f"outline ({tg.id})", emissivity=est.emissivity,
        emissivity_source=cv.emissivity_source.get(element.name, ""),
        u_w_m2k=est.u_w_m2k, u_std_w_m2k=est.u_std_w_m2k, u_low95_w_m2k=est.u_low95_w_m2k,
        u_high95_w_m2k=est.u_high95_w_m2k,
        u_env_w_m2k=est.u_env_w_m2k, u_env_low95_w_m2k=est.u_env_low95_w_m2k,
        u_env_high95_w_m2k=est.u_env_high95_w_m2k,
        u_whole_w_m2k=_whole_u(flux.q_w_m2, cv.area_map_m2, whole_mask, dt),
        u_whole_std_w_m2k=None if w is None else w.u_std_w_m2k,
        u_whole_low95_w_m2k=None if w is None else w.u_low95_w_m2k,
        u_whole_high95_w_m2k=None if w is None else w.u_high95_w_m2k,
        u_whole_env_w_m2k=None if w is None else w.u_env_w_m2k,
        u_whole_env_low95_w_m2k=None if w is None else w.u_env_low95_w_m2k,
        u_whole_env_high95_w_m2k=None if w is None else w.u_env_high95_w_m2k,
        undisturbed_share=share, undisturbed_zone=zone_name,
        u_method=f"{cv.side} surface", h_c_model=flux.h_c_model[element.name],
        h_c_w_m2k=est.h_c_w_m2k, h_c_std_w_m2k=est.h_c_std_w_m2k,
        calibrated=est.calibrated or bool(cv.tapes.get(element.name, (None, None))[1]
                                          and cv.tapes[element.name][1].accepted),
        calibration_note=cal_note or ("no reference spot: the camera's absolute accuracy "
                                      f"(±{vin.camera.accuracy_k:g} K) applies"),
        budget=tuple((k, float(v)) for k, v in est.budget.items()),
        narrowing=tuple((a.contributor, a.share, a.remedy) for a in advice),
        u_valid=u_valid, u_note="; ".join(u_notes), u_specified_w_m2k=element.u_specified_w_m2k,
        u_specified_basis=getattr(element, "u_specified_basis", "environmental"),
        checks=tuple(checks))
    return res, est.draws
