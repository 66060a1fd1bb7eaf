"""Survey validity checks: each returns a `Check` (pass / warn / fail) that carries its rule.

A failed check makes a verdict inconclusive (:func:`downgrade`); it never hides the number.
Thresholds are module constants with their source. "Common practice" marks a trade rule of
thumb found across survey guides rather than a normative limit; where EN 13187 is named, its
text was not at hand here and the value is given from memory.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from dataclasses import dataclass

import numpy as np

STATUSES = ("pass", "warn", "fail")

#: Indoor–outdoor air difference [K]: >= 10 pass (common practice; EN 13187 asks for a
#: sufficient difference, 10 K is the usual figure, from memory), 5–10 warn, < 5 fail.
DELTA_T_PASS_K = 10.0
DELTA_T_WARN_K = 5.0
#: Hours without direct sun on the surveyed surface before the survey (common practice):
#: pass at or above the value, warn at or above half of it, fail below.
SUN_PASS_H = {"exterior": 12.0, "interior": 8.0}
#: Wind speed [m/s]: <= 3 pass, <= 5 warn, > 5 fail (common practice; 5 m/s is the usual
#: upper limit for quantitative exterior surveys).
WIND_PASS_M_S = 3.0
WIND_WARN_M_S = 5.0
#: Hours since rain: surfaces must be dry; < 2 h fail, 2–6 h warn, >= 6 h pass (common
#: practice: evaporating water cools a surface and raises its emissivity).
RAIN_FAIL_H = 2.0
RAIN_PASS_H = 6.0
#: Range of a logged temperature over the preceding hours [K]: <= 3 pass, <= 5 warn,
#: > 5 fail (common practice, after the stability requirement of EN 13187, from memory).
DRIFT_PASS_K = 3.0
DRIFT_WARN_K = 5.0
#: Minimum span of the drift history [h] before it can pass (common practice).
DRIFT_MIN_SPAN_H = 3.0
#: Viewing angle from the surface normal [°]: <= 60 pass (emissivity of non-metals is
#: nearly constant up to about 60°; common practice), <= 75 warn, > 75 fail.
VIEW_PASS_DEG = 60.0
VIEW_WARN_DEG = 75.0


@dataclass(frozen=True)
class Check:
    """One validity check.

    Attributes
    ----------
    name : str
    status : {"pass", "warn", "fail"}
    value : float
        The measured quantity the rule was applied to (NaN if unknown).
    unit : str
    rule : str
        The rule in words, with its source.
    scope : str
        What the check applies to ("survey", "time_series", "element"...).
    """

    name: str
    status: str
    value: float
    unit: str
    rule: str
    scope: str = "survey"

    def __post_init__(self):
        if self.status not in STATUSES:
            raise ValueError(f"Check.status must be one of {STATUSES}, got {self.status!r}")


def _grade(value, pass_ok: bool, warn_ok: bool) -> str:
    if not np.isfinite(value):
        return "fail"
    return "pass" if pass_ok else ("warn" if warn_ok else "fail")


def check_delta_t(t_i, t_e):
    """Indoor–outdoor air temperature difference (>= 10 K pass, 5–10 warn, < 5 fail)."""
    dt = abs(float(np.mean(t_i)) - float(np.mean(t_e)))
    return Check(
        "delta_t",
        _grade(dt, dt >= DELTA_T_PASS_K, dt >= DELTA_T_WARN_K),
        dt,
        "K",
        f"|T_i - T_e| >= {DELTA_T_PASS_K:g} K pass, >= {DELTA_T_WARN_K:g} K warn (common practice)",
    )


def check_sun(hours_since_sun, side="exterior"):
    """Hours since direct sun last fell on the surveyed surface (or its other face).

    Parameters
    ----------
    hours_since_sun : float
        Hours since the surface was last in direct sun; ``inf`` if not at all that day.
    side : {"exterior", "interior"}
        Side the camera looked at (the interior face responds later).
    """
    if side not in SUN_PASS_H:
        raise ValueError(f"side must be one of {tuple(SUN_PASS_H)}, got {side!r}")
    h = float(hours_since_sun)
    need = SUN_PASS_H[side]
    status = (
        "fail" if np.isnan(h) else ("pass" if h >= need else "warn" if h >= need / 2 else "fail")
    )
    return Check(
        "sun",
        status,
        h,
        "h",
        f"no direct sun for >= {need:g} h before a {side} survey pass, >= {need / 2:g} h warn "
        "(common practice)",
    )


def check_wind(wind_m_s):
    """Wind speed near the surveyed façade (<= 3 m/s pass, <= 5 warn, > 5 fail)."""
    v = float(wind_m_s)
    return Check(
        "wind",
        _grade(v, v <= WIND_PASS_M_S, v <= WIND_WARN_M_S),
        v,
        "m/s",
        f"wind <= {WIND_PASS_M_S:g} m/s pass, <= {WIND_WARN_M_S:g} m/s warn (common practice)",
    )


def check_rain(rain, hours_since_rain=None):
    """Rain now or recently: wet surfaces cool by evaporation.

    Parameters
    ----------
    rain : bool
        Raining (or surfaces visibly wet) during the survey.
    hours_since_rain : float, optional
        Hours since the last rain; None when no rain was recorded that day (treated as dry).
    """
    h = np.inf if hours_since_rain is None else float(hours_since_rain)
    if rain:
        status, h = "fail", 0.0
    else:
        status = "pass" if h >= RAIN_PASS_H else "warn" if h >= RAIN_FAIL_H else "fail"
    return Check(
        "rain",
        status,
        h,
        "h",
        f"dry surfaces: no rain for >= {RAIN_PASS_H:g} h pass, >= {RAIN_FAIL_H:g} h warn "
        "(common practice)",
    )


def check_drift(history_c: Sequence[float], interval_h: float, name="drift"):
    """Stability of a logged temperature over the preceding hours.

    Parameters
    ----------
    history_c : sequence of float
        Readings [°C] at a regular interval, oldest first, ending at the survey.
    interval_h : float
        Interval between readings [h].
    name : str
        Check name (e.g. "drift_outdoor", "drift_indoor").

    Notes
    -----
    The value is the range (max - min) of the history. A history spanning less than
    ``DRIFT_MIN_SPAN_H`` cannot pass (it is at best "warn").
    """
    h = np.asarray(history_c, dtype=float)
    h = h[np.isfinite(h)]
    if interval_h <= 0:
        raise ValueError(f"interval_h must be positive, got {interval_h}")
    span = (h.size - 1) * interval_h if h.size else 0.0
    rng = float(np.ptp(h)) if h.size >= 2 else float("nan")
    status = _grade(rng, rng <= DRIFT_PASS_K, rng <= DRIFT_WARN_K)
    if status == "pass" and span < DRIFT_MIN_SPAN_H:
        status = "warn"
    return Check(
        name,
        status,
        rng,
        "K",
        f"range over the preceding {span:g} h <= {DRIFT_PASS_K:g} K pass, <= {DRIFT_WARN_K:g} K "
        f"warn; history of >= {DRIFT_MIN_SPAN_H:g} h needed to pass (common practice)",
    )


def check_view_angle(angle_deg):
    """Angle between the line of sight and the surface normal (<= 60° pass, <= 75° warn)."""
    a = abs(float(angle_deg))
    return Check(
        "view_angle",
        _grade(a, a <= VIEW_PASS_DEG, a <= VIEW_WARN_DEG),
        a,
        "deg",
        f"view within {VIEW_PASS_DEG:g}° of the normal pass, {VIEW_WARN_DEG:g}° warn "
        "(common practice: emissivity falls off at grazing angles)",
    )


def check_night_sky(t_se_mean_c, t_ae_c, side="exterior"):
    """Exterior surface colder than the outdoor air (radiative night-sky undercooling).

    For the simple exterior method, whose heat balance carries convection to the air, a
    surface below air temperature means the sky term dominates: the exterior method would
    give a meaningless or negative U. Not applicable (pass) on the interior side.
    """
    d = float(np.nanmean(t_se_mean_c)) - float(np.mean(t_ae_c))
    if side == "interior":
        return Check("night_sky", "pass", d, "K", "not applicable to an interior survey")
    if side != "exterior":
        raise ValueError(f"side must be 'interior' or 'exterior', got {side!r}")
    return Check(
        "night_sky",
        "pass" if d > 0 else "fail",
        d,
        "K",
        "exterior surface warmer than outdoor air; otherwise the exterior method would give "
        "a meaningless or negative U",
    )


def downgrade(verdict: str, checks: Iterable[Check]) -> str:
    """Verdict after the validity checks: any failed check turns "pass" into "inconclusive".

    Warnings leave the verdict as it is; other verdicts ("fail", "inconclusive") are kept.
    The numbers behind the verdict are never changed here.
    """
    if verdict == "pass" and any(c.status == "fail" for c in checks):
        return "inconclusive"
    return verdict


def worst(checks: Iterable[Check]) -> str:
    """The worst status among checks ("pass" when there are none)."""
    order = {s: i for i, s in enumerate(STATUSES)}
    return max((c.status for c in checks), key=order.__getitem__, default="pass")


#: Areal heat capacity [kJ m-2 K-1] above which ISO 9869-1 treats an element as heavy: its
#: test must then cover whole days (ISO 9869-1:2014 §6.3, value from memory).
HEAVY_KJ_M2K = 20.0
#: Minimum duration of an ISO 9869-1 test [h] (from memory).
SERIES_MIN_H = 72.0
#: Share of the driving temperature difference by which the outdoor temperature the element
#: still answers to (lagged) may differ from the current one: <= 5 % pass (the size of ISO
#: 9869-1's storage criterion, from memory), <= 15 % warn, above fail (ours).
STORAGE_PASS = 0.05
STORAGE_WARN = 0.15


def check_series_period(duration_h, heat_capacity_kj_m2k=None, interval_h=None):
    """ISO 9869-1 period rules for a series: at least 72 h, whole days for heavy elements.

    Parameters
    ----------
    duration_h : float
        Time covered by the series [h].
    heat_capacity_kj_m2k : float, optional
        Areal heat capacity of the element [kJ m-2 K-1]; unknown -> at best "warn".
    interval_h : float, optional
        Sampling interval [h]: the tolerance on "whole days" (default 1 h).

    Returns
    -------
    Check
        Named "iso9869_period"; value the duration in days.

    Notes
    -----
    After ISO 9869-1:2014 §6.3 (from memory): a test lasts at least 72 h; for a heavy
    element (areal heat capacity above 20 kJ/(m2 K)) it lasts a whole number of days so that
    the daily swing of stored heat cancels; a light element may be analysed on night data.
    A night survey therefore fails this check for a heavy wall and says so.
    """
    d = float(duration_h)
    tol = 1.0 if interval_h is None else float(interval_h)
    whole = abs(d - 24.0 * round(d / 24.0)) <= tol and d >= 24.0 - tol
    long_enough = d >= SERIES_MIN_H - tol
    if heat_capacity_kj_m2k is None:
        status = "warn" if long_enough else "fail"
        kind = "heat capacity unknown (heat_capacity_kj_m2k)"
    elif heat_capacity_kj_m2k > HEAVY_KJ_M2K:
        status = "pass" if long_enough and whole else "fail"
        kind = f"heavy element ({heat_capacity_kj_m2k:g} kJ/m²K > {HEAVY_KJ_M2K:g})"
    else:
        status = "pass" if long_enough else "fail"
        kind = f"light element ({heat_capacity_kj_m2k:g} kJ/m²K <= {HEAVY_KJ_M2K:g})"
    return Check("iso9869_period", status, d / 24.0, "d",
                 f"{kind}: >= {SERIES_MIN_H:g} h, whole days for heavy elements "
                 "(ISO 9869-1 §6.3, from memory)", scope="time_series")


def check_storage(t_ai_c, t_ae_c, t_ae_lagged_c, history_span_h=None, tau_h=None):
    """Is the element still giving up (or taking in) stored heat at the survey time?

    Parameters
    ----------
    t_ai_c, t_ae_c : float
        Indoor and outdoor air temperature at the survey [°C].
    t_ae_lagged_c : float
        Outdoor temperature lagged by the element's response
        (:func:`envelope.dynamic.lagged_temperature`) [°C].
    history_span_h, tau_h : float, optional
        Span of the outdoor history and the response time [h]: a history shorter than
        3 tau cannot pass.

    Returns
    -------
    Check
        Named "storage"; value |T_lag - T_ae| / |T_ai - T_lag|, the relative error of a steady
        U referred to the current outdoor temperature.
    """
    denom = abs(float(t_ai_c) - float(t_ae_lagged_c))
    v = abs(float(t_ae_lagged_c) - float(t_ae_c)) / denom if denom > 0 else float("nan")
    status = _grade(v, v <= STORAGE_PASS, v <= STORAGE_WARN)
    short = (history_span_h is not None and tau_h is not None and history_span_h < 3.0 * tau_h)
    if status == "pass" and short:
        status = "warn"
    return Check("storage", status, v, "-",
                 f"outdoor temperature the element answers to (lagged) within {STORAGE_PASS:.0%} "
                 f"of the driving difference pass, {STORAGE_WARN:.0%} warn (ours; 5 % as ISO "
                 "9869-1's storage criterion, from memory); a history shorter than 3 response "
                 "times cannot pass", scope="element")
