"""Stage: a logged night series of one element → U by the ISO 9869-1 average method.

The frames go through the same correction path as single views (`stages.correct`): the
export settings undone, the view's camera offset removed, the object temperature with the
view's emissivity, transmittance and atmosphere. The element's zone is its undisturbed area
in the assessed view of the same thermogram (scaled when the frames have another size).
"""

from __future__ import annotations

import math

import numpy as np

from envelope import uncertainty
from envelope.errors import SurveyError
from envelope.stages.correct import blackbody_readings, object_temperatures
from envelope.stages.data import SeriesResult, ViewResult
from envelope.survey import Analysis, Camera, Conditions, Element
from envelope.transmittance import series_u_from_frames
from envelope.views import SeriesData

__all__ = ["series_zone", "assess_series", "series_uncertainty"]


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


def series_uncertainty(view: ViewResult, element: Element, eps: float, conditions: Conditions,
                       camera: Camera, analysis: Analysis, mean_apparent_c: float,
                       reflected_c, t_ai, t_ae, u_avg: float):
    """Standard uncertainty, 95 % interval and budget of a series U [W/(m²·K)].

    Over a night the pixel noise and the scatter of single frames average out; what stays is
    systematic: emissivity, reflected temperature, the camera's (remaining) offset, the air
    thermometers and the film coefficient. They are propagated by the same Monte Carlo as a
    single thermogram (JCGM 101), at the series' mean conditions, and applied to the series
    U as relative figures (the average method is close to linear in those inputs).
    """
    cv = view.corrected
    tg, offset = cv.thermogram, cv.offset
    accuracy = offset.std_k * math.sqrt(3.0) if offset.std_k is not None else camera.accuracy_k
    inputs = uncertainty.UInputs(
        apparent_c=mean_apparent_c, emissivity=eps, u_emissivity=tg.emissivity_uncertainty,
        reflected_c=float(np.mean(reflected_c)), u_reflected_k=tg.reflected_uncertainty_k,
        t_ai_c=float(np.mean(t_ai)), u_t_ai_k=conditions.air_uncertainty_k,
        t_ae_c=float(np.mean(t_ae)), u_t_ae_k=conditions.air_uncertainty_k,
        camera_accuracy_k=accuracy, camera_relative_k=camera.relative_accuracy_k,
        transmittance=cv.transmittance, side="interior",
        h_c_model=analysis.interior_convection, direction=element.heat_flow,
        height_m=element.height_m)
    est = uncertainty.monte_carlo_u(inputs, n_draws=analysis.monte_carlo_draws, seed=analysis.seed)
    if not (est.u_w_m2k > 0 and math.isfinite(u_avg)):
        return None, None, None, ()
    scale = u_avg / est.u_w_m2k
    return (est.u_std * scale, est.low95 * scale, est.high95 * scale,
            tuple((k, float(v)) for k, v in est.budget.items()))


def assess_series(data: SeriesData, view: ViewResult, element: Element, conditions: Conditions,
                  camera: Camera, analysis: Analysis, progress=None,
                  survey_file: str = "survey.toml") -> SeriesResult:
    """ISO 9869-1 average-method U of one element over a logged night series.

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
    sr = data.series
    cv = view.corrected
    if cv is None or element.name not in cv.regions:
        raise SurveyError(f"element '{element.name}' has no outline in thermogram "
                          f"'{sr.thermogram}'", survey_file, f"series[{sr.id}].element")
    tg = cv.thermogram
    reg = cv.regions[element.name]
    eps = float(cv.emissivity[reg.mask][0])
    band = camera.band_um
    refl = data.reflected_c if data.reflected_c is not None else np.full(data.n_frames,
                                                                        tg.reflected_c)
    state = {"shape": None, "mask": None}
    app_means: list[float] = []

    def frames():
        for i, (readings, label) in enumerate(zip(data.frames(), data.frame_labels
                                                  or [data.label] * data.n_frames, strict=False)):
            if state["shape"] is None:
                state["shape"] = readings.shape
                state["mask"] = series_zone(view, element.name, readings.shape)
            elif readings.shape != state["shape"]:
                raise SurveyError(f"frame shape {readings.shape} differs from the first frame's "
                                  f"{state['shape']}", label)
            app = blackbody_readings(readings, tg, band) - np.float32(cv.offset.value_k)
            app_means.append(float(np.nanmean(app[state["mask"]])))
            if progress:
                progress("series")
            yield object_temperatures(app, eps, refl[i], cv.transmittance, cv.atmosphere_c, band)

    first = next(iter(data.frames()))
    mask = series_zone(view, element.name, first.shape)
    try:
        res = series_u_from_frames(frames(), mask, data.indoor_air_c, data.outdoor_air_c, refl,
                                   eps, analysis.interior_convection, data.times_h,
                                   direction=element.heat_flow, height_m=element.height_m)
    except ValueError as exc:
        if isinstance(exc, SurveyError):
            raise
        raise SurveyError(str(exc), data.label, f"series[{sr.id}]") from None
    std, low, high, budget = series_uncertainty(view, element, eps, conditions, camera, analysis,
                                                float(np.mean(app_means)), refl,
                                                data.indoor_air_c, data.outdoor_air_c,
                                                res.u_w_m2k)
    return SeriesResult(
        id=sr.id, element=element.name, thermogram=tg.id, u_w_m2k=res.u_w_m2k,
        u_std_w_m2k=std, u_low95_w_m2k=low, u_high95_w_m2k=high, budget=budget,
        camera_offset_k=cv.offset.value_k,
        calibration_note=cv.offset.source or "no camera offset removed: frames carry the "
                                             "camera's absolute accuracy",
        duration_h=res.duration_h, n_frames=res.n_samples, converged=res.converged,
        u_running_w_m2k=tuple(float(x) for x in res.u_running_w_m2k),
        times_h=tuple(float(x) for x in res.times_h), checks=tuple(res.checks))
