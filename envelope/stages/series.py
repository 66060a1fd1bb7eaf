"""Stage: a logged night series of one element → U by ISO 9869-1 (average and dynamic).

The frames go through the same correction path as single views (`stages.correct`): the
export settings undone, the view's camera offset removed, the object temperature with the
view's emissivity, transmittance and atmosphere. The element's zone is its undisturbed area
in the assessed view of the same thermogram (sampled when the frames have another size).
The interval comes from the Monte Carlo of the series (`uncertainty.estimate_series_u`):
systematic inputs drawn once per trial, camera and air noise once per frame.
"""

from __future__ import annotations

from dataclasses import replace

import numpy as np

from envelope import convection, dynamic, readings, transmittance, uncertainty, validity
from envelope.errors import SurveyError
from envelope.stages.correct import blackbody_readings, emissivity_of, object_temperatures
from envelope.stages.data import SeriesResult, ViewResult
from envelope.stages.elements import _radiant_c, ensemble_of, view_inputs
from envelope.survey import Analysis, Camera, Conditions, Element
from envelope.views import SeriesData

__all__ = ["series_zone", "series_frames", "assess_series"]


def series_zone(view: ViewResult, element: str, shape) -> np.ndarray:
    """The element's undisturbed pixels of the assessed view (`zones.undisturbed_mask`), in
    frames of `shape`: as they are at the view's size, else sampled at each frame pixel's
    centre (nearest pixel of the view)."""
    mask = view.undisturbed[element]
    base = mask.shape
    if tuple(shape) == tuple(base):
        return mask
    rows = np.minimum(((np.arange(shape[0]) + 0.5) * base[0] / shape[0]).astype(int), base[0] - 1)
    cols = np.minimum(((np.arange(shape[1]) + 0.5) * base[1] / shape[1]).astype(int), base[1] - 1)
    out = mask[np.ix_(rows, cols)]
    if not out.any():
        raise SurveyError(f"element '{element}' has no pixel in frames of {shape[1]}×{shape[0]} px")
    return out


def series_frames(data: SeriesData, view: ViewResult, element: str, band_um, progress=None):
    """Per frame: the zone's mean raw apparent reading (no offset removed) and mean surface
    temperature [°C], through the view's correction path. Frames are read one at a time."""
    cv = view.corrected
    tg = cv.thermogram
    eps = float(cv.emissivity[cv.regions[element].mask][0])
    refl = data.reflected_c if data.reflected_c is not None else np.full(data.n_frames,
                                                                        tg.reflected_c)
    raw_means, t_si = [], []
    shape = mask = None
    labels = data.frame_labels or (data.label,) * data.n_frames
    for i, (frame, label) in enumerate(zip(data.frames(), labels, strict=False)):
        if shape is None:
            shape, mask = frame.shape, series_zone(view, element, frame.shape)
        elif frame.shape != shape:
            raise SurveyError(f"frame shape {frame.shape} differs from the first frame's {shape}",
                              label)
        raw = blackbody_readings(frame, tg, band_um)
        obj = object_temperatures(raw[mask] - np.float32(cv.offset.value_k), eps, refl[i],
                                  cv.transmittance, cv.atmosphere_c, band_um)
        raw_means.append(float(np.nanmean(raw[mask])))
        t_si.append(float(np.nanmean(obj)))
        if progress:
            progress("series")
    if len(t_si) != data.n_frames:
        raise SurveyError(f"got {len(t_si)} frames for {data.n_frames} log rows", data.label)
    return np.array(raw_means), np.array(t_si), np.asarray(refl, float)


def _storage(element: Element, times, t_ai, t_ae, u_w_m2k):
    """Storage check and lag-corrected U when the element's heat capacity is known."""
    c_kj = getattr(element, "heat_capacity_kj_m2k", None)
    if c_kj is None or not (u_w_m2k > 0):
        return None, None
    try:
        tau = dynamic.response_time_h(u_w_m2k=u_w_m2k, heat_capacity_kj_m2k=c_kj)
    except ValueError:
        return None, None
    lag = dynamic.lagged_temperature(times, t_ae, tau)
    check = validity.check_storage(t_ai[-1], t_ae[-1], lag[-1], float(times[-1] - times[0]), tau)
    return check, lag


def assess_series(data: SeriesData, view: ViewResult, element: Element, conditions: Conditions,
                  camera: Camera, analysis: Analysis, progress=None,
                  survey_file: str = "survey.toml") -> SeriesResult:
    """U of one element over a logged night series: ISO 9869-1 average method with its Monte
    Carlo interval, the dynamic method beside it, period and storage checks.

    Parameters
    ----------
    data : SeriesData
        Air log and frame stream (`views.SurveyFolder.open_series`).
    view : ViewResult
        The assessed view of the series' thermogram (its correction, offset and zones).
    element : Element
    conditions, camera, analysis
        Survey inputs.
    progress : callable, optional
        Called with "series" after each frame.
    """
    sr, cv = data.series, view.corrected
    if cv is None or element.name not in cv.regions:
        raise SurveyError(f"element '{element.name}' has no outline in thermogram "
                          f"'{sr.thermogram}'", survey_file, f"series[{sr.id}].element")
    times, t_ai, t_ae = (np.asarray(x, float) for x in (data.times_h, data.indoor_air_c,
                                                         data.outdoor_air_c))
    raw_means, t_si, refl = series_frames(data, view, element.name, camera.band_um, progress)
    eps = float(cv.emissivity[cv.regions[element.name].mask][0])
    ens = ensemble_of(element, analysis)
    h_c = np.array([float(np.mean(convection.ensemble_coefficients(ens, ts, ta)))
                    for ts, ta in zip(t_si, t_ai, strict=True)])
    mrt = _radiant_c(cv.thermogram)
    q = transmittance.heat_flux_interior(t_si, t_ai, refl if data.reflected_c is not None else mrt,
                                         eps, h_c)
    try:
        avg = transmittance.average_method(times, q, t_ai, t_ae)
    except ValueError as exc:
        raise SurveyError(str(exc), data.label, f"series[{sr.id}]") from None
    vin = replace(view_inputs(cv, conditions, camera, analysis),
                  t_ai_c=float(np.mean(t_ai)), t_ae_c=float(np.mean(t_ae)),
                  reflected_c=float(np.mean(refl)))
    zin = readings.ZoneInputs(element.name, float(np.mean(raw_means)),
                              float(emissivity_of(element, cv.thermogram)[0]),
                              cv.thermogram.emissivity_uncertainty,
                              int(view.undisturbed[element.name].sum()), ens)
    est = uncertainty.estimate_series_u(
        vin, zin, readings.SeriesInputs(times, raw_means, t_ai, t_ae,
                                        refl if data.reflected_c is not None else None),
        n_draws=analysis.monte_carlo_draws, seed=analysis.seed)
    checks = list(avg.checks)
    interval = float(np.median(np.diff(times))) if times.size > 1 else None
    checks.append(validity.check_series_period(float(times[-1] - times[0]) + (interval or 0.0),
                                               getattr(element, "heat_capacity_kj_m2k", None),
                                               interval))
    storage, lag = _storage(element, times, t_ai, t_ae, avg.u_w_m2k)
    u_lag = None
    if storage is not None:
        checks.append(storage)
        u_lag = float(transmittance.average_method(times, q, t_ai, lag).u_w_m2k)
    try:
        dyn = dynamic.dynamic_method(times, q, t_ai, t_ae)
    except ValueError as exc:
        dyn, dyn_note = None, f"dynamic method not applicable: {exc}"
    else:
        dyn_note = ""
        checks.extend(dyn.checks)
    return SeriesResult(
        id=sr.id, element=element.name, thermogram=cv.thermogram.id, u_w_m2k=avg.u_w_m2k,
        u_std_w_m2k=est.u_std_w_m2k, u_low95_w_m2k=est.u_low95_w_m2k,
        u_high95_w_m2k=est.u_high95_w_m2k,
        budget=tuple((k, float(v)) for k, v in est.budget.items()),
        camera_offset_k=cv.offset.value_k,
        calibration_note=cv.offset.source or "no camera offset removed: frames carry the "
                                             "camera's absolute accuracy",
        duration_h=avg.duration_h, n_frames=avg.n_samples, converged=avg.converged,
        u_running_w_m2k=tuple(float(x) for x in avg.u_running_w_m2k),
        times_h=tuple(float(x) for x in avg.times_h), checks=tuple(checks),
        u_dynamic_w_m2k=None if dyn is None else dyn.u_w_m2k,
        u_dynamic_low95_w_m2k=None if dyn is None else dyn.u_low95_w_m2k,
        u_dynamic_high95_w_m2k=None if dyn is None else dyn.u_high95_w_m2k,
        u_lag_corrected_w_m2k=u_lag,
        notes=tuple(n for n in (dyn_note, *est.notes) if n))

