"""Psychrometrics, indoor humidity, temperature factor and condensation / mould risk.

The saturation vapour pressure, the internal humidity classes and the fRsi,min procedure
follow ISO 13788:2012. The measured temperature factor fRsi of a survey night is compared
with the limit for mould (critical surface humidity 0.8) and for surface condensation (1.0),
or with a national fixed criterion.

Relative humidity is a fraction 0-1 everywhere, never percent.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass, field

import numpy as np

from envelope.constants import R_V_J_KGK as _R_V
from envelope.constants import T0_K
from envelope.errors import EnvelopeWarning, SurveyError

P0_PA = 610.5
"""Saturation vapour pressure at 0 °C in the formulas of ISO 13788:2012 Annex E [Pa]."""
_A_WATER, _B_WATER = 17.269, 237.3
_A_ICE, _B_ICE = 21.875, 265.5
R_V_J_KGK = _R_V
"""Gas constant of water vapour [J kg-1 K-1] (ISO 13788:2012)."""
MIN_DT_K = 1.0
"""Indoor-outdoor difference below which fRsi is ill-conditioned [K]."""

HUMIDITY_CLASS_DP_PA = {1: 270.0, 2: 540.0, 3: 810.0, 4: 1080.0, 5: 1350.0}
"""Internal vapour pressure excess at θe <= 0 °C per humidity class [Pa] (ISO 13788:2012
Annex A, from memory: 1 unoccupied / dry storage, 2 offices and dwellings with normal
occupancy and ventilation, 3 buildings of unknown occupancy, 4 sports halls, kitchens,
canteens, 5 special buildings such as laundries, breweries, swimming pools)."""
DESIGN_SAFETY_FACTOR = 1.10
"""Factor on Δp in the ISO 13788 design procedure (ISO 13788:2012 §4.2.4, from memory)."""

FIXED_CRITERIA = {
    "bre-ip1-06-dwellings": (
        0.75,
        "BRE Information Paper IP 1/06, Assessing the effects of thermal bridging at "
        "junctions and around openings (2006), Table 1: fCRsi >= 0.75 for dwellings, "
        "residential buildings and schools (from memory)",
    ),
    "din-4108-2": (
        0.70,
        "DIN 4108-2:2013, Wärmeschutz und Energie-Einsparung in Gebäuden, Teil 2: "
        "fRsi >= 0.70 (θsi >= 12.6 °C at 20 °C / 50 %, -5 °C outdoor, 80 % at the surface)",
    ),
}
"""Fixed national temperature-factor criteria: name -> (fRsi,min, source)."""


# ---------------------------------------------------------------------------- helpers
def _out(x):
    """0-d arrays back to float; arrays unchanged."""
    x = np.asarray(x, dtype=float)
    return float(x) if x.ndim == 0 else x


def _check_rh(rh, name: str = "rh"):
    """`rh` as a float array, checked to be a fraction 0-1 (NaN passes as 'invalid')."""
    if rh is None:
        raise SurveyError(f"{name} is missing: a relative humidity (fraction 0-1) is needed",
                          field=name)
    a = np.asarray(rh, dtype=float)
    finite = a[np.isfinite(a)]
    if np.any(np.isinf(a)):
        raise SurveyError(f"{name} must be finite; got infinity", field=name)
    pct = finite[(finite > 1.0) & (finite <= 100.0)]
    if pct.size:
        raise SurveyError(
            f"rh is a fraction 0-1; got {pct[0]:g} — was it given in percent? "
            f"(use {pct[0] / 100:g})", field=name)
    bad = finite[(finite < 0.0) | (finite > 1.0)]
    if bad.size:
        raise SurveyError(f"rh is a fraction 0-1; got {bad[0]:g}", field=name)
    return a


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


# --------------------------------------------------------------------- psychrometrics
def saturation_vapour_pressure(t_c):
    """Saturation vapour pressure of water vapour [Pa] after ISO 13788:2012 Annex E.

    Parameters
    ----------
    t_c : array_like
        Temperature [°C]. Over water for θ >= 0 °C, over ice for θ < 0 °C.

    Returns
    -------
    float or ndarray
        p_sat [Pa]; NaN where `t_c` is NaN.

    Notes
    -----
    Magnus-type fits of Annex E of [1]::

        p_sat = 610.5 exp(17.269 θ / (237.3 + θ))   θ >= 0 °C (over water)
        p_sat = 610.5 exp(21.875 θ / (265.5 + θ))   θ <  0 °C (over ice)

    They agree with IAPWS-95 (water) and the ASHRAE / Hyland-Wexler values within about
    0.5 % over -20...+30 °C (tests/test_condensation.py).

    References
    ----------
    [1] ISO 13788:2012, Hygrothermal performance of building components and building
        elements -- Internal surface temperature to avoid critical surface humidity and
        interstitial condensation -- Calculation methods, Annex E.

    Examples
    --------
    >>> round(saturation_vapour_pressure(20.0), 1)
    2337.0
    """
    t = np.asarray(t_c, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore", over="ignore"):
        water = P0_PA * np.exp(_A_WATER * t / (_B_WATER + t))
        ice = P0_PA * np.exp(_A_ICE * t / (_B_ICE + t))
    return _out(np.where(t >= 0.0, water, ice))


def _t_from_p_sat(p_pa):
    """Inverse of `saturation_vapour_pressure`: temperature [°C] where p_sat = p."""
    p = np.asarray(p_pa, dtype=float)
    if np.any(p[np.isfinite(p)] <= 0.0):
        raise SurveyError("vapour pressure must be > 0 Pa for a dew point; got "
                          f"{p[np.isfinite(p) & (p <= 0)].flat[0]:g} Pa (rh = 0?)")
    with np.errstate(divide="ignore", invalid="ignore"):
        x = np.log(p / P0_PA)
        water = _B_WATER * x / (_A_WATER - x)
        ice = _B_ICE * x / (_A_ICE - x)
    return np.where(p >= P0_PA, water, ice)


def vapour_pressure(t_c, rh):
    """Partial pressure of water vapour [Pa] of air at `t_c` [°C] and `rh` [-]: φ p_sat(θ)."""
    return _out(_check_rh(rh) * np.asarray(saturation_vapour_pressure(t_c)))


def relative_humidity(t_c, p_v_pa):
    """Relative humidity [-] of air at `t_c` [°C] holding vapour pressure `p_v_pa` [Pa].

    Not clipped: a value above 1 means the vapour pressure exceeds saturation.
    """
    p = np.asarray(p_v_pa, dtype=float)
    if np.any(p[np.isfinite(p)] < 0.0):
        raise SurveyError("vapour pressure must be >= 0 Pa", field="p_v_pa")
    return _out(p / np.asarray(saturation_vapour_pressure(t_c)))


def dew_point(t_c, rh):
    """Dew point [°C] (frost point below 0 °C) of air at `t_c` [°C] and `rh` [-].

    Parameters
    ----------
    t_c : array_like
        Air temperature [°C].
    rh : array_like
        Relative humidity, fraction 0-1 (relative to `saturation_vapour_pressure`).

    Returns
    -------
    float or ndarray
        The temperature at which p_sat equals the air's vapour pressure [°C].

    Notes
    -----
    Analytic inverse of the ISO 13788 formulas, with x = ln(p_v / 610.5)::

        θ_d = 237.3 x / (17.269 - x)   p_v >= 610.5 Pa
        θ_d = 265.5 x / (21.875 - x)   p_v <  610.5 Pa

    Below 0 °C this is the frost point (saturation over ice), which is where the ISO 13788
    procedure puts the branch and where hoar frost, not dew, forms on a surface. It lies
    above the dew point over supercooled water (by about 1 K at -10 °C). psychrolib's
    GetTDewPointFromRelHum makes the same choice.

    References
    ----------
    [1] ISO 13788:2012, Annex E.

    Examples
    --------
    >>> round(dew_point(20.0, 0.5), 2)
    9.27
    """
    p = vapour_pressure(t_c, rh)
    return _out(_t_from_p_sat(p))


def surface_relative_humidity(t_air_c, rh_air, t_s_c):
    """Relative humidity [-] at a surface at `t_s_c` [°C] in air at `t_air_c`, `rh_air`.

    Notes
    -----
    φ_s = φ_air p_sat(θ_air) / p_sat(θ_s) (the vapour pressure is the same in the room air
    and at the surface). Not clipped: above 1 means surface condensation.
    """
    return _out(vapour_pressure(t_air_c, rh_air) / np.asarray(saturation_vapour_pressure(t_s_c)))


# ----------------------------------------------------------------- temperature factor
def temperature_factor(t_si_c, t_i_c, t_e_c):
    """Temperature factor at the internal surface fRsi [-].

    Parameters
    ----------
    t_si_c : array_like
        Internal surface temperature [°C] (an image, NaN for invalid pixels).
    t_i_c, t_e_c : array_like
        Indoor and outdoor air temperatures [°C], broadcast against `t_si_c`.

    Returns
    -------
    float or ndarray
        fRsi; NaN only where an input is NaN or where T_i = T_e exactly (warned).
        Raises SurveyError where indoor air is colder than outdoor by more than 1 K
        (swapped temperatures?); warns (EnvelopeWarning) where T_i - T_e < 1 K.

    Notes
    -----
    fRsi = (θsi - θe) / (θi - θe), as defined in [1]; 1 for a perfect insulator.

    References
    ----------
    [1] ISO 13788:2012, §3 (terms) and §5.

    Examples
    --------
    >>> temperature_factor(15.0, 20.0, 0.0)
    0.75
    """
    t_si = np.asarray(t_si_c, dtype=float)
    dt = np.asarray(t_i_c, dtype=float) - np.asarray(t_e_c, dtype=float)
    fin = dt[np.isfinite(dt)]
    if np.any(fin < -MIN_DT_K):
        raise SurveyError(f"indoor air is colder than outdoor (T_i - T_e = {fin.min():g} K); "
                          "were the indoor and outdoor temperatures swapped?", field="t_i_c")
    if np.any(fin < MIN_DT_K):
        warnings.warn(f"indoor-outdoor difference {fin.min():g} K is below {MIN_DT_K:g} K: "
                      "fRsi is ill-conditioned" + ("; it is NaN where the difference is 0"
                                                   if np.any(fin == 0) else ""),
                      EnvelopeWarning, stacklevel=2)
    with np.errstate(divide="ignore", invalid="ignore"):
        f = (t_si - np.asarray(t_e_c, dtype=float)) / np.where(dt == 0.0, np.nan, dt)
    return _out(f)


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
    return vapour_pressure(t_i_c, _check_rh(kw["rh_i"], "rh_i"))


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
        _check_rh(rh_e, "rh_e")
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
    frsi_min_monthly: np.ndarray | None
    critical_rh: float | None
    method: str
    skipped_months: tuple[int, ...] = ()
    notes: tuple[str, ...] = field(default_factory=tuple)


def frsi_min(monthly_t_e_c, monthly_rh_e, monthly_t_i_c, humidity: IndoorHumidity,
             critical_rh: float = 0.8) -> FrsiLimit:
    """Minimum temperature factor fRsi,min over the year by the ISO 13788 procedure.

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
    rh_e = _check_rh(_monthly(monthly_rh_e, "monthly_rh_e"), "monthly_rh_e")
    t_i = _monthly(monthly_t_i_c, "monthly_t_i_c", allow_scalar=True)
    crit = float(critical_rh)
    if not 0.0 < crit <= 1.0:
        _check_rh(crit, "critical_rh")
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
    t_si_min = _t_from_p_sat(p_sat_min)
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
                     p_sat_min_pa=p_sat_min, t_si_min_c=t_si_min, frsi_min_monthly=f,
                     critical_rh=crit, method="ISO 13788", skipped_months=skipped,
                     notes=tuple(notes))


def fixed_limit(name: str) -> FrsiLimit:
    """A fixed national fRsi criterion from `FIXED_CRITERIA` as an `FrsiLimit`."""
    if name not in FIXED_CRITERIA:
        raise SurveyError(f"unknown fixed fRsi criterion {name!r}; valid: "
                          f"{', '.join(FIXED_CRITERIA)}", field="criterion")
    value, source = FIXED_CRITERIA[name]
    return FrsiLimit(value=value, critical_month=None, p_i_pa=None, p_sat_min_pa=None,
                     t_si_min_c=None, frsi_min_monthly=None, critical_rh=None,
                     method=f"fixed: {name}", notes=(source,))


# ------------------------------------------------------------------------------ verdict
@dataclass(frozen=True)
class FrsiVerdict:
    """Condensation / mould risk of a surface from its measured fRsi values.

    `risk` is "condensation" (p05 below the condensation limit), "mould" (below the mould
    limit) or "none"; `t_si_design_c` [°C] and `rh_si_design` [-] are the surface state
    predicted at design conditions from `frsi_p05`.
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


_RISK_NOTE = (
    "Assumes steady state: the fRsi measured on the survey night is taken to hold at design "
    "conditions. A single night's reading carries the uncertainty of the U estimate (film "
    "coefficients, emissivity, camera accuracy, the thermal history of the wall); confirm "
    "marginal results by logging.")


def assess_frsi(frsi_values, limit_mould: FrsiLimit, limit_condensation: FrsiLimit,
                design_t_i_c: float, design_t_e_c: float, design_rh_i: float) -> FrsiVerdict:
    """Condensation and mould risk of a surface from its measured temperature factors.

    Parameters
    ----------
    frsi_values : array_like
        Measured fRsi of the surface's pixels [-]; NaN pixels are ignored.
    limit_mould, limit_condensation : FrsiLimit
        Limits for critical surface humidity 0.8 and 1.0 (or fixed criteria).
    design_t_i_c, design_t_e_c : float
        Indoor and outdoor air temperatures of the design (critical-month) case [°C].
    design_rh_i : float
        Indoor relative humidity of the design case [-].

    Notes
    -----
    The 5th percentile fRsi,p05 (robust to single dead or hot pixels) is compared with the
    limits; condensation outranks mould. Predicted surface temperature
    θsi = θe + fRsi,p05 (θi - θe) (the definition of fRsi in [1] rearranged), surface humidity
    φ_si = φ_i p_sat(θi) / p_sat(θsi).

    References
    ----------
    [1] ISO 13788:2012, §5.
    """
    f = np.asarray(frsi_values, dtype=float).ravel()
    f = f[np.isfinite(f)]
    if f.size == 0:
        raise ValueError("no valid fRsi pixels: every value is NaN (is the element mask "
                         "empty or outside the thermogram?)")
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
    rh_i = float(_check_rh(design_rh_i, "design_rh_i"))
    p05 = float(np.percentile(f, 5.0))
    if p05 < limit_condensation.value:
        risk = "condensation"
    elif p05 < limit_mould.value:
        risk = "mould"
    else:
        risk = "none"
    t_si = float(design_t_e_c) + p05 * dt
    rh_si = float(surface_relative_humidity(design_t_i_c, rh_i, t_si))
    return FrsiVerdict(frsi_min=float(f.min()), frsi_p05=p05, risk=risk,
                       limit_mould=float(limit_mould.value),
                       limit_condensation=float(limit_condensation.value),
                       t_si_design_c=t_si, rh_si_design=rh_si, n_pixels=int(f.size),
                       note=_RISK_NOTE)
