"""Indoor humidity, fRsi limits and condensation / mould risk.

The internal humidity classes and the fRsi,min procedure follow ISO 13788:2012. The
limits (ISO 13788's fRsi,min, BRE IP 1/06's 0.75, DIN 4108-2's 0.70) are defined for a
temperature factor computed at a design surface resistance, Rsi = 0.25 m²K/W on opaque
elements and 0.13 m²K/W on glazing: the extra resistance stands for corners, furniture and
curtains. A survey night measures the factor on an open surface (Rsi about 0.13). This
module judges risk on the factor at the design convention (`assess_frsi`, with
`envelope.surface_factor.design_temperature_factor`) and reports the measured-night factor
beside it.

Psychrometrics (`envelope.psychrometrics`) and the temperature factors
(`envelope.surface_factor`) are re-exported here.
Relative humidity is a fraction 0-1 everywhere, never percent.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass, field

import numpy as np

from envelope.constants import R_V_J_KGK as _R_V
from envelope.constants import T0_K
from envelope.errors import EnvelopeWarning, SurveyError
from envelope.psychrometrics import (
    P0_PA,  # noqa: F401  (re-exported)
    _out,
    check_rh,
    dew_point,
    relative_humidity,
    saturation_vapour_pressure,
    surface_relative_humidity,
    t_from_p_sat,
    vapour_pressure,
)
from envelope.surface_factor import (  # noqa: F401  (re-exported)
    MIN_DT_K,
    R_SI_DESIGN_GLAZING,
    R_SI_DESIGN_OPAQUE,
    design_factor_from_measured,
    design_factor_map,
    design_surface_resistance,
    design_temperature_factor,
    temperature_factor,
)

__all__ = [
    "HUMIDITY_CLASS_DP_PA",
    "HUMIDITY_CLASS_LABELS",
    "FIXED_CRITERIA",
    "R_SI_DESIGN_OPAQUE",
    "R_SI_DESIGN_GLAZING",
    "RISK_ORDER",
    "saturation_vapour_pressure",
    "vapour_pressure",
    "relative_humidity",
    "dew_point",
    "surface_relative_humidity",
    "temperature_factor",
    "design_surface_resistance",
    "design_temperature_factor",
    "design_factor_from_measured",
    "design_factor_map",
    "IndoorHumidity",
    "humidity_class_excess",
    "indoor_vapour_pressure",
    "FrsiLimit",
    "frsi_limit",
    "fixed_limit",
    "FrsiVerdict",
    "assess_frsi",
    "worst_risk",
]

R_V_J_KGK = _R_V
"""Gas constant of water vapour [J kg-1 K-1] (ISO 13788:2012)."""

HUMIDITY_CLASS_DP_PA = {1: 270.0, 2: 540.0, 3: 810.0, 4: 1080.0, 5: 1350.0}
"""Internal vapour pressure excess at θe <= 0 °C per humidity class [Pa] (ISO 13788:2012
Annex A, Figure A.1; from memory). The buildings of each class are `HUMIDITY_CLASS_LABELS`."""
HUMIDITY_CLASS_LABELS = {
    1: "Unoccupied buildings, storage of dry goods",
    2: "Offices, dwellings with normal occupancy and ventilation",
    3: "Buildings with unknown occupancy",
    4: "Sports halls, kitchens, canteens",
    5: "Special buildings, e.g. laundry, brewery, swimming pool",
}
"""Internal humidity classes as worded in ISO 13788:2012 Annex A, Table A.1 (from memory;
the wording agrees with a published reproduction of the table)."""
DESIGN_SAFETY_FACTOR = 1.10
"""Factor on Δp in the ISO 13788 design procedure (ISO 13788:2012 §4.2.4, from memory)."""

FIXED_CRITERIA = {
    "bre-ip1-06-dwellings": (
        0.75,
        "BRE Information Paper IP 1/06, Assessing the effects of thermal bridging at "
        "junctions and around openings (2006), Table 1: fCRsi >= 0.75 for dwellings, "
        "residential buildings and schools, factor computed with Rsi = 0.25 m²K/W "
        "(from memory)",
    ),
    "din-4108-2": (
        0.70,
        "DIN 4108-2:2013, Wärmeschutz und Energie-Einsparung in Gebäuden, Teil 2: "
        "§6.2: fRsi >= 0.70 with Rsi = 0.25 m²K/W (θsi >= 12.6 °C at 20 °C / 50 %, -5 °C "
        "outdoor, 80 % at the surface; from memory)",
    ),
}
"""Fixed national temperature-factor criteria: name -> (fRsi,min, source)."""


def _monthly(values, name: str, allow_scalar: bool = False) -> np.ndarray:
    """Twelve finite monthly values, or a clear error naming the field."""
    if values is None:
        raise SurveyError(f"{name} is missing: ISO 13788 needs twelve monthly mean values "
                          "(site climate)", field=name)
    a = np.asarray(values, dtype=float)
    if a.ndim == 0 and allow_scalar:
        a = np.full(12, float(a))
    if a.shape != (12,):
        raise SurveyError(f"{name} must hold 12 monthly values (January..December); "
                          f"got shape {a.shape}", field=name)
    if not np.all(np.isfinite(a)):
        raise SurveyError(f"{name} must be finite; month(s) "
                          f"{[int(i) + 1 for i in np.flatnonzero(~np.isfinite(a))]} are not",
                          field=name)
    return a


# --------------------------------------------------------------------- indoor humidity
@dataclass(frozen=True)
class IndoorHumidity:
    """How the indoor humidity is known (see `indoor_vapour_pressure` for the models).

    `rh` [-] for "measured" (scalar or 12 months); `humidity_class` 1-5 for
    "humidity_class"; `moisture_kg_h` [kg/h], `air_changes_per_h` [1/h] and `volume_m3`
    [m³] for "moisture_production"; `safety_factor` on Δp for the last two.
    """

    model: str
    rh: object = None
    humidity_class: int | None = None
    moisture_kg_h: float | None = None
    air_changes_per_h: float | None = None
    volume_m3: float | None = None
    safety_factor: float = DESIGN_SAFETY_FACTOR


def humidity_class_excess(t_e_c, humidity_class: int):
    """Internal vapour pressure excess Δp [Pa] of an ISO 13788 humidity class.

    Notes
    -----
    Annex A of [1] (Table A.1 / Figure A.1, from memory): Δp is the class value (270, 540,
    810, 1080, 1350 Pa for classes 1-5) for a monthly mean outdoor temperature θe <= 0 °C,
    falls linearly to 0 at θe = 20 °C and is 0 above. No safety factor is applied here.

    References
    ----------
    [1] ISO 13788:2012, Annex A.
    """
    if humidity_class not in HUMIDITY_CLASS_DP_PA:
        raise SurveyError(f"humidity_class must be one of {sorted(HUMIDITY_CLASS_DP_PA)}; "
                          f"got {humidity_class!r}", field="humidity_class")
    t_e = np.asarray(t_e_c, dtype=float)
    return _out(HUMIDITY_CLASS_DP_PA[humidity_class] * np.clip((20.0 - t_e) / 20.0, 0.0, 1.0))


def _positive(value, name: str) -> float:
    if value is None:
        raise SurveyError(f"{name} is missing for model 'moisture_production'", field=name)
    v = float(value)
    if not np.isfinite(v) or v <= 0.0:
        raise SurveyError(f"{name} must be a positive number; got {value!r}", field=name)
    return v


def _p_i_measured(t_e_c, rh_e, t_i_c, kw):
    return vapour_pressure(t_i_c, check_rh(kw["rh_i"], "rh_i"))


def _p_i_class(t_e_c, rh_e, t_i_c, kw):
    dp = humidity_class_excess(t_e_c, kw["humidity_class"])
    return vapour_pressure(t_e_c, rh_e) + kw["safety_factor"] * np.asarray(dp)


def _p_i_moisture(t_e_c, rh_e, t_i_c, kw):
    g = _positive(kw["moisture_kg_h"], "moisture_kg_h")
    n = _positive(kw["air_changes_per_h"], "air_changes_per_h")
    v = _positive(kw["volume_m3"], "volume_m3")
    dv_kg_m3 = g / (n * v)
    dp = dv_kg_m3 * R_V_J_KGK * (np.asarray(t_i_c, dtype=float) + T0_K)
    return vapour_pressure(t_e_c, rh_e) + kw["safety_factor"] * dp


_INDOOR_MODELS = {
    "measured": _p_i_measured,
    "humidity_class": _p_i_class,
    "moisture_production": _p_i_moisture,
}


def indoor_vapour_pressure(t_e_c, rh_e, t_i_c, model: str = "measured", *, rh_i=None,
                           humidity_class=None, moisture_kg_h=None, air_changes_per_h=None,
                           volume_m3=None, safety_factor: float = DESIGN_SAFETY_FACTOR):
    """Indoor water vapour pressure p_i [Pa], vectorised over months.

    Parameters
    ----------
    t_e_c, rh_e : array_like
        Outdoor air temperature [°C] and relative humidity [-] (monthly means).
    t_i_c : array_like
        Indoor air temperature [°C].
    model : {"measured", "humidity_class", "moisture_production"}
        "measured": p_i = rh_i p_sat(θi). "humidity_class": p_i = p_e + k Δp(θe) with the
        ISO 13788 Annex A class curve. "moisture_production": p_i = p_e + k Δv R_v T_i with
        Δv = G / (n V).
    rh_i : array_like, optional
        Indoor relative humidity [-] ("measured").
    humidity_class : {1, 2, 3, 4, 5}, optional
    moisture_kg_h, air_changes_per_h, volume_m3 : float, optional
        Moisture production G [kg/h], air change rate n [1/h], room volume V [m³].
    safety_factor : float
        k on Δp (not used by "measured"). ISO 13788 multiplies Δp by 1.10 in its design
        procedure; pass 1.0 for the bare excess.

    Notes
    -----
    Δp = Δv R_v T with R_v = 461.5 J/(kg K) and T the indoor air temperature [K] (ideal gas
    at room-air state; the class values of Annex A correspond to T ≈ 293 K). Some texts use
    the mean of indoor and outdoor temperature, which gives a few per cent (3.4 % at
    θi = 20 °C, θe = 0 °C) less.

    References
    ----------
    [1] ISO 13788:2012, §4.2 and Annex A.
    """
    if model not in _INDOOR_MODELS:
        raise ValueError(f"unknown indoor humidity model {model!r}; valid: "
                         f"{', '.join(_INDOOR_MODELS)}")
    if t_e_c is None or t_i_c is None:
        raise SurveyError("indoor and outdoor temperatures are both needed",
                          field="t_e_c" if t_e_c is None else "t_i_c")
    if model != "measured":
        check_rh(rh_e, "rh_e")
    k = float(safety_factor)
    if not np.isfinite(k) or k < 1.0:
        raise SurveyError(f"safety_factor must be >= 1; got {safety_factor!r}",
                          field="safety_factor")
    kw = {"rh_i": rh_i, "humidity_class": humidity_class, "moisture_kg_h": moisture_kg_h,
          "air_changes_per_h": air_changes_per_h, "volume_m3": volume_m3, "safety_factor": k}
    return _out(_INDOOR_MODELS[model](t_e_c, rh_e, t_i_c, kw))


# ------------------------------------------------------------------------- fRsi limit
@dataclass(frozen=True)
class FrsiLimit:
    """A temperature-factor limit fRsi,min and how it was found.

    `value` is the limit; for the ISO 13788 procedure the per-month arrays hold p_i [Pa],
    p_sat(θsi,min) [Pa], θsi,min [°C] and fRsi,min [-] (NaN in skipped months, listed in
    `skipped_months` and `notes`); for a fixed criterion they are None.
    """

    value: float
    critical_month: int | None
    p_i_pa: np.ndarray | None
    p_sat_min_pa: np.ndarray | None
    t_si_min_c: np.ndarray | None
    limit_monthly: np.ndarray | None
    critical_rh: float | None
    method: str
    skipped_months: tuple[int, ...] = ()
    notes: tuple[str, ...] = field(default_factory=tuple)


def frsi_limit(monthly_t_e_c, monthly_rh_e, monthly_t_i_c, humidity: IndoorHumidity,
               critical_rh: float = 0.8) -> FrsiLimit:
    """Limit of the temperature factor, fRsi,min, over the year by the ISO 13788 procedure.

    (Was ``frsi_min``; that name now means the measured minimum of a surface.) The limit
    holds for a factor at the design convention (`design_temperature_factor`).

    Parameters
    ----------
    monthly_t_e_c, monthly_rh_e : array_like, 12 values
        Monthly mean outdoor temperature [°C] and relative humidity [-].
    monthly_t_i_c : array_like, 12 values or scalar
        Indoor temperature [°C] (a scalar is used for every month).
    humidity : IndoorHumidity
        The indoor humidity model and its inputs.
    critical_rh : float
        Critical surface humidity φ_crit [-]: 0.8 for mould, 1.0 for surface condensation.

    Returns
    -------
    FrsiLimit
        `value` is the largest monthly fRsi,min, `critical_month` (1-12) the month where
        it occurs.

    Notes
    -----
    Per month (§5 of [1])::

        p_i = p_e + Δp                      (or φ_i p_sat(θi) if measured)
        p_sat(θsi,min) = p_i / φ_crit
        θsi,min from the inverse of the Annex E formulas
        fRsi,min = (θsi,min - θe) / (θi - θe)

    Months with θi - θe < 1 K (no heating season, e.g. summer) are skipped with a note.

    References
    ----------
    [1] ISO 13788:2012, §5.2 and Annex A.
    """
    t_e = _monthly(monthly_t_e_c, "monthly_t_e_c")
    rh_e = check_rh(_monthly(monthly_rh_e, "monthly_rh_e"), "monthly_rh_e")
    t_i = _monthly(monthly_t_i_c, "monthly_t_i_c", allow_scalar=True)
    crit = float(critical_rh)
    if not 0.0 < crit <= 1.0:
        check_rh(crit, "critical_rh")
        raise SurveyError(f"critical_rh must be in (0, 1]; got {critical_rh!r}",
                          field="critical_rh")
    rh_i = humidity.rh
    if humidity.model == "measured" and rh_i is not None and np.ndim(rh_i) > 0:
        rh_i = _monthly(rh_i, "humidity.rh")
    p_i = np.asarray(indoor_vapour_pressure(
        t_e, rh_e, t_i, humidity.model, rh_i=rh_i, humidity_class=humidity.humidity_class,
        moisture_kg_h=humidity.moisture_kg_h, air_changes_per_h=humidity.air_changes_per_h,
        volume_m3=humidity.volume_m3, safety_factor=humidity.safety_factor), dtype=float)
    p_i = np.broadcast_to(p_i, (12,)).copy()
    p_sat_min = p_i / crit
    t_si_min = t_from_p_sat(p_sat_min)
    dt = t_i - t_e
    ok = dt >= MIN_DT_K
    skipped = tuple(int(m) + 1 for m in np.flatnonzero(~ok))
    if not np.any(ok):
        raise SurveyError("no month has indoor air at least 1 K warmer than outdoor; "
                          "fRsi,min is undefined (indoor colder than outdoor?)",
                          field="monthly_t_i_c")
    f = np.full(12, np.nan)
    f[ok] = (t_si_min[ok] - t_e[ok]) / dt[ok]
    crit_idx = int(np.argmax(np.where(ok, f, -np.inf)))
    notes = []
    if skipped:
        notes.append(f"months {list(skipped)} skipped: indoor-outdoor difference below "
                     f"{MIN_DT_K:g} K (no heating need)")
    if humidity.model != "measured":
        notes.append(f"Δp multiplied by safety factor {humidity.safety_factor:g}")
    return FrsiLimit(value=float(f[crit_idx]), critical_month=crit_idx + 1, p_i_pa=p_i,
                     p_sat_min_pa=p_sat_min, t_si_min_c=t_si_min, limit_monthly=f,
                     critical_rh=crit, method="ISO 13788", skipped_months=skipped,
                     notes=tuple(notes))


def fixed_limit(name: str) -> FrsiLimit:
    """A fixed national fRsi criterion from `FIXED_CRITERIA` as an `FrsiLimit`."""
    if name not in FIXED_CRITERIA:
        raise SurveyError(f"unknown fixed fRsi criterion {name!r}; valid: "
                          f"{', '.join(FIXED_CRITERIA)}", field="criterion")
    value, source = FIXED_CRITERIA[name]
    return FrsiLimit(value=value, critical_month=None, p_i_pa=None, p_sat_min_pa=None,
                     t_si_min_c=None, limit_monthly=None, critical_rh=None,
                     method=f"fixed: {name}", notes=(source,))


# ------------------------------------------------------------------------------ verdict
RISK_ORDER = ("not assessed", "none", "mould", "condensation")
"""Risk strings from least to most severe."""


@dataclass(frozen=True)
class FrsiVerdict:
    """Condensation / mould risk of a surface, judged on the factor at the design convention.

    `risk` is "condensation" (p05 below the condensation limit), "mould" (below the mould
    limit) or "none". ``frsi_design_min`` / ``frsi_design_p05`` are the design-convention
    factor the risk is judged on; ``frsi_min`` / ``frsi_p05`` the factor measured on the
    night, reported beside it. `t_si_design_c` [°C] and `rh_si_design` [-] are the surface
    state predicted at design conditions from the judged p05. ``judged_on`` says which
    factor the verdict used ("design convention", or "measured night" when no design
    factor was given, which is not conservative).
    """

    frsi_min: float
    frsi_p05: float
    risk: str
    limit_mould: float
    limit_condensation: float
    t_si_design_c: float
    rh_si_design: float
    n_pixels: int
    note: str
    frsi_design_min: float = float("nan")
    frsi_design_p05: float = float("nan")
    judged_on: str = "design convention"


_STEADY_NOTE = (
    "Assumes steady state: the factor of the survey night is taken to hold at design "
    "conditions. A single night's reading carries the uncertainty of the U estimate (film "
    "coefficients, emissivity, camera accuracy, the thermal history of the wall); confirm "
    "marginal results by logging.")
_RISK_NOTE = (
    "Judged on the temperature factor at the design convention (Rsi 0.25 m²K/W on opaque "
    "surfaces, 0.13 on glazing), for which the limits are defined; the factor measured on "
    "the open surface on the survey night (Rsi about 0.13) is reported beside it and reads "
    "higher. " + _STEADY_NOTE)
_MEASURED_ONLY_NOTE = (
    "No design-convention factor was given: judged on the factor measured on the survey "
    "night, which reads higher than the convention the limits are defined for (not "
    "conservative). " + _STEADY_NOTE)


def _finite(values) -> np.ndarray:
    f = np.asarray(values, dtype=float).ravel()
    return f[np.isfinite(f)]


def assess_frsi(frsi_values, limit_mould: FrsiLimit, limit_condensation: FrsiLimit,
                design_t_i_c: float, design_t_e_c: float, design_rh_i: float,
                frsi_design_values=None) -> FrsiVerdict:
    """Condensation and mould risk of a surface, judged at the design convention.

    Parameters
    ----------
    frsi_values : array_like
        Temperature factor measured on the survey night for the surface's pixels [-]
        (`temperature_factor`); NaN pixels are ignored. Reported beside the verdict.
    limit_mould, limit_condensation : FrsiLimit
        Limits for critical surface humidity 0.8 and 1.0 (`frsi_limit`) or fixed criteria
        (`fixed_limit`).
    design_t_i_c, design_t_e_c : float
        Indoor and outdoor air temperatures of the design (critical-month) case [°C].
    design_rh_i : float
        Indoor relative humidity of the design case [-].
    frsi_design_values : array_like, optional
        The same pixels' factor at the design convention (`design_temperature_factor` /
        `design_factor_map`) [-]. The verdict is judged on it; without it the measured
        factor is judged, with a note that this is not conservative.

    Notes
    -----
    The 5th percentile f_p05 (robust to single dead or hot pixels) of the judged factor is
    compared with the limits; condensation outranks mould. Predicted surface temperature
    θsi = θe + f_p05 (θi - θe) (the definition of fRsi in [1] rearranged), surface humidity
    φ_si = φ_i p_sat(θi) / p_sat(θsi).

    References
    ----------
    [1] ISO 13788:2012, §4 (surface resistances for the temperature factor; clause from memory) and §5.
    """
    f = _finite(frsi_values)
    if f.size == 0:
        raise ValueError("no valid fRsi pixels: every value is NaN (is the element mask "
                         "empty or outside the thermogram?)")
    fd = None if frsi_design_values is None else _finite(frsi_design_values)
    if fd is not None and fd.size == 0:
        raise ValueError("no valid design-convention factor: every value is NaN (heat flux "
                         "<= 0 on every pixel?)")
    if design_t_i_c is None or design_t_e_c is None:
        raise SurveyError("design indoor and outdoor temperatures are needed",
                          field="design_t_i_c" if design_t_i_c is None else "design_t_e_c")
    dt = float(design_t_i_c) - float(design_t_e_c)
    if dt < 0.0:
        raise SurveyError(f"design indoor air is colder than outdoor ({dt:g} K)",
                          field="design_t_i_c")
    if dt < MIN_DT_K:
        warnings.warn(f"design indoor-outdoor difference {dt:g} K is below {MIN_DT_K:g} K",
                      EnvelopeWarning, stacklevel=2)
    rh_i = float(check_rh(design_rh_i, "design_rh_i"))
    p05 = float(np.percentile(f, 5.0))
    judged = p05 if fd is None else float(np.percentile(fd, 5.0))
    if judged < limit_condensation.value:
        risk = "condensation"
    elif judged < limit_mould.value:
        risk = "mould"
    else:
        risk = "none"
    t_si = float(design_t_e_c) + judged * dt
    rh_si = float(surface_relative_humidity(design_t_i_c, rh_i, t_si))
    return FrsiVerdict(
        frsi_min=float(f.min()), frsi_p05=p05, risk=risk,
        limit_mould=float(limit_mould.value),
        limit_condensation=float(limit_condensation.value),
        t_si_design_c=t_si, rh_si_design=rh_si, n_pixels=int(f.size),
        note=_MEASURED_ONLY_NOTE if fd is None else _RISK_NOTE,
        frsi_design_min=float("nan") if fd is None else float(fd.min()),
        frsi_design_p05=float("nan") if fd is None else judged,
        judged_on="measured night" if fd is None else "design convention")


def worst_risk(risks) -> str:
    """The most severe of several risk strings (`RISK_ORDER`); "not assessed" if empty.

    An element's verdict reflects its worst defect: ``worst_risk([element.risk] +
    [d.risk for d in defects on it])``.
    """
    worst = "not assessed"
    for r in risks:
        r = "not assessed" if r is None else str(r)
        if r not in RISK_ORDER:
            raise ValueError(f"unknown risk {r!r}; valid: {', '.join(RISK_ORDER)}")
        if RISK_ORDER.index(r) > RISK_ORDER.index(worst):
            worst = r
    return worst
