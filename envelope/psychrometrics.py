"""Psychrometrics of moist air after ISO 13788:2012 Annex E.

Saturation vapour pressure over water and ice, vapour pressure, relative humidity, dew
(frost) point and the relative humidity at a surface. `envelope.condensation` builds the
temperature-factor limits and risk verdicts on these and re-exports them.

Relative humidity is a fraction 0-1 everywhere, never percent.
"""

from __future__ import annotations

import numpy as np

from envelope.errors import SurveyError

__all__ = [
    "P0_PA",
    "saturation_vapour_pressure",
    "vapour_pressure",
    "relative_humidity",
    "dew_point",
    "surface_relative_humidity",
    "t_from_p_sat",
    "check_rh",
]

P0_PA = 610.5
"""Saturation vapour pressure at 0 °C in the formulas of ISO 13788:2012 Annex E [Pa]."""
_A_WATER, _B_WATER = 17.269, 237.3
_A_ICE, _B_ICE = 21.875, 265.5

# ---------------------------------------------------------------------------- helpers
def _out(x):
    """0-d arrays back to float; arrays unchanged."""
    x = np.asarray(x, dtype=float)
    return float(x) if x.ndim == 0 else x


def check_rh(rh, name: str = "rh"):
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


def t_from_p_sat(p_pa):
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
    return _out(check_rh(rh) * np.asarray(saturation_vapour_pressure(t_c)))


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
    return _out(t_from_p_sat(p))


def surface_relative_humidity(t_air_c, rh_air, t_s_c):
    """Relative humidity [-] at a surface at `t_s_c` [°C] in air at `t_air_c`, `rh_air`.

    Notes
    -----
    φ_s = φ_air p_sat(θ_air) / p_sat(θ_s) (the vapour pressure is the same in the room air
    and at the surface). Not clipped: above 1 means surface condensation.
    """
    return _out(vapour_pressure(t_air_c, rh_air) / np.asarray(saturation_vapour_pressure(t_s_c)))
