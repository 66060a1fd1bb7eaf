"""The pipeline: a loaded survey → an `Assessment` (pure stages called in order).

Stages (SPEC §2): radiometric correction → geometry (homography, element regions, area map)
→ surface heat flux and U per pixel and per element (Monte Carlo uncertainty) → temperature
factor and condensation / mould risk → defects → heat loss, retrofit case and builder
verdicts. Pixel files are read here through `survey.load_pixels`; nothing is written.
A thermogram that fails with a user error is listed in ``failures``; the others go on.
"""

from __future__ import annotations

import contextlib
import dataclasses
import math
import time
import warnings
from collections.abc import Callable
from dataclasses import dataclass, field

import numpy as np

from . import condensation, energy, films, geometry, radiometry, transmittance, validity
from .errors import EnvelopeWarning, SurveyError
from .survey import Survey, Thermogram, load_air_log, load_pixels

DEFAULT_EMISSIVITY = 0.93
"""Used only when neither the element, its material nor the thermogram gives one (painted
plaster and most building materials lie at 0.90–0.95: common practice). Flagged in notes."""


@dataclass
class ElementResult:
    name: str
    kind: str
    thermogram: str
    side: str
    area_net_m2: float
    area_source: str
    emissivity: float
    u_w_m2k: float
    u_std_w_m2k: float
    u_low95_w_m2k: float
    u_high95_w_m2k: float
    u_whole_w_m2k: float
    u_method: str
    h_c_model: str
    h_c_w_m2k: float
    calibrated: bool
    calibration_note: str
    budget: list
    u_valid: bool = True
    u_note: str = ""
    frsi_min: float | None = None
    frsi_p05: float | None = None
    risk: str | None = None
    risk_note: str = ""
    t_si_design_c: float | None = None
    rh_si_design: float | None = None
    u_specified_w_m2k: float | None = None
    verdict: str | None = None
    verdict_reason: str = ""
    coverage_share: float | None = None
    checks: list = field(default_factory=list)


@dataclass
class ThermogramResult:
    thermogram: Thermogram
    status: str
    error: str | None = None
    object_c: np.ndarray | None = None
    frsi: np.ndarray | None = None
    regions: dict = field(default_factory=dict)
    outlines: list = field(default_factory=list)
    homography: object | None = None
    transmittance: float | None = None
    elements: list = field(default_factory=list)
    defects: list = field(default_factory=list)
    checks: list = field(default_factory=list)
    paired_with: str | None = None
    offset: Offset | None = None
    u_map: np.ndarray | None = None


@dataclass
class Assessment:
    survey: Survey
    checks: list
    limit_mould: object | None
    limit_condensation: object | None
    thermograms: list
    elements: list
    defects: list
    heat_loss: dict | None
    measures: list
    package: dict | None
    series: list
    failures: list
    notes: list


Progress = Callable[[str], None]


class StageClock:
    """Wall time per pipeline stage [s] (for the benchmarks; costs nothing when unused)."""

    def __init__(self):
        self.seconds: dict[str, float] = {}

    @contextlib.contextmanager
    def stage(self, name: str):
        t0 = time.perf_counter()
        try:
            yield
        finally:
            self.seconds[name] = self.seconds.get(name, 0.0) + time.perf_counter() - t0


_NO_CLOCK = StageClock()


# --------------------------------------------------------------------------- survey level
def survey_checks(survey: Survey) -> list:
    c = survey.conditions
    checks = [validity.check_delta_t(c.indoor_air_c, c.outdoor_air_c),
              validity.check_wind(c.wind_m_s), validity.check_rain(c.rain, c.hours_since_rain)]
    if c.outdoor_history_c:
        checks.append(validity.check_drift(c.outdoor_history_c, c.history_interval_h,
                                           name="outdoor drift"))
    if c.indoor_history_c:
        checks.append(validity.check_drift(c.indoor_history_c, c.history_interval_h,
                                           name="indoor drift"))
    return checks


def frsi_limits(survey: Survey):
    """(mould, condensation) `FrsiLimit` for the survey's climate, or (None, None) with a note."""
    cl = survey.climate
    if cl.frsi_criterion != "iso13788":
        lim = condensation.fixed_limit(cl.frsi_criterion)
        return lim, lim, f"fRsi limit: fixed criterion {cl.frsi_criterion} ({lim.value:.2f})"
    if cl.monthly_outdoor_c is None or cl.monthly_outdoor_rh is None:
        return None, None, ("no monthly climate in the survey ([climate] monthly_outdoor_c and "
                            "monthly_outdoor_rh): fRsi is reported without a limit")
    t_i = cl.monthly_indoor_c or (cl.design_indoor_c or survey.conditions.indoor_air_c,) * 12
    hum = condensation.IndoorHumidity(
        cl.indoor_humidity, rh=cl.indoor_rh, humidity_class=cl.humidity_class,
        moisture_kg_h=cl.moisture_kg_h, air_changes_per_h=cl.air_changes_per_h,
        volume_m3=cl.volume_m3)
    try:
        mould = condensation.frsi_min(cl.monthly_outdoor_c, cl.monthly_outdoor_rh, t_i, hum, 0.8)
        cond = condensation.frsi_min(cl.monthly_outdoor_c, cl.monthly_outdoor_rh, t_i, hum, 1.0)
    except ValueError as exc:
        if isinstance(exc, SurveyError):
            raise
        raise SurveyError(str(exc), survey.file.name, "climate") from None
    return mould, cond, None


# --------------------------------------------------------------------------- one thermogram
def emissivity_of(survey: Survey, tg: Thermogram, name: str) -> tuple[float, str]:
    """Emissivity of element `name` in thermogram `tg` and where it came from."""
    el = survey.elements[name]
    if name in tg.emissivity_by_element:
        return tg.emissivity_by_element[name], "thermogram"
    if el.emissivity is not None:
        return el.emissivity, "element"
    if el.material is not None:
        return radiometry.emissivity_for(el.material), f"material {el.material}"
    if tg.emissivity_default is not None:
        return tg.emissivity_default, "thermogram default"
    return DEFAULT_EMISSIVITY, "default"


def _homography(tg: Thermogram, shape, label: str):
    if tg.reference_points is not None:
        try:
            return geometry.fit_homography(tg.reference_points.pixel_xy, tg.reference_points.metre_xy)
        except SurveyError as exc:
            raise SurveyError(exc.detail, label, "reference_points") from None
    if tg.known_length is not None:
        k = tg.known_length
        return geometry.scale_homography(k.pixel_a, k.pixel_b, k.length_m, shape)
    raise SurveyError("no scale: expected [thermograms.reference_points] (4 or more) or "
                      "[thermograms.known_length]", label, "reference_points")


@dataclass(frozen=True)
class Offset:
    """Camera offset removed from a thermogram's apparent temperatures [K].

    ``value_k`` is what the camera read too warm (positive) at the reference; ``u_k`` the
    standard uncertainty left after the correction; ``source`` says where it came from.
    """

    value_k: float = 0.0
    u_k: float | None = None
    source: str = ""


def _patch_mean(img, row: int, col: int) -> float:
    """Mean of the 3 × 3 px patch around a marked pixel (NaN-aware): one spot reading."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)  # an all-NaN patch gives NaN
        return float(np.nanmean(img[max(row - 1, 0): row + 2, max(col - 1, 0): col + 2]))


def camera_offset(survey: Survey, tg: Thermogram, apparent_c, eps_map, tau, atm) -> Offset:
    """The camera's offset from the thermogram's contact-probe spots (their mean), else the
    survey's ``[camera] offset_k``, else none.

    Notes
    -----
    At a probe the expected apparent temperature follows from the measurement equation with
    the probe's surface temperature; the offset is measured − expected (3 × 3 px mean). The
    camera's offset is one number per image (its absolute error), so it is removed from every
    pixel; what is left is the probe's uncertainty and the camera's relative accuracy
    (rectangular, ±``relative_accuracy_k``).
    """
    band = survey.camera.band_um
    deltas, u_probe = [], []
    h, w = apparent_c.shape
    for i, p in enumerate(tg.probes):
        col, row = int(math.floor(p.pixel_xy[0])), int(math.floor(p.pixel_xy[1]))
        if not (0 <= row < h and 0 <= col < w):
            raise SurveyError(f"probe pixel {list(p.pixel_xy)} lies outside the {w}×{h} px frame",
                              survey.file.name, f"thermograms[{tg.id}].probes[{i}].pixel_xy")
        measured = _patch_mean(apparent_c, row, col)
        if not math.isfinite(measured):
            raise SurveyError("probe pixel has no valid reading around it", survey.file.name,
                              f"thermograms[{tg.id}].probes[{i}].pixel_xy")
        expected = float(radiometry.apparent_temperature(p.surface_c, float(eps_map[row, col]),
                                                         tg.reflected_c, tau, atm, band_um=band))
        deltas.append(measured - expected)
        u_probe.append(p.uncertainty_k)
    rel = survey.camera.relative_accuracy_k / math.sqrt(3.0)
    if deltas:
        u = math.sqrt(float(np.mean(np.square(u_probe))) / len(u_probe) + rel**2)
        return Offset(float(np.mean(deltas)), u,
                      f"contact probe{'s' if len(deltas) > 1 else ''} in this thermogram: camera read "
                      f"{np.mean(deltas):+.2f} K, removed")
    cam = survey.camera
    if cam.offset_k is not None:
        u = math.sqrt(cam.offset_uncertainty_k**2 + rel**2)
        return Offset(cam.offset_k, u, f"survey camera offset {cam.offset_k:+.2f} K removed")
    return Offset()


@dataclass
class Corrected:
    """One thermogram after radiometric correction and geometry.

    ``thermogram`` is the survey's entry with its reflected temperature as used (offset
    removed when it was read with the same camera); ``apparent_c`` is the blackbody-
    equivalent reading after the camera offset was removed.
    """

    thermogram: Thermogram
    object_c: np.ndarray
    apparent_c: np.ndarray
    regions: dict
    homography: object
    outlines: list
    emissivity: np.ndarray
    transmittance: float
    atmosphere_c: float
    offset: Offset


def _correct(survey: Survey, tg: Thermogram, readings: np.ndarray, eps_map: np.ndarray):
    """Readings as exported → object temperature [°C].

    Returns ``(object_c, apparent_c, tau, atmosphere_c, offset, thermogram)``.

    Notes
    -----
    With ``reflected_by_camera`` the reflected apparent temperature was read with the same
    camera (reflector method), so it carries the same offset: it is corrected too, and the
    offset is found again with the corrected value (one fixed-point step; the probe's
    expected reading depends on the reflected temperature through (1 − ε) only).
    """
    band = survey.camera.band_um
    ex = tg.export
    apparent = radiometry.blackbody_reading(readings, ex.emissivity, ex.reflected_c,
                                            ex.transmittance, ex.atmosphere_c, band_um=band)
    apparent = np.asarray(apparent, dtype=np.float32)
    c = survey.conditions
    air = c.indoor_air_c if tg.side == "interior" else c.outdoor_air_c
    rh = (c.indoor_rh if tg.side == "interior" else c.outdoor_rh)
    if tg.transmittance is not None:
        tau = tg.transmittance
    else:
        tau = float(radiometry.atmospheric_transmittance(tg.distance_m, air, 0.6 if rh is None else rh,
                                                         band_um=band))
    atm = tg.atmosphere_c if tg.atmosphere_c is not None else air
    offset = camera_offset(survey, tg, apparent, eps_map, tau, atm)
    if tg.reflected_by_camera and offset.value_k:
        declared = tg.reflected_c
        for _ in range(2):
            tg = dataclasses.replace(tg, reflected_c=declared - offset.value_k)
            offset = camera_offset(survey, tg, apparent, eps_map, tau, atm)
        offset = dataclasses.replace(offset, source=offset.source + (
            f"; reflected temperature read with the same camera: {declared:.2f} → "
            f"{tg.reflected_c:.2f} °C"))
    if offset.value_k:
        apparent = apparent - np.float32(offset.value_k)
    obj = radiometry.object_temperature(apparent, eps_map, tg.reflected_c, tau, atm, band_um=band)
    return np.asarray(obj, dtype=np.float32), apparent, tau, atm, offset, tg


def correct_thermogram(survey: Survey, tg: Thermogram, clock: StageClock = _NO_CLOCK) -> Corrected:
    """Read one thermogram, build its geometry (homography, element regions, emissivity
    map) and correct it radiometrically."""
    with clock.stage("load"):
        label = str(tg.file.relative_to(survey.root))
        readings = load_pixels(tg.file, label)
        shape = readings.shape
        olabel = str(tg.outlines.relative_to(survey.root))
        outlines = geometry.read_outlines(tg.outlines, shape, tuple(survey.elements))
    with clock.stage("geometry"):
        h = _homography(tg, shape, survey.file.name + f": thermograms[{tg.id}]")
        el_spec = {n: (e.kind, e.host) for n, e in survey.elements.items()}
        regions = geometry.element_regions(outlines, el_spec, shape, h, source=olabel)
        eps_map = np.full(shape, tg.emissivity_default or DEFAULT_EMISSIVITY, dtype=np.float32)
        for name, reg in regions.items():
            eps_map[reg.mask] = emissivity_of(survey, tg, name)[0]
    with clock.stage("correct"):
        obj, apparent, tau, atm, offset, tg = _correct(survey, tg, readings, eps_map)
    return Corrected(tg, obj, apparent, regions, h, outlines, eps_map, tau, atm, offset)


def _zone(reg) -> np.ndarray:
    if reg.reference_mask is not None and reg.reference_mask.any():
        return reg.reference_mask
    return reg.mask


def _h_c(survey: Survey, el, side: str, t_s_c: float, t_a_c: float) -> tuple[float, str]:
    a = survey.analysis
    if side == "interior":
        model = a.interior_convection
        h = films.convective_coefficient(model, direction=el.heat_flow, t_s_c=t_s_c, t_a_c=t_a_c,
                                         height_m=el.height_m)
    else:
        model = a.exterior_convection
        h = films.convective_coefficient(model, wind_m_s=survey.conditions.wind_m_s)
    return float(h), model


def _sky(survey: Survey, el):
    c = survey.conditions
    dp = condensation.dew_point(c.outdoor_air_c, c.outdoor_rh if c.outdoor_rh is not None else 0.85)
    t_sky = float(films.sky_temperature(c.outdoor_air_c, dew_point_c=dp,
                                        cloud_oktas=c.sky_cloud_oktas, model=survey.analysis.sky_model))
    f_sky, _ = films.view_factors(el.tilt_deg)
    return t_sky, float(f_sky)


def assess_element(survey: Survey, tg: Thermogram, reg, obj, apparent, eps, tau, atm,
                   limits, area_map, checks, offset: Offset = Offset()) -> tuple[ElementResult, np.ndarray]:
    """U, uncertainty, fRsi and verdict for one element in one thermogram; returns the
    result and the per-pixel heat-flux map [W/m²] (NaN outside the element)."""
    from . import uncertainty

    c = survey.conditions
    el = survey.elements[reg.name]
    zone = _zone(reg) & np.isfinite(obj)
    if not zone.any():
        raise SurveyError(f"element '{reg.name}' has no valid pixel", tg.file.name, reg.name)
    t_zone = float(np.mean(obj[zone]))
    dt = c.indoor_air_c - c.outdoor_air_c
    t_air_side = c.indoor_air_c if tg.side == "interior" else c.outdoor_air_c
    h_c, model = _h_c(survey, el, tg.side, t_zone, t_air_side)
    el_checks = list(checks)
    if tg.side == "interior":
        q = transmittance.heat_flux_interior(obj, c.indoor_air_c, tg.reflected_c, eps, h_c)
        t_sky, f_sky = None, None
    else:
        t_sky, f_sky = _sky(survey, el)
        q = transmittance.heat_flux_exterior(obj, c.outdoor_air_c, eps, h_c, t_sky_c=t_sky,
                                             t_ground_c=films.ground_temperature(c.outdoor_air_c),
                                             f_sky=f_sky)
        el_checks.append(validity.check_night_sky(t_zone, c.outdoor_air_c, "exterior"))
    q = np.where(reg.mask, np.asarray(q, dtype=float), np.nan)
    valid = reg.mask & np.isfinite(q)
    u_whole = float(np.nansum(q[valid] * area_map[valid]) / (np.sum(area_map[valid]) * dt))

    cal = _calibration(tg, obj, apparent, reg)
    accuracy = survey.camera.accuracy_k
    if offset.u_k is not None and not (cal is not None and cal.has_probe):
        # the offset is removed from the image: what is left of the camera's absolute error is
        # the reference's uncertainty (as a rectangular half-width of equal variance)
        accuracy = offset.u_k * math.sqrt(3.0)
    inputs = uncertainty.UInputs(
        apparent_c=float(np.mean(apparent[zone])), emissivity=eps,
        u_emissivity=tg.emissivity_uncertainty, reflected_c=tg.reflected_c,
        u_reflected_k=tg.reflected_uncertainty_k, t_ai_c=c.indoor_air_c,
        u_t_ai_k=c.air_uncertainty_k, t_ae_c=c.outdoor_air_c, u_t_ae_k=c.air_uncertainty_k,
        camera_accuracy_k=accuracy,
        camera_relative_k=survey.camera.relative_accuracy_k, transmittance=tau,
        side=tg.side, h_c_model=model, direction=el.heat_flow,
        wind_m_s=c.wind_m_s, u_wind=c.wind_uncertainty_m_s, height_m=el.height_m,
        t_sky_c=t_sky, f_sky=f_sky if f_sky is not None else 0.5, calibration=cal,
    )
    est = uncertainty.monte_carlo_u(inputs, n_draws=survey.analysis.monte_carlo_draws,
                                    seed=survey.analysis.seed)
    u_valid, u_note = True, ""
    if any(ch.name == "night_sky" and ch.status == "fail" for ch in el_checks):
        u_valid = False
        u_note = ("not a valid result: the exterior surface is colder than the outdoor air "
                  "(night-sky cooling), so the exterior balance cannot give U; use an interior view")
    elif est.u_w_m2k <= 0:
        u_valid = False
        u_note = ("not a valid result: the surface balance gives U ≤ 0 — the surface–air "
                  "difference is smaller than the temperature uncertainty; add a contact-probe "
                  "spot or survey on a colder night")
    area = reg.area_m2 if el.area_m2 is None else el.area_m2
    res = ElementResult(
        name=reg.name, kind=el.kind, thermogram=tg.id, side=tg.side, area_net_m2=area,
        area_source="survey (measured)" if el.area_m2 is not None else f"outline ({tg.id})",
        emissivity=float(eps), u_w_m2k=est.u_w_m2k, u_std_w_m2k=est.u_std,
        u_low95_w_m2k=est.low95, u_high95_w_m2k=est.high95, u_whole_w_m2k=u_whole,
        u_method=f"{tg.side} surface", h_c_model=model, h_c_w_m2k=h_c,
        calibrated=est.calibrated or offset.u_k is not None,
        calibration_note="; ".join(x for x in (offset.source, est.calibration_note if est.calibrated else "") if x)
        or est.calibration_note,
        budget=[{"input": k, "share": float(v)} for k, v in est.budget.items()],
        u_valid=u_valid, u_note=u_note, u_specified_w_m2k=el.u_specified_w_m2k,
        checks=el_checks,
    )
    return res, q


def _calibration(tg: Thermogram, obj, apparent, reg):
    """Reference-spot calibration data for the element, if a probe or tape lies on it."""
    from . import uncertainty

    def inside(xy):
        col, row = int(math.floor(xy[0])), int(math.floor(xy[1]))
        if 0 <= row < reg.mask.shape[0] and 0 <= col < reg.mask.shape[1] and reg.mask[row, col]:
            return row, col
        return None

    def patch(img, rc):
        return _patch_mean(img, rc[0], rc[1])

    kw = {}
    for p in tg.probes:
        rc = inside(p.pixel_xy)
        if rc is not None:
            kw.update(probe_surface_c=p.surface_c, u_probe_k=p.uncertainty_k,
                      probe_apparent_c=patch(apparent, rc))
            break
    for t in tg.tapes:
        rc, rs = inside(t.pixel_xy), inside(t.surface_pixel_xy)
        if rc is not None and rs is not None:
            kw.update(tape_apparent_c=patch(apparent, rc), tape_emissivity=t.emissivity,
                      surface_next_to_tape_apparent_c=patch(apparent, rs))
            break
    return uncertainty.Calibration(**kw) if kw else None


def frsi_verdict(res: ElementResult, frsi_values, survey: Survey, limits):
    mould, cond = limits
    if mould is None or frsi_values.size == 0:
        return
    cl = survey.climate
    t_i = cl.design_indoor_c if cl.design_indoor_c is not None else survey.conditions.indoor_air_c
    crit = mould.critical_month - 1 if getattr(mould, "critical_month", None) else 0
    if cl.monthly_outdoor_c is not None:
        t_e = cl.monthly_outdoor_c[crit]
    else:
        t_e = cl.design_outdoor_c if cl.design_outdoor_c is not None else survey.conditions.outdoor_air_c
    rh_i = _design_rh(survey, mould, crit)
    if res.kind == "window":
        # glazing and frames do not feed mould the way opaque surfaces do; what matters on
        # them is surface condensation (critical surface humidity 1.0) — common practice
        mould = cond
        res.risk_note = "glazing: judged against the condensation limit only"
    v = condensation.assess_frsi(frsi_values, mould, cond, t_i, t_e, rh_i)
    res.frsi_min, res.frsi_p05, res.risk = v.frsi_min, v.frsi_p05, v.risk
    res.t_si_design_c, res.rh_si_design = v.t_si_design_c, v.rh_si_design


def _design_rh(survey: Survey, limit, month_index: int) -> float:
    pm = getattr(limit, "p_i_pa", None)
    if pm is not None and np.ndim(pm) and np.isfinite(pm[month_index]):
        cl = survey.climate
        t_i = (cl.monthly_indoor_c or (cl.design_indoor_c or survey.conditions.indoor_air_c,) * 12)[month_index]
        return float(condensation.relative_humidity(t_i, pm[month_index]))
    return survey.conditions.indoor_rh if survey.conditions.indoor_rh is not None else 0.5


def assess_thermogram(survey: Survey, tg: Thermogram, limits, survey_chk, pair=None,
                      clock: StageClock = _NO_CLOCK) -> ThermogramResult:
    """Everything one thermogram gives: corrected image, element U, fRsi, defects."""
    from . import defects as defects_mod

    c = survey.conditions
    cor = correct_thermogram(survey, tg, clock)
    tg = cor.thermogram
    obj, regions, h, outlines = cor.object_c, cor.regions, cor.homography, cor.outlines
    tau, apparent, atm, offset = cor.transmittance, cor.apparent_c, cor.atmosphere_c, cor.offset
    out = ThermogramResult(tg, "assessed", object_c=obj, regions=regions, outlines=outlines,
                           homography=h, transmittance=tau, offset=offset)
    checks = [validity.check_view_angle(tg.view_angle_deg)]
    if tg.hours_since_sun is not None:
        checks.append(validity.check_sun(tg.hours_since_sun, tg.side))
    out.checks = checks
    with clock.stage("geometry"):
        area_map = geometry.pixel_area_map(h, obj.shape)
    dt = c.indoor_air_c - c.outdoor_air_c
    if dt <= 0:
        raise SurveyError("indoor air is not warmer than outdoor air; no heat flows outwards",
                          survey.file.name, "conditions.indoor_air_c")
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", EnvelopeWarning)
        frsi = np.asarray(condensation.temperature_factor(obj, c.indoor_air_c, c.outdoor_air_c),
                          dtype=np.float32) if tg.side == "interior" else None
    out.frsi = frsi
    q_map = np.full(obj.shape, np.nan)
    for name, reg in regions.items():
        eps = emissivity_of(survey, tg, name)[0]
        with clock.stage("u_and_uncertainty"):
            res, q = assess_element(survey, tg, reg, obj, apparent, eps, tau, atm, limits,
                                    area_map, checks, offset)
            q_map = np.where(reg.mask, q, q_map)
        with clock.stage("condensation"):
            if frsi is not None:
                vals = frsi[reg.mask & np.isfinite(frsi)]
                frsi_verdict(res, vals, survey, limits)
        out.elements.append(res)
    # defects (interior: cold anomalies of fRsi; exterior: warm anomalies)
    f_map = frsi if frsi is not None else np.asarray(
        (obj - c.outdoor_air_c) / dt, dtype=np.float32)
    u_rel = {e.name: defect_relative_uncertainty(survey, obj, regions[e.name], c, tg.side)
             for e in out.elements}
    settings = defects_mod.DefectSettings(delta_f=survey.analysis.defect_threshold,
                                          min_area_m2=survey.analysis.defect_min_area_m2)
    lim = (limits[0].value if limits[0] is not None else None,
           limits[1].value if limits[1] is not None else None)
    out.u_map = np.where(np.isfinite(q_map), q_map / dt, np.nan).astype(np.float32)
    with clock.stage("defects"):
        out.defects = defects_mod.find_defects(
            obj, f_map, q_map, area_map, regions, tg.side, dt, _hdd(survey),
            limits=lim, settings=settings, pair=pair, u_rel_std=u_rel, thermogram_id=tg.id)
    for res in out.elements:
        res.coverage_share = _coverage(res, regions[res.name], out.defects, area_map)
        _exclude_warm_spots(res, regions[res.name], out.defects, q_map, area_map, dt)
    return out


def _exclude_warm_spots(res: ElementResult, reg, defects, q_map, area_map, dt: float) -> None:
    """Leave warm spots (likely reflections or heat sources) out of the whole-area U.

    A warm reflection on a glossy patch reads as a negative heat flux over its area and
    would pull the whole-area U down; it is not a property of the element.
    """
    warm = [d for d in defects if d.element == res.name and d.defect_class == "unexplained"
            and any("warmer" in n for n in d.notes) and d.polygon is not None]
    if not warm:
        return
    keep = reg.mask & np.isfinite(q_map)
    for d in warm:
        keep &= ~geometry.rasterise(d.polygon, reg.mask.shape)
    if keep.any():
        res.u_whole_w_m2k = float(np.sum(q_map[keep] * area_map[keep]) / (np.sum(area_map[keep]) * dt))
        res.u_note = (res.u_note + "; " if res.u_note else "") + (
            f"whole-area U leaves out {len(warm)} warm spot(s) (likely reflection or heat source)")


H_C_BAND = 0.2
"""Half-width of the rectangular model uncertainty of h_c (as in `uncertainty.UInputs`)."""


def defect_relative_uncertainty(survey: Survey, obj, reg, c, side: str) -> float:
    """Relative standard uncertainty of a defect's extra heat flow [-].

    The extra heat flow is measured against the reference zone of the same image, so the
    camera's absolute error cancels; what is left is the film coefficient's model
    uncertainty (±20 % rectangular: 0.2/√3) and the camera's relative accuracy on the
    temperature contrast, taken conservatively against the reference zone's surface–air
    difference (rectangular ±relative_accuracy_k, √2 for a difference of two readings).
    """
    zone = _zone(reg) & np.isfinite(obj)
    t_air = c.indoor_air_c if side == "interior" else c.outdoor_air_c
    contrast = abs(float(np.mean(obj[zone])) - t_air) if zone.any() else 0.0
    u_t = math.sqrt(2.0) * survey.camera.relative_accuracy_k / math.sqrt(3.0)
    u_h = H_C_BAND / math.sqrt(3.0)
    return math.sqrt(u_h**2 + (u_t / max(contrast, 0.5)) ** 2)


def _hdd(survey: Survey) -> float:
    hdd = survey.climate.heating_degree_days_kd
    return float("nan") if hdd is None else hdd


def _coverage(res: ElementResult, reg, defects, area_map) -> float | None:
    """Share of the net area within the reference level: 1 − (defect area / net area)."""
    total = reg.area_m2
    bad = sum(d.area_m2 for d in defects if d.element == res.name
              and d.defect_class != "unexplained")
    return max(0.0, 1.0 - bad / total) if total > 0 else None


# --------------------------------------------------------------------------- time series
def assess_series(survey: Survey, sr, progress: Progress | None = None) -> dict:
    """ISO 9869-1 average method over a logged sequence of thermograms of one element."""
    tg = survey.thermogram(sr.thermogram)
    label = str(sr.air_log.relative_to(survey.root))
    log = load_air_log(sr.air_log, label)
    rows = log[log["frame"].notna() & (log["frame"].astype(str).str.strip() != "")]
    if len(rows) < 3:
        raise SurveyError("expected at least 3 rows with a frame", label, "frame")
    cor = correct_thermogram(survey, tg)
    tg = cor.thermogram
    base_obj, regions, outlines, offset = cor.object_c, cor.regions, cor.outlines, cor.offset
    if sr.element not in regions:
        raise SurveyError(f"element '{sr.element}' has no outline in thermogram '{tg.id}'",
                          survey.file.name, f"series[{sr.id}].element")
    reg = regions[sr.element]
    el = survey.elements[sr.element]
    eps = emissivity_of(survey, tg, sr.element)[0]
    band = survey.camera.band_um
    ex = tg.export
    refl = rows["reflected_c"].to_numpy(float) if "reflected_c" in rows else np.full(len(rows), tg.reflected_c)
    tau = tg.transmittance if tg.transmittance is not None else 1.0

    def mask_for(shape):
        """The element's zone in frames of `shape`: the same view, perhaps at another
        resolution (outline scaled by the ratio of the frame sizes)."""
        if shape == base_obj.shape:
            return _zone(reg)
        import shapely

        poly = reg.polygon_net
        ref = [o.polygon for o in outlines if o.element == sr.element and o.role == "reference"]
        if ref:
            poly = ref[0].intersection(poly)
        scale = np.array([shape[1] / base_obj.shape[1], shape[0] / base_obj.shape[0]])
        return geometry.rasterise(shapely.transform(poly, lambda xy: xy * scale), shape)

    frame_shape = {}
    app_means: list[float] = []
    paths = []
    for i, rel in enumerate(rows["frame"].astype(str)):
        path = (sr.air_log.parent / rel.strip()).resolve()
        if not path.is_relative_to(survey.root.resolve()):
            raise SurveyError(f"frame '{rel}' lies outside the survey folder", label, f"frame (row {i + 2})")
        paths.append(path)

    def frames():
        for i, path in enumerate(paths):
            flabel = str(path.relative_to(survey.root.resolve()))
            readings = load_pixels(path, flabel)
            if not frame_shape:
                frame_shape["shape"] = readings.shape
            elif readings.shape != frame_shape["shape"]:
                raise SurveyError(f"frame shape {readings.shape} differs from the first frame's "
                                  f"{frame_shape['shape']}", flabel)
            app = radiometry.blackbody_reading(readings, ex.emissivity, ex.reflected_c,
                                               ex.transmittance, ex.atmosphere_c, band_um=band)
            app = np.asarray(app) - offset.value_k  # same camera, same night (assumption)
            app_means.append(float(np.nanmean(app[mask])))
            if progress:
                progress("series")
            yield np.asarray(radiometry.object_temperature(app, eps, refl[i], tau, None, band_um=band))

    first = load_pixels(paths[0], str(paths[0].relative_to(survey.root.resolve())))
    mask = mask_for(first.shape)
    model = survey.analysis.interior_convection
    res = transmittance.series_u_from_frames(
        frames(), mask, rows["indoor_air_c"].to_numpy(float), rows["outdoor_air_c"].to_numpy(float),
        refl, eps, model, rows["hours"].to_numpy(float), direction=el.heat_flow, height_m=el.height_m)
    unc = _series_uncertainty(survey, tg, el, eps, tau, offset, model, app_means, rows, refl,
                              res.u_w_m2k)
    return {"id": sr.id, "element": sr.element, "thermogram": tg.id, "u_w_m2k": res.u_w_m2k,
            **unc, "camera_offset_k": offset.value_k, "calibration_note": offset.source or
            "no camera offset removed: frames carry the camera's absolute accuracy",
            "duration_h": res.duration_h, "n_frames": res.n_samples, "converged": res.converged,
            "u_running_w_m2k": [float(x) for x in res.u_running_w_m2k],
            "times_h": [float(x) for x in res.times_h],
            "checks": list(res.checks)}


def _series_uncertainty(survey, tg, el, eps, tau, offset, model, app_means, rows, refl, u_avg):
    """Standard uncertainty and 95 % interval of a series U [W/(m²·K)].

    Over a night the pixel noise and the scatter of single frames average out; what stays is
    systematic: emissivity, reflected temperature, the camera's (remaining) offset, the air
    thermometers and the film coefficient. They are propagated by the same Monte Carlo as a
    single thermogram (JCGM 101), at the series' mean conditions, and applied to the series
    U as relative figures (the average method is close to linear in those inputs).
    """
    from . import uncertainty

    c = survey.conditions
    accuracy = offset.u_k * math.sqrt(3.0) if offset.u_k is not None else survey.camera.accuracy_k
    inputs = uncertainty.UInputs(
        apparent_c=float(np.mean(app_means)), emissivity=eps,
        u_emissivity=tg.emissivity_uncertainty, reflected_c=float(np.mean(refl)),
        u_reflected_k=tg.reflected_uncertainty_k,
        t_ai_c=float(rows["indoor_air_c"].mean()), u_t_ai_k=c.air_uncertainty_k,
        t_ae_c=float(rows["outdoor_air_c"].mean()), u_t_ae_k=c.air_uncertainty_k,
        camera_accuracy_k=accuracy, camera_relative_k=survey.camera.relative_accuracy_k,
        transmittance=tau, side="interior", h_c_model=model, direction=el.heat_flow,
        height_m=el.height_m)
    est = uncertainty.monte_carlo_u(inputs, n_draws=survey.analysis.monte_carlo_draws,
                                    seed=survey.analysis.seed)
    if not (est.u_w_m2k > 0 and math.isfinite(u_avg)):
        return {"u_std_w_m2k": None, "u_low95_w_m2k": None, "u_high95_w_m2k": None}
    scale = u_avg / est.u_w_m2k
    return {"u_std_w_m2k": est.u_std * scale, "u_low95_w_m2k": est.low95 * scale,
            "u_high95_w_m2k": est.high95 * scale,
            "budget": [{"input": k, "share": float(v)} for k, v in est.budget.items()]}


# --------------------------------------------------------------------------- whole survey
def _best_elements(results: list[ElementResult]) -> dict[str, ElementResult]:
    """One result per element for the energy balance: valid first, interior, calibrated,
    then the smallest standard uncertainty."""
    best: dict[str, ElementResult] = {}
    for r in results:
        key = (not r.u_valid, r.side != "interior", not r.calibrated, r.u_std_w_m2k)
        cur = best.get(r.name)
        if cur is None or key < (not cur.u_valid, cur.side != "interior", not cur.calibrated,
                                 cur.u_std_w_m2k):
            best[r.name] = r
    return best


def _measures(survey: Survey, defects: list) -> list:
    out = []
    default_classes = {"seal_leak": ("air leakage",),
                       "fix_bridge": ("linear thermal bridge", "repeating thermal bridge"),
                       "repair_defect": ("missing insulation",)}
    for m in survey.measures:
        ids: tuple = ()
        if m.kind in default_classes:
            classes = m.defect_classes or default_classes[m.kind]
            ids = tuple(d.id for d in defects if d.defect_class in classes
                        and (not m.elements or d.element in m.elements))
        out.append(energy.Measure(
            name=m.name, kind=m.kind, elements=m.elements if m.kind in ("add_layer", "replace_glazing") else (),
            defects=ids, thickness_m=m.thickness_m, conductivity_w_mk=m.conductivity_w_mk,
            new_u_w_m2k=m.new_u_w_m2k, new_psi_w_mk=m.new_psi_w_mk,
            leak_fraction_removed=m.leak_fraction_removed, cost=m.cost))
    return out


def assess_survey(survey: Survey, progress: Progress | None = None,
                  clock: StageClock = _NO_CLOCK) -> Assessment:
    """Assess every thermogram, series and the energy case of a loaded survey."""
    from . import defects as defects_mod

    tick = progress or (lambda stage: None)
    notes: list[str] = []
    checks = survey_checks(survey)
    mould, cond, note = frsi_limits(survey)
    if note:
        notes.append(note)
    limits = (mould, cond)
    depressurised = {p.depressurised: p for p in survey.pressure_pairs}
    baselines = {p.baseline: p for p in survey.pressure_pairs}
    tresults: list[ThermogramResult] = []
    failures: list[dict] = []
    pair_images: dict[str, np.ndarray] = {}
    order = sorted(survey.thermograms, key=lambda t: t.id not in depressurised)
    for tg in order:
        try:
            if tg.id in depressurised:
                obj = correct_thermogram(survey, tg, clock).object_c
                pair_images[tg.id] = obj
                tr = ThermogramResult(tg, "paired", object_c=obj,
                                      paired_with=depressurised[tg.id].baseline)
            else:
                pair = None
                if tg.id in baselines and baselines[tg.id].depressurised in pair_images:
                    p = baselines[tg.id]
                    pair = (pair_images[p.depressurised], p.pressure_difference_pa)
                tr = assess_thermogram(survey, tg, limits, checks, pair=pair, clock=clock)
                if tg.id in baselines:
                    tr.paired_with = baselines[tg.id].depressurised
        except (SurveyError, ValueError, FloatingPointError) as exc:
            # one bad thermogram never loses the others (SPEC §6); a ValueError from a physics
            # function here means input it cannot use (e.g. an element with no valid pixel)
            msg = str(exc) if isinstance(exc, SurveyError) else f"{tg.id}: {exc}"
            failures.append({"thermogram": tg.id, "file": str(tg.file.relative_to(survey.root)),
                             "error": msg})
            tr = ThermogramResult(tg, "failed", error=msg)
        tick("thermograms")
        tresults.append(tr)
    tresults.sort(key=lambda r: [t.id for t in survey.thermograms].index(r.thermogram.id))

    all_defects = defects_mod.rank_defects([d for t in tresults for d in t.defects])
    elements = [e for t in tresults for e in t.elements]
    series = []
    for sr in survey.series:
        try:
            with clock.stage("series"):
                series.append(assess_series(survey, sr))
        except SurveyError as exc:
            failures.append({"thermogram": f"series {sr.id}", "file": str(sr.air_log.relative_to(survey.root)),
                             "error": str(exc)})
        tick("series")

    with clock.stage("energy"):
        heat, measures, package = energy_case(survey, elements, all_defects, checks, notes)
    return Assessment(survey, checks, mould, cond, tresults, elements, all_defects, heat,
                      measures, package, series, failures, notes)


def energy_case(survey: Survey, elements: list, defects: list, checks: list, notes: list):
    """Builder verdicts on every element result, then H, annual loss and the retrofit case."""
    c, cl = survey.conditions, survey.climate
    dt = c.indoor_air_c - c.outdoor_air_c
    survey_ok = all(ch.status != "fail" for ch in checks)
    for e in elements:
        if e.u_specified_w_m2k is not None:
            ok = survey_ok and all(ch.status != "fail" for ch in e.checks) and e.u_valid
            e.verdict, e.verdict_reason = energy.builder_verdict(
                e.u_low95_w_m2k, e.u_high95_w_m2k, e.u_specified_w_m2k,
                survey.analysis.verdict_tolerance_w_m2k, checks_ok=ok)
    best = _best_elements(elements)
    usable = [r for r in best.values() if r.u_valid]
    if not usable:
        notes.append("no valid element U: heat loss not computed")
        return None, [], None
    missing = sorted(set(survey.elements) - set(best))
    if missing:
        notes.append("elements not seen in any assessed thermogram (left out of the heat "
                      "loss): " + ", ".join(missing))
    el_loss = [energy.ElementLoss(r.name, r.u_w_m2k, r.u_std_w_m2k, r.area_net_m2) for r in usable]
    d_loss = [energy.defect_loss_from_result(
        {"id": d.id, "psi_w_mk": d.psi_w_mk, "length_m": d.length_m, "chi_w_k": d.chi_w_k,
         "extra_w": d.extra_w, "extra_w_std": d.extra_w_std, "class": d.defect_class,
         "element": d.element}, dt) for d in defects if d.defect_class != "unexplained"]
    hl = energy.heat_loss_coefficient(el_loss, d_loss)
    heat = hl.to_dict()
    heat["q_survey_w"] = float(energy.heat_loss_w(hl.h_w_k, c.indoor_air_c, c.outdoor_air_c))
    heat["design_indoor_c"], heat["design_outdoor_c"] = cl.design_indoor_c, cl.design_outdoor_c
    heat["q_design_w"] = (float(energy.heat_loss_w(hl.h_w_k, cl.design_indoor_c, cl.design_outdoor_c))
                          if cl.design_indoor_c is not None and cl.design_outdoor_c is not None else None)
    heat["hdd_kd"] = cl.heating_degree_days_kd
    if cl.heating_degree_days_kd is not None:
        heat["annual_kwh"] = float(energy.annual_heat_loss_kwh(hl.h_w_k, cl.heating_degree_days_kd))
        heat["annual_kwh_std"] = float(energy.annual_heat_loss_kwh(hl.h_std_w_k, cl.heating_degree_days_kd))
    else:
        heat["annual_kwh"] = heat["annual_kwh_std"] = None
        notes.append("no heating degree-days ([climate] heating_degree_days_kd): annual figures left out")
    measures, package = [], None
    p = survey.prices
    if survey.measures and p.energy_price_per_kwh is not None and cl.heating_degree_days_kd:
        prices = energy.EnergyPrices(p.energy_price_per_kwh, p.heating_efficiency,
                                     p.co2_kg_per_kwh or 0.0, p.currency)
        ms = _measures(survey, defects)
        measures = [m.to_dict() for m in energy.evaluate_measures(ms, el_loss, d_loss, prices,
                                                                  cl.heating_degree_days_kd)]
        package = energy.package_result(ms, el_loss, d_loss, prices, cl.heating_degree_days_kd).to_dict()
        after_e, after_d = energy.apply_measures(ms, el_loss, d_loss)
        heat["after_measures"] = energy.heat_loss_coefficient(after_e, after_d).to_dict()
    elif survey.measures:
        notes.append("measures given but no energy price or degree-days: retrofit case left out")
    return heat, measures, package
