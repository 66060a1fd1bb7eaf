"""Surface film coefficients: long-wave radiation, convection, dry air, sky and view factors.

A surface exchanges heat with its surroundings by convection (coefficient ``h_c``) and by
long-wave radiation (coefficient ``h_r``). The interior U-value method of
:mod:`envelope.transmittance` needs both; this module holds the models for each, the dry-air
properties that the natural-convection correlation needs, a sky temperature for exterior
surfaces and the sky / ground view factors of a tilted surface.

All temperatures are in °C at the interface (kelvin inside), coefficients in W m-2 K-1,
resistances in m2 K W-1.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from envelope.constants import SIGMA, T0_K  # noqa: F401  (re-exported)

#: Standard gravity [m s-2].
G_M_S2 = 9.80665
#: Specific gas constant of dry air [J kg-1 K-1] (R / M with M = 28.9647 g/mol).
R_AIR = 287.05
#: Specific heat of dry air at constant pressure [J kg-1 K-1]; Incropera et al. (2007)
#: Table A.4 gives 1.006 kJ/kg K at 250 K and 1.007 at 300 K, constant to 0.2 % over 250–350 K.
CP_AIR = 1006.0

# Sutherland's law for air (White, Viscous Fluid Flow, 3rd ed., Tables 1-2 and 1-3; from memory).
_MU0, _T_MU0, _S_MU = 1.716e-5, 273.15, 110.4  # Pa s, K, K
_K0, _T_K0, _S_K = 0.0241, 273.15, 194.0  # W m-1 K-1, K, K

#: ISO 6946:2017 Annex C, conventional interior convective coefficients h_ci [W m-2 K-1].
H_CI_ISO6946 = {"upward": 5.0, "horizontal": 2.5, "downward": 0.7}
#: ISO 6946:2017 Table 7, conventional surface resistances [m2 K W-1].
R_SI_ISO6946 = {"upward": 0.10, "horizontal": 0.13, "downward": 0.17}
R_SE_ISO6946 = 0.04

_DIRECTIONS = tuple(H_CI_ISO6946)


def _k(t_c):
    return np.asarray(t_c, dtype=float) + T0_K


def _choose(table: dict, name: str, what: str):
    try:
        return table[name]
    except KeyError:
        raise ValueError(f"unknown {what} {name!r}; valid: {', '.join(sorted(table))}") from None


# ----------------------------------------------------------------------------- radiation
def radiative_coefficient(t_s_c, t_r_c, emissivity, model="exact"):
    """Long-wave radiative film coefficient of a surface [W m-2 K-1].

    Parameters
    ----------
    t_s_c : array_like
        Surface temperature [°C].
    t_r_c : array_like
        Mean radiant (reflected apparent) temperature seen by the surface [°C].
    emissivity : array_like
        Long-wave emissivity of the surface [-], in (0, 1].
    model : {"exact", "linear"}
        "exact" uses eps*sigma*(Ts^4 - Tr^4)/(Ts - Tr); "linear" uses 4*eps*sigma*Tm^3
        with Tm the mean of Ts and Tr (ISO 6946:2017, Annex C: h_r = eps*h_r0).

    Returns
    -------
    numpy.ndarray or float
        h_r such that the net radiative flux leaving the surface is h_r (Ts - Tr).

    Notes
    -----
    Exact: h_r = eps sigma (Ts^2 + Tr^2)(Ts + Tr), which is the factorised form of
    eps sigma (Ts^4 - Tr^4)/(Ts - Tr) and tends to 4 eps sigma T^3 when Ts = Tr, so no
    special case is needed. Linear: h_r0 = 4 sigma Tm^3 (ISO 6946:2017, Annex C). The two
    agree within 1 % for |Ts - Tr| < 20 K near room temperature.

    References
    ----------
    [1] ISO 6946:2017, Building components and building elements -- Thermal resistance and
        thermal transmittance -- Calculation methods, Annex C.

    Examples
    --------
    >>> round(float(radiative_coefficient(10.0, 10.0, 1.0, model="linear")), 2)
    5.15
    """
    ts, tr = _k(t_s_c), _k(t_r_c)
    eps = np.asarray(emissivity, dtype=float)
    funcs = {
        "exact": lambda: eps * SIGMA * (ts**2 + tr**2) * (ts + tr),
        "linear": lambda: 4.0 * eps * SIGMA * (0.5 * (ts + tr)) ** 3,
    }
    out = _choose(funcs, model, "radiative model")()
    return out if out.ndim else float(out)


# ----------------------------------------------------------------------------- dry air
@dataclass(frozen=True)
class AirProperties:
    """Dry-air properties at one state (arrays where the input was an array).

    Attributes: rho [kg m-3], mu [Pa s], k [W m-1 K-1], cp [J kg-1 K-1],
    nu [m2 s-1], alpha [m2 s-1], pr [-], beta [K-1].
    """

    rho: np.ndarray | float
    mu: np.ndarray | float
    k: np.ndarray | float
    cp: np.ndarray | float
    nu: np.ndarray | float
    alpha: np.ndarray | float
    pr: np.ndarray | float
    beta: np.ndarray | float


def air_properties(t_c, p_pa=101325.0):
    """Dry-air thermophysical properties near atmospheric pressure.

    Parameters
    ----------
    t_c : array_like
        Air temperature [°C] (film temperature for convection).
    p_pa : float
        Pressure [Pa].

    Returns
    -------
    AirProperties

    Notes
    -----
    Ideal gas rho = p / (R T) with R = 287.05 J/kg K; Sutherland's law
    mu = mu0 (T/T0)^1.5 (T0 + S)/(T + S) with mu0 = 1.716e-5 Pa s, T0 = 273.15 K,
    S = 110.4 K, and the same form for k with k0 = 0.0241 W/m K, S = 194 K [1]; constant
    cp = 1006 J/kg K [2]; beta = 1/T (ideal gas). Within 1.5 % of the reference equation
    of state (CoolProp) between -20 and 130 °C for mu and k.

    References
    ----------
    [1] White, F. M., Viscous Fluid Flow, 3rd ed., McGraw-Hill, 2006, Tables 1-2 and 1-3
        (Sutherland constants for air).
    [2] Incropera, F. P., DeWitt, D. P., Bergman, T. L., Lavine, A. S., Fundamentals of Heat
        and Mass Transfer, 6th ed., Wiley, 2007, Table A.4.
    """
    t = _k(t_c)
    if np.any(t <= 0):
        raise ValueError(f"air temperature must be above -273.15 °C, got {np.min(t_c)}")
    rho = p_pa / (R_AIR * t)
    t15 = t * np.sqrt(t)  # T^1.5, computed once for both Sutherland laws
    mu = _MU0 / _T_MU0**1.5 * t15 * (_T_MU0 + _S_MU) / (t + _S_MU)
    k = _K0 / _T_K0**1.5 * t15 * (_T_K0 + _S_K) / (t + _S_K)
    cp = np.full_like(t, CP_AIR)
    nu = mu / rho
    alpha = k / (rho * cp)
    vals = dict(rho=rho, mu=mu, k=k, cp=cp, nu=nu, alpha=alpha, pr=nu / alpha, beta=1.0 / t)
    if t.ndim == 0:
        vals = {n: float(v) for n, v in vals.items()}
    return AirProperties(**vals)


# ----------------------------------------------------------------------------- convection
def churchill_chu_nusselt(ra, pr):
    """Mean Nusselt number of a vertical plate in natural convection (all Ra).

    Notes
    -----
    Nu_L = {0.825 + 0.387 Ra_L^(1/6) / [1 + (0.492/Pr)^(9/16)]^(8/27)}^2, Eq. 9.26 of
    Incropera et al. (2007), from Churchill & Chu (1975) [1].

    References
    ----------
    [1] Churchill, S. W., Chu, H. H. S., Correlating equations for laminar and turbulent free
        convection from a vertical plate, Int. J. Heat Mass Transfer 18 (1975) 1323-1329.
    """
    ra = np.asarray(ra, dtype=float)
    psi = (1.0 + (0.492 / np.asarray(pr, dtype=float)) ** (9.0 / 16.0)) ** (8.0 / 27.0)
    return (0.825 + 0.387 * np.sqrt(np.cbrt(np.abs(ra))) / psi) ** 2


def _h_iso6946(direction, **_):
    return _choose(H_CI_ISO6946, direction, "heat-flow direction")


def _h_churchill_chu(t_s_c=None, t_a_c=None, height_m=2.5, **_):
    if t_s_c is None or t_a_c is None:
        raise ValueError("model 'churchill_chu' needs t_s_c and t_a_c")
    if height_m <= 0:
        raise ValueError(f"height_m must be positive, got {height_m}")
    ts, ta = np.asarray(t_s_c, dtype=float), np.asarray(t_a_c, dtype=float)
    air = air_properties(0.5 * (ts + ta))
    ra = G_M_S2 * air.beta * np.abs(ts - ta) * height_m**3 / (air.nu * air.alpha)
    return churchill_chu_nusselt(ra, air.pr) * air.k / height_m


def _wind(wind_m_s):
    if wind_m_s is None:
        raise ValueError("wind models need wind_m_s")
    v = np.asarray(wind_m_s, dtype=float)
    if np.any(v < 0):
        raise ValueError(f"wind_m_s must be >= 0, got {np.min(v)}")
    return v


_CONVECTIVE = {
    "iso6946": _h_iso6946,
    "churchill_chu": _h_churchill_chu,
    "iso6946_wind": lambda wind_m_s=None, **_: 4.0 + 4.0 * _wind(wind_m_s),
    "mcadams": lambda wind_m_s=None, **_: 5.7 + 3.8 * _wind(wind_m_s),
    "watmuff": lambda wind_m_s=None, **_: 2.8 + 3.0 * _wind(wind_m_s),
}
#: Names accepted by :func:`convective_coefficient`.
MODELS = tuple(_CONVECTIVE)


def convective_coefficient(
    model, *, direction="horizontal", t_s_c=None, t_a_c=None, height_m=2.5, wind_m_s=None
):
    """Convective film coefficient h_c [W m-2 K-1].

    Parameters
    ----------
    model : {"iso6946", "churchill_chu", "iso6946_wind", "mcadams", "watmuff", ...}
        Any interior model of :data:`envelope.convection.MODELS` is accepted too
        ("alamdari_hammond", "khalifa_marshall", "horizontal_plate", "iso15099"; ``direction``
        is then the heat-flow direction that sets the configuration).
        "iso6946": conventional interior h_ci of ISO 6946:2017 Annex C (upward 5.0,
        horizontal 2.5, downward 0.7). "churchill_chu": natural convection on a vertical
        plate of height ``height_m`` driven by |t_s_c - t_a_c|, properties at the film
        temperature [2]. "iso6946_wind": exterior h_ce = 4 + 4 v (ISO 6946:2017 Annex C).
        "mcadams": h = 5.7 + 3.8 v (v < 5 m/s), Jürges' data as given by McAdams [3, 4];
        it likely includes some radiation, so it overstates h_c when radiation is counted
        apart. "watmuff": h = 2.8 + 3.0 v, the same data with radiation removed [4, 5].
    direction : {"horizontal", "upward", "downward"}
        Heat-flow direction (used by "iso6946").
    t_s_c, t_a_c : array_like, optional
        Surface and air temperature [°C] (used by "churchill_chu"; vectorised).
    height_m : float
        Plate height [m] (used by "churchill_chu").
    wind_m_s : array_like, optional
        Wind speed near the surface [m s-1] (used by the wind models).

    Returns
    -------
    float or numpy.ndarray

    Notes
    -----
    Churchill–Chu: h = Nu_L k / L with Nu_L from :func:`churchill_chu_nusselt` and
    Ra_L = g beta |Ts - Ta| L^3 / (nu alpha), Eq. 9.26 of [2].

    References
    ----------
    [1] ISO 6946:2017, Annex C.
    [2] Churchill, S. W., Chu, H. H. S., Int. J. Heat Mass Transfer 18 (1975) 1323-1329;
        Incropera et al., Fundamentals of Heat and Mass Transfer, 6th ed., 2007, Eq. 9.26.
    [3] McAdams, W. H., Heat Transmission, 3rd ed., McGraw-Hill, 1954.
    [4] Palyvos, J. A., A survey of wind convection coefficient correlations for building
        envelope energy systems' modeling, Appl. Therm. Eng. 28 (2008) 801-808.
    [5] Duffie, J. A., Beckman, W. A., Solar Engineering of Thermal Processes, 4th ed.,
        Wiley, 2013, Sec. 3.15 (after Watmuff, Charters and Proctor, 1977).
    """
    from envelope import convection

    if model in convection.MODELS and model not in _CONVECTIVE:
        if t_s_c is None or t_a_c is None:
            raise ValueError(f"model {model!r} needs t_s_c and t_a_c")
        return convection.interior_coefficient(model, t_s_c, t_a_c, heat_flow=direction,
                                               height_m=height_m)
    valid = {**dict.fromkeys(convection.MODELS), **_CONVECTIVE}
    func = _choose(valid, model, "convective model")
    out = func(direction=direction, t_s_c=t_s_c, t_a_c=t_a_c, height_m=height_m, wind_m_s=wind_m_s)
    out = np.asarray(out, dtype=float)
    if t_s_c is not None and np.ndim(t_s_c) and out.ndim == 0:
        out = np.full(np.shape(t_s_c), float(out))
    return out if out.ndim else float(out)


# ----------------------------------------------------------------------------- sky
#: Amplitude of the hourly term of Berdahl & Martin (1984) [-]: +0.013 cos(2 pi t / 24).
BM_HOURLY = 0.013
#: Pressure term of Berdahl & Martin (1984) [per mbar above 1000 mbar].
BM_PRESSURE_PER_MBAR = 0.00012
#: Mean of cos(2 pi t / 24) over a night from 18:00 to 06:00 (2 / pi): the night-mean hourly
#: term is +0.013 x 0.637 = +0.0083 (not zero).
NIGHT_MEAN_COS = 2.0 / np.pi


def _clear_sky_berdahl_martin(t_air_k, dew_point_c, hour_local, pressure_pa):
    if dew_point_c is None:
        raise ValueError("sky model 'berdahl_martin' needs dew_point_c")
    x = np.asarray(dew_point_c, dtype=float) / 100.0
    if hour_local is None:
        cos_term = 0.0
    elif isinstance(hour_local, str):
        if hour_local != "night":
            raise ValueError(f"hour_local must be an hour 0-24 or 'night', got {hour_local!r}")
        cos_term = NIGHT_MEAN_COS
    else:
        h = np.asarray(hour_local, dtype=float)
        if np.any((h < 0) | (h > 24)):
            raise ValueError(f"hour_local must lie in [0, 24], got {hour_local}")
        cos_term = np.cos(2.0 * np.pi * h / 24.0)
    p_term = 0.0 if pressure_pa is None else BM_PRESSURE_PER_MBAR * (
        np.asarray(pressure_pa, dtype=float) / 100.0 - 1000.0)
    return 0.711 + 0.56 * x + 0.73 * x**2 + BM_HOURLY * cos_term + p_term


def _clear_sky_swinbank(t_air_k, dew_point_c, hour_local, pressure_pa):
    return (0.0552 * t_air_k**1.5 / t_air_k) ** 4


_SKY = {"berdahl_martin": _clear_sky_berdahl_martin, "swinbank": _clear_sky_swinbank}
SKY_MODELS = tuple(_SKY)


def sky_temperature(
    t_air_c, dew_point_c=None, cloud_oktas=0, model="berdahl_martin", cloud_base_m=2000.0,
    hour_local=None, pressure_pa=None,
):
    """Effective sky temperature for long-wave exchange [°C].

    Parameters
    ----------
    t_air_c : array_like
        Outdoor air temperature near the ground [°C].
    dew_point_c : array_like, optional
        Dew point [°C] (needed by "berdahl_martin").
    cloud_oktas : array_like
        Cloud cover in oktas, 0 (clear) to 8 (overcast).
    model : {"berdahl_martin", "swinbank"}
        Clear-sky emissivity: Berdahl & Martin (1984) [1], Eq. in Notes; Swinbank (1963)
        T_sky = 0.0552 T_air^1.5 (K) [2].
    cloud_base_m : float
        Cloud-base height [m] for the cloud correction (2000 m gives the common factor 0.784).
    hour_local : array_like or "night", optional
        Local solar time of the survey [h, 0–24] for the hourly term of [1] (pass it: the
        pipeline has the survey time); "night" uses the term's mean over 18:00–06:00
        (+0.0083). None leaves the term out, as earlier versions did: at night that sky is
        then 0.8 K (night mean) to 1.2 K (midnight) too cold at 0 °C.
    pressure_pa : array_like, optional
        Station pressure [Pa] for the pressure term of [1]; None leaves it out (the standard
        atmosphere would add +0.0016).

    Returns
    -------
    float or numpy.ndarray

    Notes
    -----
    Berdahl & Martin [1]: eps0 = 0.711 + 0.56 (Tdp/100) + 0.73 (Tdp/100)^2
    + 0.013 cos(2 pi t/24) + 0.00012 (P - 1000), Tdp the dew point in °C, t the hour from
    midnight, P in mbar. The hourly term is largest at midnight (+0.013: about 1.2 K warmer
    sky than without it at 0 °C), zero at 06:00 and 18:00; its mean over the night hours is
    +0.013 x 2/pi. T_sky = eps^(1/4) T_air. Cloud correction of Martin & Berdahl (1984) for
    one opaque layer: eps = eps0 + (1 - eps0) n Gamma, n = oktas / 8,
    Gamma = exp(-z_c / 8200 m) [3].

    References
    ----------
    [1] Berdahl, P., Martin, M., Emissivity of clear skies, Solar Energy 32 (1984) 663-664,
        doi:10.1016/0038-092X(84)90144-0.
    [2] Swinbank, W. C., Long-wave radiation from clear skies, Q. J. R. Meteorol. Soc. 89
        (1963) 339-348.
    [3] Martin, M., Berdahl, P., Characteristics of infrared sky radiation in the United
        States, Solar Energy 33 (1984) 321-336.
    """
    t = _k(t_air_c)
    n = np.asarray(cloud_oktas, dtype=float)
    if np.any((n < 0) | (n > 8)):
        raise ValueError(f"cloud_oktas must be in 0..8, got {cloud_oktas}")
    eps0 = _choose(_SKY, model, "sky model")(t, dew_point_c, hour_local, pressure_pa)
    eps = np.clip(eps0 + (1.0 - eps0) * (n / 8.0) * np.exp(-cloud_base_m / 8200.0), 0.0, 1.0)
    out = eps**0.25 * t - T0_K
    return out if np.ndim(out) else float(out)


def ground_temperature(t_air_c):
    """Ground surface temperature seen by a façade [°C]: the outdoor air temperature.

    On a still, overcast or clear night the ground surface is within a few kelvin of the air;
    with no measurement, taking it equal to the air is the usual simplification (the ground
    term of the exterior balance then has the same form as in Albatici & Tonelli 2010).
    """
    out = np.asarray(t_air_c, dtype=float)
    return out if out.ndim else float(out)


def view_factors(tilt_deg):
    """Sky and ground view factors of a plane surface (f_sky, f_ground).

    Parameters
    ----------
    tilt_deg : array_like
        Tilt from horizontal [°]: 0 facing up, 90 for a vertical wall.

    Notes
    -----
    f_sky = (1 + cos beta)/2, f_ground = (1 - cos beta)/2 for an unobstructed horizon;
    a vertical wall sees half sky and half ground.
    """
    c = np.cos(np.radians(np.asarray(tilt_deg, dtype=float)))
    c = np.where(np.abs(c) < 1e-15, 0.0, c)
    f_sky, f_gnd = 0.5 * (1.0 + c), 0.5 * (1.0 - c)
    if f_sky.ndim == 0:
        return float(f_sky), float(f_gnd)
    return f_sky, f_gnd


# ----------------------------------------------------------------------------- environment
def environmental_temperature(t_air_c, t_mrt_c, h_c, h_r):
    """Environmental (operative-type) temperature of one side of an element [°C].

    Parameters
    ----------
    t_air_c : array_like
        Air temperature [°C].
    t_mrt_c : array_like
        Mean radiant temperature seen by the surface [°C] (exterior: the sky/ground mix
        f_sky T_sky + (1 - f_sky) T_ground).
    h_c, h_r : array_like
        Convective and radiative film coefficients [W m-2 K-1].

    Returns
    -------
    float or numpy.ndarray

    Notes
    -----
    T_env = (h_c T_air + h_r T_mrt) / (h_c + h_r): the single temperature that, with the
    total film coefficient h_c + h_r, gives the same surface heat flux as the separate
    convective and radiative exchanges (linearised radiation). Design U-values of
    ISO 6946 are defined with surface resistances Rsi, Rse = 1 / (h_c + h_r) that refer the
    heat flow to such temperatures on each side (ISO 6946:2017 §6.8 and Annex C, from
    memory); an in-situ U referred to air temperatures differs from it by the radiant
    asymmetry of the survey night.

    References
    ----------
    [1] ISO 6946:2017, Annex C.
    [2] CIBSE Guide A, Environmental design, 2015, §5 (environmental temperature), from memory.
    """
    hc, hr = np.asarray(h_c, dtype=float), np.asarray(h_r, dtype=float)
    if np.any(hc + hr <= 0):
        raise ValueError("h_c + h_r must be positive")
    out = (hc * np.asarray(t_air_c, dtype=float) + hr * np.asarray(t_mrt_c, dtype=float)) / (hc + hr)
    return out if np.ndim(out) else float(out)
