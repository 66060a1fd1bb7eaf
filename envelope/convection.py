"""Interior natural convection at room surfaces: correlations, ensembles, conditioning.

The convective coefficient of a room surface is the least certain input of the interior
U-value method. ISO 6946's h_ci (2.5 / 5.0 / 0.7 W m-2 K-1 for horizontal / upward /
downward heat flow) is a design convention that rebuilds the conventional Rsi; at the small
surface–air differences of a survey (0.5–3 K) natural-convection correlations give other
values, and they disagree among themselves. This module holds correlations for the three
configurations of a room surface and groups them into *ensembles* whose members the Monte
Carlo of :mod:`envelope.uncertainty` draws, so that the model spread enters the interval.

Configuration is set by the heat-flow direction, as in ISO 6946:
"horizontal" (walls, windows: vertical surfaces), "upward" (a ceiling colder than the room:
buoyant, unstable flow under it) and "downward" (a floor colder than the room: stably
stratified air above it).

Temperatures in °C, lengths in m, coefficients in W m-2 K-1.
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from envelope import films
from envelope.constants import P_ATM_PA, T0_K
from envelope.geometry import GLAZED_KINDS
from envelope.validity import Check

__all__ = [
    "MODELS",
    "ENSEMBLES",
    "SURFACE_AIR_MIN_K",
    "Ensemble",
    "interior_coefficient",
    "interior_ensemble",
    "ensemble_coefficients",
    "ensemble_spread",
    "check_surface_air",
]

#: Surface–air difference [K] below which an interior U is flagged as ill-conditioned.
#: Why: U scales with the surface–air difference, so a surface-temperature error e moves U
#: by about e / (T_ai - T_si) of itself: at 1 K, 0.1 K (a well-calibrated contact probe) is
#: already 10 % of U; and h_c varies fastest (as dT^(1/4) to dT^(1/3)) where the data behind
#: the correlations are thinnest. Our threshold, from that arithmetic.
SURFACE_AIR_MIN_K = 1.0
#: Relative standard uncertainty of U from the surface temperature alone,
#: u(T_si) / |T_ai - T_si|: above 0.10 "warn" (95 % interval wider than about ±20 %),
#: above 0.25 "fail" (about ±50 %). Our thresholds.
CONDITION_WARN = 0.10
CONDITION_FAIL = 0.25

#: Default hydraulic diameter 4 A / P of a ceiling or floor [m]: a 4 m x 4 m room.
DEFAULT_HYDRAULIC_DIAMETER_M = 4.0

_DIRECTIONS = ("horizontal", "upward", "downward")
G = films.G_M_S2


def _f(x):
    return np.asarray(x, dtype=float)


def _dt(t_s_c, t_a_c):
    return np.abs(_f(t_s_c) - _f(t_a_c))


# ----------------------------------------------------------------------------- correlations
def _iso6946(t_s_c, t_a_c, heat_flow, **_):
    h = films.H_CI_ISO6946[heat_flow]
    return np.broadcast_to(h, np.broadcast_shapes(np.shape(t_s_c), np.shape(t_a_c))).astype(float)


def _churchill_chu(t_s_c, t_a_c, heat_flow, height_m, **_):
    if heat_flow != "horizontal":
        raise ValueError("model 'churchill_chu' is for vertical surfaces (heat_flow 'horizontal')")
    return _f(films.convective_coefficient("churchill_chu", t_s_c=t_s_c, t_a_c=t_a_c,
                                           height_m=height_m))


def _alamdari_hammond(t_s_c, t_a_c, heat_flow, height_m, hydraulic_diameter_m, **_):
    dt = _dt(t_s_c, t_a_c)
    if heat_flow == "horizontal":  # {[a (dT/L)^1/4]^6 + [b dT^1/3]^6}^1/6 without powers
        a, b, x = 1.5, 1.23, dt / height_m
    elif heat_flow == "upward":
        a, b, x = 1.4, 1.63, dt / hydraulic_diameter_m
    else:
        return 0.6 * (dt / hydraulic_diameter_m**2) ** 0.2
    return np.sqrt(np.cbrt(a**6 * x * np.sqrt(x) + b**6 * dt * dt))


def _khalifa_marshall(t_s_c, t_a_c, heat_flow, **_):
    dt = _dt(t_s_c, t_a_c)
    if heat_flow == "horizontal":
        return 2.07 * dt**0.23  # Eq. 3: wall away from the heater
    if heat_flow == "upward":
        return 2.72 * dt**0.13  # Eq. 4: ceiling away from the heater
    raise ValueError("model 'khalifa_marshall' has no correlation for a stably stratified "
                     "surface (heat_flow 'downward')")


def _horizontal_plate(t_s_c, t_a_c, heat_flow, hydraulic_diameter_m, **_):
    if heat_flow == "horizontal":
        raise ValueError("model 'horizontal_plate' is for ceilings and floors "
                         "(heat_flow 'upward' or 'downward')")
    ts, ta = _f(t_s_c), _f(t_a_c)
    length = hydraulic_diameter_m / 4.0  # A / P
    air = films.air_properties(0.5 * (ts + ta))
    ra = G * air.beta * np.abs(ts - ta) * length**3 / (air.nu * air.alpha)
    if heat_flow == "upward":
        nu = np.where(ra <= 1e7, 0.54 * ra**0.25, 0.15 * ra ** (1 / 3))
    else:
        nu = 0.27 * ra**0.25
    return nu * air.k / length


def _iso15099(t_s_c, t_a_c, heat_flow, height_m, tilt_deg, **_):
    if heat_flow != "horizontal":
        raise ValueError("model 'iso15099' is for glazing (heat_flow 'horizontal')")
    ts, ta = _f(t_s_c) + T0_K, _f(t_a_c) + T0_K
    tm = ta + 0.25 * (ts - ta)  # mean film temperature of ISO 15099 §8.3.2.2 [K]
    lam = 2.873e-3 + 7.76e-5 * tm
    mu = 3.723e-6 + 4.94e-8 * tm
    cp = 1002.737 + 1.2324e-2 * tm
    rho = P_ATM_PA * 28.97e-3 / (8.314462618 * tm)
    ra = rho**2 * height_m**3 * G * cp * np.abs(ts - ta) / (tm * mu * lam)
    # glazing colder than the room air; a warmer pane is the mirrored case (180 - tilt)
    theta = np.where(ts > ta, 180.0 - tilt_deg, tilt_deg) * np.ones_like(ra)
    s = np.sin(np.radians(theta))
    with np.errstate(divide="ignore", over="ignore", invalid="ignore"):
        ra_cv = 2.5e5 * (np.exp(0.72 * theta) / s) ** 0.2
        nu_steep = np.where(ra <= ra_cv, 0.56 * (ra * s) ** 0.25,
                            0.13 * (ra ** (1 / 3) - ra_cv ** (1 / 3)) + 0.56 * (ra_cv * s) ** 0.25)
        nu_over = 0.56 * np.clip(ra * s, 1e5, 1e11) ** 0.25
    nu = np.where(theta < 15.0, 0.13 * ra ** (1 / 3),
                  np.where(theta <= 90.0, nu_steep,
                           np.where(theta <= 179.0, nu_over, 0.58 * np.minimum(ra, 1e11) ** 0.2)))
    return nu * lam / height_m


_MODELS = {
    "iso6946": _iso6946,
    "churchill_chu": _churchill_chu,
    "alamdari_hammond": _alamdari_hammond,
    "khalifa_marshall": _khalifa_marshall,
    "horizontal_plate": _horizontal_plate,
    "iso15099": _iso15099,
}
#: Interior convection models accepted by :func:`interior_coefficient`.
MODELS = tuple(_MODELS)


def _check_direction(heat_flow):
    if heat_flow not in _DIRECTIONS:
        raise ValueError(f"unknown heat-flow direction {heat_flow!r}; valid: "
                         f"{', '.join(_DIRECTIONS)}")


def interior_coefficient(model, t_s_c, t_a_c, *, heat_flow="horizontal", height_m=2.5,
                         hydraulic_diameter_m=DEFAULT_HYDRAULIC_DIAMETER_M, tilt_deg=90.0):
    """Interior convective coefficient of a room surface by one model [W m-2 K-1].

    Parameters
    ----------
    model : {"iso6946", "churchill_chu", "alamdari_hammond", "khalifa_marshall", \
"horizontal_plate", "iso15099"}
        See Notes.
    t_s_c, t_a_c : array_like
        Surface and room air temperature [°C]; broadcast together (vectorised).
    heat_flow : {"horizontal", "upward", "downward"}
        Heat-flow direction through the element: "horizontal" for walls and windows
        (vertical surfaces), "upward" for a ceiling (cold surface facing down: unstable),
        "downward" for a floor (cold surface facing up: stably stratified).
    height_m : float
        Height of a vertical surface [m] (Churchill–Chu, Alamdari–Hammond, ISO 15099).
    hydraulic_diameter_m : float
        4 A / P of a ceiling or floor [m] (Alamdari–Hammond; A / P = D / 4 for the plate).
    tilt_deg : float
        Tilt of glazing from horizontal [°] (ISO 15099; 90 for a vertical window).

    Returns
    -------
    numpy.ndarray or float

    Notes
    -----
    "iso6946": h_ci of ISO 6946:2017 Annex C, 2.5 / 5.0 / 0.7 [1].
    "churchill_chu": vertical plate, Nu = {0.825 + 0.387 Ra^(1/6) / [1 + (0.492/Pr)^(9/16)]^(8/27)}^2,
    dry-air properties at the film temperature (Eq. 9.26 of [2]; [3]).
    "alamdari_hammond" [4]: vertical h = {[1.50 (dT/H)^(1/4)]^6 + [1.23 dT^(1/3)]^6}^(1/6);
    unstable horizontal h = {[1.40 (dT/D)^(1/4)]^6 + [1.63 dT^(1/3)]^6}^(1/6); stable
    horizontal h = 0.60 (dT/D^2)^(1/5).
    "khalifa_marshall" [5]: wall away from the heater h = 2.07 dT^0.23 (their Eq. 3),
    ceiling h = 2.72 dT^0.13 (Eq. 4); none for a stable floor.
    "horizontal_plate": textbook plate correlations with L = A/P: cold plate facing down
    (unstable) Nu = 0.54 Ra^(1/4) (Ra <= 1e7), 0.15 Ra^(1/3) above (Lloyd & Moran, Eqs.
    9.30–9.31 of [2]); cold plate facing up (stable) Nu = 0.27 Ra^(1/4) (Eq. 9.32 of [2]).
    "iso15099": interior glazing of ISO 15099:2003 §8.3.2.2 with the air properties of its
    Annex B as linear fits in the mean film temperature T_a + (T_s - T_a)/4 (from memory,
    after [6]): Nu = 0.56 (Ra sin t)^(1/4) below Ra_cv = 2.5e5 (e^(0.72 t)/sin t)^(1/5),
    0.13 (Ra^(1/3) - Ra_cv^(1/3)) + 0.56 (Ra_cv sin t)^(1/4) above.

    The constants of [4] and [5] were fitted to dT in K and lengths in m; dT is
    |T_s - T_a|.

    References
    ----------
    [1] ISO 6946:2017, Annex C.
    [2] Incropera, F. P., DeWitt, D. P., Bergman, T. L., Lavine, A. S., Fundamentals of Heat
        and Mass Transfer, 6th ed., Wiley, 2007, §9.6.
    [3] Churchill, S. W., Chu, H. H. S., Int. J. Heat Mass Transfer 18 (1975) 1323-1329,
        doi:10.1016/0017-9310(75)90243-4.
    [4] Alamdari, F., Hammond, G. P., Improved data correlations for buoyancy-driven
        convection in rooms, Building Services Engineering Research and Technology 4 (1983)
        106-112, doi:10.1177/014362448300400304.
    [5] Khalifa, A. J. N., Marshall, R. H., Validation of heat transfer coefficients on
        interior building surfaces using a real-sized indoor test cell, Int. J. Heat Mass
        Transfer 33 (1990) 2219-2236, doi:10.1016/0017-9310(90)90122-B.
    [6] ISO 15099:2003, Thermal performance of windows, doors and shading devices --
        Detailed calculations, §8.3.2.2 and Annex B.

    Examples
    --------
    >>> round(float(interior_coefficient("alamdari_hammond", 19.0, 21.0)), 2)
    1.67
    """
    _check_direction(heat_flow)
    if height_m <= 0 or hydraulic_diameter_m <= 0:
        raise ValueError(f"height_m and hydraulic_diameter_m must be positive, got {height_m}, "
                         f"{hydraulic_diameter_m}")
    func = _MODELS.get(model)
    if func is None:
        raise ValueError(f"unknown interior convection model {model!r}; valid: "
                         f"{', '.join(sorted(_MODELS))}")
    out = np.asarray(func(t_s_c, t_a_c, heat_flow=heat_flow, height_m=float(height_m),
                          hydraulic_diameter_m=float(hydraulic_diameter_m),
                          tilt_deg=float(tilt_deg)), dtype=float)
    return out if out.ndim else float(out)


# ----------------------------------------------------------------------------- ensembles
#: Default members per configuration (equal weights). ISO 6946's 5.0 for upward heat flow is
#: left out of the ceiling ensemble: it is a design convention for Rsi = 0.10, about 2.5
#: times what every natural-convection correlation gives at survey differences, and would
#: bias the mean; a user can still fix ``model="iso6946"``.
ENSEMBLES = {
    "wall": ("churchill_chu", "alamdari_hammond", "khalifa_marshall", "iso6946"),
    "window": ("churchill_chu", "iso15099", "alamdari_hammond", "iso6946"),
    "ceiling": ("alamdari_hammond", "khalifa_marshall", "horizontal_plate"),
    "floor": ("alamdari_hammond", "horizontal_plate", "iso6946"),
}
_WINDOW_KINDS = GLAZED_KINDS


@dataclass(frozen=True)
class Ensemble:
    """A set of interior convection models for one surface, drawn with equal weights.

    Attributes
    ----------
    name : str
        Key shared by every surface of the same configuration ("wall", "window", "ceiling",
        "floor", or "fixed:<model>"): the Monte Carlo draws one member per trial for each
        name, so surfaces of one kind share their model error.
    members : tuple of str
        Model names of :func:`interior_coefficient`.
    heat_flow, height_m, hydraulic_diameter_m, tilt_deg
        Geometry passed to every member.
    band : float
        Half-width of a rectangular factor 1 ± band applied to the chosen member: each
        correlation's own scatter about the data it was fitted to.
    """

    name: str
    members: tuple[str, ...]
    heat_flow: str = "horizontal"
    height_m: float = 2.5
    hydraulic_diameter_m: float = DEFAULT_HYDRAULIC_DIAMETER_M
    tilt_deg: float = 90.0
    band: float = 0.1

    def __post_init__(self):
        _check_direction(self.heat_flow)
        if not self.members:
            raise ValueError("an ensemble needs at least one member")
        for m in self.members:
            if m not in _MODELS:
                raise ValueError(f"unknown interior convection model {m!r}; valid: "
                                 f"{', '.join(sorted(_MODELS))}")
        if not 0 <= self.band < 1:
            raise ValueError(f"band must lie in [0, 1), got {self.band}")


def interior_ensemble(kind="wall", heat_flow="horizontal", *, height_m=2.5,
                      hydraulic_diameter_m=None, tilt_deg=90.0, model=None, band=0.1):
    """The convection ensemble that fits a surface's orientation and heat-flow direction.

    Parameters
    ----------
    kind : str
        Element kind ("wall", "window", "door", "ceiling", "roof", "floor"...); windows get
        the glazing ensemble, everything else is classed by ``heat_flow``.
    heat_flow : {"horizontal", "upward", "downward"}
    height_m : float
        Height of a vertical surface [m].
    hydraulic_diameter_m : float, optional
        4 A / P of a ceiling or floor [m]; default 4 m (a 4 m x 4 m room).
    tilt_deg : float
        Tilt of glazing [°].
    model : str, optional
        Fix one model (a single-member ensemble named "fixed:<model>").
    band : float
        Rectangular half-width of each member's own scatter (default 0.10, our choice:
        natural-convection correlations reproduce their own data to about 10–20 %).

    Returns
    -------
    Ensemble

    Examples
    --------
    >>> interior_ensemble("floor", "downward").members
    ('alamdari_hammond', 'horizontal_plate', 'iso6946')
    """
    _check_direction(heat_flow)
    d = DEFAULT_HYDRAULIC_DIAMETER_M if hydraulic_diameter_m is None else hydraulic_diameter_m
    geo = dict(heat_flow=heat_flow, height_m=height_m, hydraulic_diameter_m=d,
               tilt_deg=tilt_deg, band=band)
    if model is not None:
        return Ensemble(f"fixed:{model}", (model,), **geo)
    if kind in _WINDOW_KINDS and heat_flow == "horizontal":
        name = "window"
    else:
        name = {"horizontal": "wall", "upward": "ceiling", "downward": "floor"}[heat_flow]
    return Ensemble(name, ENSEMBLES[name], **geo)


def ensemble_coefficients(ensemble: Ensemble, t_s_c, t_a_c):
    """h_c of every member at the given temperatures [W m-2 K-1].

    Returns
    -------
    numpy.ndarray
        Shape ``(n_members, *broadcast(t_s_c, t_a_c))``.
    """
    kw = dict(heat_flow=ensemble.heat_flow, height_m=ensemble.height_m,
              hydraulic_diameter_m=ensemble.hydraulic_diameter_m, tilt_deg=ensemble.tilt_deg)
    shape = np.broadcast_shapes(np.shape(t_s_c), np.shape(t_a_c))
    return np.stack([np.broadcast_to(interior_coefficient(m, t_s_c, t_a_c, **kw), shape)
                     for m in ensemble.members])


def ensemble_spread(ensemble: Ensemble, t_s_c, t_a_c):
    """Mean, standard deviation and members of the ensemble at one state.

    The distribution is the equal-weight mixture of the members, each times a rectangular
    factor 1 ± band: variance = mean of (h_m^2 (1 + band^2/3)) - mean^2.

    Returns
    -------
    (float, float, dict)
        h_c mean [W m-2 K-1], its standard deviation, and {member: h_c}.
    """
    h = ensemble_coefficients(ensemble, float(t_s_c), float(t_a_c))
    mean = float(np.mean(h))
    var = float(np.mean(h**2) * (1.0 + ensemble.band**2 / 3.0) - mean**2)
    return mean, math.sqrt(max(var, 0.0)), dict(zip(ensemble.members, map(float, h), strict=True))


# ----------------------------------------------------------------------------- conditioning
def check_surface_air(t_si_c, t_ai_c, t_si_std_k=None):
    """Is the surface–air difference large enough for a well-conditioned interior U?

    Parameters
    ----------
    t_si_c, t_ai_c : float
        Surface (zone mean) and room air temperature [°C].
    t_si_std_k : float, optional
        Standard uncertainty of the surface temperature [K].

    Returns
    -------
    envelope.validity.Check
        Named "surface_air"; value |T_ai - T_si| [K].

    Notes
    -----
    U = [h_c (T_ai - T_si) + h_r (T_r - T_si)] / (T_ai - T_ae), so an error e in T_si moves
    U by roughly e / |T_ai - T_si| of itself. "warn" below ``SURFACE_AIR_MIN_K`` (1 K) or when
    u(T_si) / |T_ai - T_si| > 0.10; "fail" when that ratio exceeds 0.25.
    """
    d = abs(float(t_ai_c) - float(t_si_c))
    ratio = float("nan") if t_si_std_k is None else float(t_si_std_k) / max(d, 1e-9)
    if np.isfinite(ratio) and ratio > CONDITION_FAIL:
        status = "fail"
    elif d < SURFACE_AIR_MIN_K or (np.isfinite(ratio) and ratio > CONDITION_WARN):
        status = "warn"
    else:
        status = "pass"
    rule = (f"|T_ai - T_si| >= {SURFACE_AIR_MIN_K:g} K and u(T_si)/|T_ai - T_si| <= "
            f"{CONDITION_WARN:g} pass; ratio > {CONDITION_FAIL:g} fail (ours: the surface "
            "temperature's error enters U divided by the surface–air difference)")
    return Check("surface_air", status, d, "K", rule, scope="element")
