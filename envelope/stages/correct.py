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
           "blackbody_readings", "object_temperatures", "probe_spots", "view_offset", "correct_image",
           "view_tapes", "correct_view"]

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


def probe_spots(tg: Thermogram, apparent_c, eps_map, regions=None,
                survey_file: str = "survey.toml") -> tuple[calibration.ProbeSpot, ...]:
    """The view's contact probes as spots: the camera's 3 × 3 px reading (no offset removed),
    the probe's temperature and uncertainty, and the element under it."""
    spots = []
    for i, p in enumerate(tg.probes):
        where = f"thermograms[{tg.id}].probes[{i}].pixel_xy"
        rc = calibration.spot_pixel(p.pixel_xy, apparent_c.shape)
        if rc is None:
            h, w = apparent_c.shape
            raise SurveyError(f"probe pixel {list(p.pixel_xy)} lies outside the {w}×{h} px "
                              "frame", survey_file, where)
        reading = calibration.spot_mean(apparent_c, *rc)
        if not np.isfinite(reading):
            raise SurveyError("probe pixel has no valid reading around it", survey_file, where)
        element = next((n for n, r in (regions or {}).items() if r.mask[rc]), "")
        spots.append(calibration.ProbeSpot(reading, p.surface_c, p.uncertainty_k,
                                           float(eps_map[rc]), element=element))
    return tuple(spots)


def view_offset(tg: Thermogram, apparent_c, eps_map, tau: float, atm_c: float, camera: Camera,
                survey_file: str, regions=None) -> tuple[calibration.Offset, Thermogram]:
    """The view's camera offset and its thermogram with the reflected temperature as used
    (corrected for the offset when it was read with the same camera)."""
    spots = probe_spots(tg, apparent_c, eps_map, regions, survey_file)
    offset, refl = calibration.view_offset(
        spots, tg.reflected_c, transmittance=tau, atmosphere_c=atm_c, band_um=camera.band_um,
        reflected_by_camera=tg.reflected_by_camera, relative_accuracy_k=camera.relative_accuracy_k,
        noise_k=camera.noise_k, survey_offset_k=camera.offset_k,
        survey_offset_std_k=camera.offset_uncertainty_k)
    if refl != tg.reflected_c:
        tg = dataclasses.replace(tg, reflected_c=refl)
    return offset, tg


def correct_image(readings_c, tg: Thermogram, camera: Camera, conditions: Conditions,
                  emissivity, survey_file: str = "survey.toml", regions=None):
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
    regions : dict of str to ElementRegion, optional
        Element regions: a tape on an element then sets that element's emissivity.

    Returns
    -------
    (object_c, apparent_c, transmittance, atmosphere_c, offset, thermogram, emissivity,
    probes, tapes)
        ``thermogram`` carries the reflected temperature as used; ``emissivity`` is the map
        used (tapes applied); ``probes`` and ``tapes`` the reference spots (`CorrectedView`).
    """
    band = camera.band_um
    eps_map = np.array(np.broadcast_to(np.asarray(emissivity, dtype=np.float32),
                                       readings_c.shape))
    raw = blackbody_readings(readings_c, tg, band)
    tau, atm = path_conditions(tg, conditions, band)
    probes = probe_spots(tg, raw, eps_map, regions, survey_file)
    offset, tg = view_offset(tg, raw, eps_map, tau, atm, camera, survey_file, regions)
    apparent = raw - np.float32(offset.value_k) if offset.value_k else raw
    tapes = view_tapes(tg, raw, apparent, eps_map, regions or {}, offset, tau, atm, camera)
    for name, (_, result) in tapes.items():
        eps_map[regions[name].mask] = result.emissivity
    obj = object_temperatures(apparent, eps_map, tg.reflected_c, tau, atm, band)
    return obj, apparent, tau, atm, offset, tg, eps_map, probes, tapes


def view_tapes(tg: Thermogram, raw_c, apparent_c, eps_map, regions, offset, tau, atm_c,
               camera: Camera) -> dict:
    """Emissivity tapes lying (with the bare spot beside them) on an element of the view.

    Returns
    -------
    dict
        Element name → (TapeSpot of raw readings for the Monte Carlo, TapeEmissivity from the
        offset-corrected readings: the emissivity the image path uses for that element, the
        declared one when the tape was refused for too little contrast).
    """
    out = {}
    for t in tg.tapes:
        rc = calibration.spot_pixel(t.pixel_xy, raw_c.shape)
        rs = calibration.spot_pixel(t.surface_pixel_xy, raw_c.shape)
        if rc is None or rs is None:
            continue
        name = next((n for n, r in regions.items() if r.mask[rc] and r.mask[rs]), None)
        if name is None or name in out:
            continue
        spot_raw = calibration.TapeSpot(calibration.spot_mean(raw_c, *rc),
                                        calibration.spot_mean(raw_c, *rs), t.emissivity)
        spot = calibration.TapeSpot(calibration.spot_mean(apparent_c, *rc),
                                    calibration.spot_mean(apparent_c, *rs), t.emissivity)
        left = (offset.std_k if offset.std_k is not None
                else camera.accuracy_k / np.sqrt(3.0))
        result = calibration.tape_emissivity(
            spot, tg.reflected_c, float(eps_map[rs]), tg.emissivity_uncertainty,
            reflected_std_k=tg.reflected_uncertainty_k, offset_std_k=left,
            reflected_by_camera=tg.reflected_by_camera,
            relative_accuracy_k=camera.relative_accuracy_k, noise_k=camera.noise_k,
            transmittance=tau, atmosphere_c=atm_c, band_um=camera.band_um)
        out[name] = (spot_raw, result)
    return out


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
    obj, apparent, tau, atm, offset, used, eps_map, probes, tapes = correct_image(
        view.readings_c, tg, camera, conditions, eps_map, survey_file, regions)
    for name, (_, result) in tapes.items():
        eps_source[name] = result.note
    checks = [validity.check_view_angle(tg.view_angle_deg)]
    if tg.hours_since_sun is not None:
        checks.append(validity.check_sun(tg.hours_since_sun, tg.side))
    return CorrectedView(used, obj, apparent, eps_map, eps_source, regions, view.outlines, h,
                         area_map, tau, atm, offset, tuple(checks), tg.reflected_c, probes, tapes)
