"""Stage: one view's readings → corrected surface temperatures on its geometry.

One correction path serves single views, series frames and the `correct` command:
readings as exported → blackbody-equivalent reading (export settings undone) → camera
offset removed → object temperature with the surveyor's emissivity, reflected apparent
temperature, transmittance and atmosphere (`radiometry.object_temperature`).
"""

from __future__ import annotations

import dataclasses
from collections.abc import Mapping

import numpy as np

from envelope import atmosphere, calibration, geometry, materials, radiometry, validity
from envelope.errors import SurveyError
from envelope.stages.data import CorrectedView
from envelope.survey import Camera, Conditions, Element, Thermogram
from envelope.views import ViewData

__all__ = ["DEFAULT_EMISSIVITY", "emissivity_of", "view_homography", "path_conditions",
           "blackbody_readings", "object_temperatures", "view_offset", "correct_image",
           "correct_view"]

DEFAULT_EMISSIVITY = 0.93
"""Used only when neither the element, its material nor the thermogram gives one (painted
plaster and most building materials lie at 0.90–0.95: common practice). Said in the notes."""


def emissivity_of(element: Element, thermogram: Thermogram) -> tuple[float, str]:
    """Emissivity of `element` in `thermogram` [-] and where it came from."""
    if element.name in thermogram.emissivity_by_element:
        return thermogram.emissivity_by_element[element.name], "thermogram"
    if element.emissivity is not None:
        return element.emissivity, "element"
    if element.material is not None:
        return materials.emissivity_for(element.material), f"material {element.material}"
    if thermogram.emissivity_default is not None:
        return thermogram.emissivity_default, "thermogram default"
    return DEFAULT_EMISSIVITY, "default"


def view_homography(tg: Thermogram, shape, survey_file: str) -> geometry.Homography:
    """Pixel → façade-metre map of a view from its reference points or one known length."""
    where = f"thermograms[{tg.id}]"
    if tg.reference_points is not None:
        try:
            return geometry.fit_homography(tg.reference_points.pixel_xy,
                                           tg.reference_points.metre_xy)
        except ValueError as exc:
            detail = getattr(exc, "detail", str(exc))
            raise SurveyError(detail, survey_file, f"{where}.reference_points") from None
    if tg.known_length is not None:
        k = tg.known_length
        try:
            return geometry.scale_homography(k.pixel_a, k.pixel_b, k.length_m, shape)
        except ValueError as exc:
            detail = getattr(exc, "detail", str(exc))
            raise SurveyError(detail, survey_file, f"{where}.known_length") from None
    raise SurveyError("no scale: expected [thermograms.reference_points] (4 or more) or "
                      "[thermograms.known_length]", survey_file, f"{where}.reference_points")


def path_conditions(tg: Thermogram, conditions: Conditions, band_um) -> tuple[float, float]:
    """Atmospheric transmittance [-] and air-path temperature [°C] between camera and surface.

    The declared transmittance, else the water-vapour model over the view's distance at the
    air of its side; the declared atmosphere temperature, else that air temperature.
    """
    interior = tg.side == "interior"
    air = conditions.indoor_air_c if interior else conditions.outdoor_air_c
    rh = conditions.indoor_rh if interior else conditions.outdoor_rh
    if tg.transmittance is not None:
        tau = float(tg.transmittance)
    else:
        tau = float(atmosphere.atmospheric_transmittance(tg.distance_m, air,
                                                         0.6 if rh is None else rh,
                                                         band_um=band_um))
    atm = tg.atmosphere_c if tg.atmosphere_c is not None else air
    return tau, float(atm)


def blackbody_readings(readings_c, tg: Thermogram, band_um) -> np.ndarray:
    """Readings as exported → blackbody-equivalent readings [°C] (export settings undone)."""
    ex = tg.export
    out = radiometry.blackbody_reading(readings_c, ex.emissivity, ex.reflected_c,
                                       ex.transmittance, ex.atmosphere_c, band_um=band_um)
    return np.asarray(out, dtype=np.float32)


def object_temperatures(apparent_c, emissivity, reflected_c, tau, atm_c, band_um) -> np.ndarray:
    """Blackbody-equivalent readings (offset removed) → surface temperatures [°C]."""
    out = radiometry.object_temperature(apparent_c, emissivity, reflected_c, tau, atm_c,
                                        band_um=band_um)
    return np.asarray(out, dtype=np.float32)


def _probe_pixels(tg: Thermogram, apparent_c, survey_file: str):
    rows_cols = []
    for i, p in enumerate(tg.probes):
        rc = calibration.spot_pixel(p.pixel_xy, apparent_c.shape)
        where = f"thermograms[{tg.id}].probes[{i}].pixel_xy"
        if rc is None:
            h, w = apparent_c.shape
            raise SurveyError(f"probe pixel {list(p.pixel_xy)} lies outside the {w}×{h} px "
                              "frame", survey_file, where)
        if not np.isfinite(calibration.spot_mean(apparent_c, *rc)):
            raise SurveyError("probe pixel has no valid reading around it", survey_file, where)
        rows_cols.append(rc)
    return rows_cols


def view_offset(tg: Thermogram, apparent_c, eps_map, tau: float, atm_c: float, camera: Camera,
                survey_file: str) -> tuple[calibration.Offset, Thermogram]:
    """The view's camera offset and its thermogram with the reflected temperature as used.

    Notes
    -----
    With ``reflected_by_camera`` the reflected apparent temperature was read with the same
    camera (reflector method), so it carries the same offset: it is corrected too, and the
    offset found again with the corrected value (two fixed-point steps; the probe's expected
    reading depends on the reflected temperature through (1 − ε) only).
    """
    rows_cols = _probe_pixels(tg, apparent_c, survey_file)
    args = dict(probe_rows_cols=rows_cols, probe_surface_c=[p.surface_c for p in tg.probes],
                probe_std_k=[p.uncertainty_k for p in tg.probes], emissivity_map=eps_map,
                transmittance=tau, atmosphere_c=atm_c, band_um=camera.band_um,
                relative_accuracy_k=camera.relative_accuracy_k,
                survey_offset_k=camera.offset_k,
                survey_offset_std_k=camera.offset_uncertainty_k)
    offset = calibration.camera_offset(apparent_c, reflected_c=tg.reflected_c, **args)
    if tg.reflected_by_camera and offset.value_k:
        declared = tg.reflected_c
        for _ in range(2):
            tg = dataclasses.replace(tg, reflected_c=declared - offset.value_k)
            offset = calibration.camera_offset(apparent_c, reflected_c=tg.reflected_c, **args)
        offset = dataclasses.replace(offset, source=offset.source + (
            f"; reflected temperature read with the same camera: {declared:.2f} → "
            f"{tg.reflected_c:.2f} °C"))
    return offset, tg


def correct_image(readings_c, tg: Thermogram, camera: Camera, conditions: Conditions,
                  emissivity, survey_file: str = "survey.toml"):
    """The radiometric part alone: readings as exported → surface temperatures [°C].

    Parameters
    ----------
    readings_c : ndarray (H, W)
        Readings as exported [°C].
    tg : Thermogram
    camera, conditions
        Survey inputs (band, offset; air temperatures and humidity).
    emissivity : float or ndarray (H, W)
        Emissivity per pixel [-].

    Returns
    -------
    (object_c, apparent_c, transmittance, atmosphere_c, offset, thermogram)
        ``thermogram`` carries the reflected temperature as used.
    """
    band = camera.band_um
    eps_map = np.broadcast_to(np.asarray(emissivity, dtype=np.float32), readings_c.shape)
    apparent = blackbody_readings(readings_c, tg, band)
    tau, atm = path_conditions(tg, conditions, band)
    offset, tg = view_offset(tg, apparent, eps_map, tau, atm, camera, survey_file)
    if offset.value_k:
        apparent = apparent - np.float32(offset.value_k)
    obj = object_temperatures(apparent, eps_map, tg.reflected_c, tau, atm, band)
    return obj, apparent, tau, atm, offset, tg


def correct_view(view: ViewData, elements: Mapping[str, Element], camera: Camera,
                 conditions: Conditions, survey_file: str = "survey.toml") -> CorrectedView:
    """Geometry (homography, element regions, area map, emissivity map) and radiometric
    correction of one view.

    Parameters
    ----------
    view : ViewData
    elements : mapping of str to Element
        The survey's elements (kind, host, emissivity or material).
    camera : Camera
        Band, accuracy and any survey-wide offset.
    conditions : Conditions
        Air temperatures and humidity of the night.
    survey_file : str
        Name of the survey file for messages.

    Returns
    -------
    CorrectedView
    """
    tg = view.thermogram
    shape = view.readings_c.shape
    h = view_homography(tg, shape, survey_file)
    el_spec = {n: (e.kind, e.host) for n, e in elements.items()}
    regions = geometry.element_regions(list(view.outlines), el_spec, shape, h,
                                       source=view.outlines_label)
    if not regions:
        raise SurveyError("the outlines file holds no element outline; draw them with "
                          "`envelope outline`", view.outlines_label, "features")
    area_map = geometry.pixel_area_map(h, shape)
    eps_map = np.full(shape, tg.emissivity_default or DEFAULT_EMISSIVITY, dtype=np.float32)
    eps_source = {}
    for name, reg in regions.items():
        eps, eps_source[name] = emissivity_of(elements[name], tg)
        eps_map[reg.mask] = eps
    obj, apparent, tau, atm, offset, tg = correct_image(view.readings_c, tg, camera, conditions,
                                                        eps_map, survey_file)
    checks = [validity.check_view_angle(tg.view_angle_deg)]
    if tg.hours_since_sun is not None:
        checks.append(validity.check_sun(tg.hours_since_sun, tg.side))
    return CorrectedView(tg, obj, apparent, eps_map, eps_source, regions, view.outlines, h,
                         area_map, tau, atm, offset, tuple(checks))
