"""In-situ thermal transmittance (U-value) from surface temperatures.

Three routes: the interior surface method (heat balance of the warm face seen by the camera),
the exterior surface method (heat balance of the cold face, with sky and ground exchange), and
the average (cumulative-sum) method of ISO 9869-1 applied to a time series of thermograms and
logged air temperatures, with its convergence checks. Element U over the undisturbed reference
zone and over the whole net area come from per-pixel U maps.

All temperatures in °C, heat fluxes in W m-2 (positive from inside to outside), U in
W m-2 K-1.
"""

from __future__ import annotations

from dataclasses import dataclass
from typing import NamedTuple

import numpy as np

from envelope import films
from envelope.films import SIGMA, T0_K
from envelope.validity import Check

#: Relative tolerance of the ISO 9869-1 average-method criteria (±5 %).
ISO9869_TOL = 0.05
#: Minimum duration of the average method [h] (ISO 9869-1, from memory).
ISO9869_MIN_H = 72.0


def _f(x):
    return np.asarray(x, dtype=float)


def _out(x):
    return x if np.ndim(x) else float(x)


# ----------------------------------------------------------------------------- surface methods
def heat_flux_interior(t_si_c, t_ai_c, t_refl_c, emissivity, h_c):
    """Heat flux into the interior surface from the room [W m-2].

    Parameters
    ----------
    t_si_c : array_like
        Interior surface (object) temperature [°C].
    t_ai_c : array_like
        Indoor air temperature [°C].
    t_refl_c : array_like
        Reflected apparent temperature, taken as the mean radiant temperature [°C].
    emissivity : array_like
        Surface emissivity [-].
    h_c : array_like
        Convective coefficient [W m-2 K-1].

    Notes
    -----
    q = h_c (T_ai - T_si) + eps sigma (T_r^4 - T_si^4), temperatures in kelvin in the
    fourth powers: the numerator of Eq. (1) of Fokaides & Kalogirou (2011).

    References
    ----------
    [1] Fokaides, P. A., Kalogirou, S. A., Application of infrared thermography for the
        determination of the overall heat transfer coefficient (U-value) in building
        envelopes, Applied Energy 88 (2011) 4358-4365.
    """
    ts, tr = _f(t_si_c) + T0_K, _f(t_refl_c) + T0_K
    q = _f(h_c) * (_f(t_ai_c) + T0_K - ts) + _f(emissivity) * SIGMA * (tr**4 - ts**4)
    return _out(q)


def u_interior(t_si_c, t_ai_c, t_ae_c, t_refl_c, emissivity, h_c):
    """U-value by the interior surface method [W m-2 K-1].

    Parameters
    ----------
    t_si_c : array_like
        Interior surface (object) temperature [°C].
    t_ai_c, t_ae_c : array_like
        Indoor and outdoor air temperatures [°C].
    t_refl_c : array_like
        Reflected apparent temperature (mean radiant temperature) [°C].
    emissivity : array_like
        Surface emissivity [-].
    h_c : array_like
        Interior convective coefficient [W m-2 K-1] (see :mod:`envelope.films`).

    Returns
    -------
    float or numpy.ndarray
        U; arrays broadcast.

    Notes
    -----
    U = [h_c (T_ai - T_si) + eps sigma (T_r^4 - T_si^4)] / (T_ai - T_ae), Eq. (1) of [1]
    with the radiative term written exactly rather than linearised; see also [2].

    References
    ----------
    [1] Fokaides, P. A., Kalogirou, S. A., Applied Energy 88 (2011) 4358-4365.
    [2] Tejedor, B., Casals, M., Gangolells, M., Roca, X., Quantitative internal infrared
        thermography for determining in-situ thermal behaviour of façades, Energy and
        Buildings 151 (2017) 187-197.

    Examples
    --------
    >>> round(u_interior(18.0, 20.0, 0.0, 20.0, 0.9, 2.5), 3)
    0.759
    """
    q = heat_flux_interior(t_si_c, t_ai_c, t_refl_c, emissivity, h_c)
    with np.errstate(divide="ignore", invalid="ignore"):
        return _out(np.asarray(q) / (_f(t_ai_c) - _f(t_ae_c)))


def heat_flux_exterior(t_se_c, t_ae_c, emissivity, h_c, t_sky_c=None, t_ground_c=None, f_sky=0.5):
    """Heat flux leaving the exterior surface to the outside [W m-2].

    Parameters
    ----------
    t_se_c : array_like
        Exterior surface (object) temperature [°C].
    t_ae_c : array_like
        Outdoor air temperature [°C].
    emissivity : array_like
        Surface emissivity [-].
    h_c : array_like
        Exterior convective coefficient [W m-2 K-1] (e.g. ``films.convective_coefficient(
        "iso6946_wind", wind_m_s=v)``).
    t_sky_c, t_ground_c : array_like, optional
        Sky and ground temperatures [°C]; default the outdoor air (see Notes).
    f_sky : array_like
        Sky view factor [-] (0.5 for a vertical wall, :func:`envelope.films.view_factors`).

    Notes
    -----
    q = h_c (T_se - T_ae) + eps sigma [f_sky (T_se^4 - T_sky^4) + (1 - f_sky)(T_se^4 - T_gnd^4)].
    With T_sky = T_gnd = T_ae and the linearised radiation this is the balance used by
    Albatici & Tonelli [1], who take h_c from the wind speed.

    References
    ----------
    [1] Albatici, R., Tonelli, A. M., Infrared thermovision technique for the assessment of
        thermal transmittance value of opaque building elements on site, Energy and Buildings
        42 (2010) 2177-2183.
    """
    t_sky_c = t_ae_c if t_sky_c is None else t_sky_c
    t_ground_c = films.ground_temperature(t_ae_c) if t_ground_c is None else t_ground_c
    ts = _f(t_se_c) + T0_K
    fs = _f(f_sky)
    rad = fs * (ts**4 - (_f(t_sky_c) + T0_K) ** 4) + (1.0 - fs) * (
        ts**4 - (_f(t_ground_c) + T0_K) ** 4
    )
    return _out(_f(h_c) * (ts - T0_K - _f(t_ae_c)) + _f(emissivity) * SIGMA * rad)


def u_exterior(t_se_c, t_ae_c, t_ai_c, emissivity, h_c, t_sky_c=None, t_ground_c=None, f_sky=0.5):
    """U-value by the exterior surface method [W m-2 K-1].

    Notes
    -----
    U = q / (T_ai - T_ae) with q from :func:`heat_flux_exterior`. On a clear night the
    exterior surface can fall below air temperature (sky undercooling); then q is small or
    negative and U meaningless: see :func:`envelope.validity.check_night_sky`.

    References
    ----------
    [1] Albatici, R., Tonelli, A. M., Energy and Buildings 42 (2010) 2177-2183.
    """
    q = heat_flux_exterior(t_se_c, t_ae_c, emissivity, h_c, t_sky_c, t_ground_c, f_sky)
    with np.errstate(divide="ignore", invalid="ignore"):
        return _out(np.asarray(q) / (_f(t_ai_c) - _f(t_ae_c)))


class UDefinitions(NamedTuple):
    """U of one heat flux by two definitions [W m-2 K-1] and the temperatures behind them."""

    u_air_w_m2k: float
    u_env_w_m2k: float
    t_env_i_c: float
    t_env_e_c: float


def u_by_definition(q_w_m2, t_ai_c, t_ae_c, *, t_mrt_i_c, h_ci, h_ri, t_mrt_e_c=None,
                    h_ce=None, h_re=None):
    """U referred to air temperatures and to environmental temperatures.

    Parameters
    ----------
    q_w_m2 : array_like
        Heat flux through the element (interior surface balance, or measured) [W m-2].
    t_ai_c, t_ae_c : array_like
        Indoor and outdoor air temperatures [°C].
    t_mrt_i_c : array_like
        Mean radiant temperature seen by the interior surface [°C].
    h_ci, h_ri : array_like
        Interior convective and radiative coefficients [W m-2 K-1].
    t_mrt_e_c : array_like, optional
        Radiant temperature outside (f_sky T_sky + (1 - f_sky) T_ground) [°C]; default the
        outdoor air (overcast night, the exterior environment is the air).
    h_ce, h_re : array_like, optional
        Exterior coefficients [W m-2 K-1]; needed when ``t_mrt_e_c`` differs from the air.

    Returns
    -------
    UDefinitions
        (u_air, u_env, T_env,i, T_env,e).

    Notes
    -----
    U_air = q / (T_ai - T_ae): what the in-situ methods of this module return.
    U_env = q / (T_env,i - T_env,e), T_env = (h_c T_air + h_r T_mrt) / (h_c + h_r)
    (:func:`envelope.films.environmental_temperature`): the definition behind design values
    computed with ISO 6946 surface resistances (ISO 6946:2017 Annex C, from memory). Inside,
    surfaces colder than the air make T_env,i < T_ai, so U_env > U_air; a clear sky makes
    T_env,e < T_ae and works the other way. A design (specified) value is compared with U_env.
    """
    t_env_i = films.environmental_temperature(t_ai_c, t_mrt_i_c, h_ci, h_ri)
    if t_mrt_e_c is None:
        t_env_e = _f(t_ae_c)
    else:
        if h_ce is None or h_re is None:
            raise ValueError("h_ce and h_re are needed with t_mrt_e_c")
        t_env_e = films.environmental_temperature(t_ae_c, t_mrt_e_c, h_ce, h_re)
    q = _f(q_w_m2)
    with np.errstate(divide="ignore", invalid="ignore"):
        u_air = q / (_f(t_ai_c) - _f(t_ae_c))
        u_env = q / (_f(t_env_i) - _f(t_env_e))
    return UDefinitions(_out(u_air), _out(u_env), _out(_f(t_env_i)), _out(_f(t_env_e)))


# ----------------------------------------------------------------------------- average method
@dataclass(frozen=True)
class AverageMethodResult:
    """Result of the average (cumulative-sum) method.

    Attributes
    ----------
    u_w_m2k : float
        U at the end of the series.
    times_h : numpy.ndarray
        Sample times [h].
    u_running_w_m2k : numpy.ndarray
        Running value U_n after each sample.
    duration_h : float
        Time covered by the samples [h] (n samples x interval for regular sampling).
    n_samples : int
    checks : tuple of Check
        ISO 9869-1 criteria (names ``iso9869_*``) and our night-series criteria (names
        ``night_*``, not part of the standard).
    """

    u_w_m2k: float
    times_h: np.ndarray
    u_running_w_m2k: np.ndarray
    duration_h: float
    n_samples: int
    checks: tuple[Check, ...]

    @property
    def converged(self) -> bool:
        """True when every ISO 9869-1 criterion that was evaluated passes."""
        iso = [c for c in self.checks if c.name.startswith("iso9869")]
        return all(
            c.status == "pass" for c in iso if c.name != "iso9869_storage" or np.isfinite(c.value)
        )


def _rel(a, b):
    return abs(a - b) / abs(b) if b != 0 and np.isfinite(a) and np.isfinite(b) else float("nan")


def _crit(name, dev, tol, rule, fail_status="fail"):
    status = "pass" if np.isfinite(dev) and dev <= tol else fail_status
    return Check(name, status, float(dev), "-", rule, scope="time_series")


def average_method(times_h, q_w_m2, t_i_c, t_e_c, stored_heat_j_m2=None):
    """U by the average (cumulative-sum) method of ISO 9869-1, with its convergence checks.

    Parameters
    ----------
    times_h : array_like
        Sample times [h], increasing.
    q_w_m2 : array_like
        Heat flux through the element at each sample [W m-2] (from a heat-flux meter or
        from a surface balance such as :func:`heat_flux_interior`).
    t_i_c, t_e_c : array_like
        Indoor and outdoor temperatures at each sample [°C].
    stored_heat_j_m2 : float, optional
        Estimated change of heat stored in the element over the test [J m-2]; when given,
        the storage criterion is evaluated.

    Returns
    -------
    AverageMethodResult

    Notes
    -----
    U_n = sum_j q_j w_j / sum_j (T_ij - T_ej) w_j, with w_j the time each sample stands
    for (the interval to the next sample; the last sample takes the previous interval). For
    regular sampling all w_j are equal and this is the plain ratio of sums of ISO 9869-1.
    Criteria after ISO 9869-1 §7.2.1 (text not at hand, from memory), each ±5 %:
    duration >= 72 h; the end value within ±5 % of the value 24 h earlier; the values from
    the first and the last INT(2 DT/3) days (DT the duration in days) within ±5 %;
    optionally the change of stored heat below 5 % of the heat through the element.
    A short (night) series fails the ISO criteria that it cannot meet, honestly. Our own
    night-series criteria (not the standard's) scale the two ISO convergence rules to the
    series length: ``night_end_vs_third`` compares the end value with the value one third
    of the duration earlier, ``night_two_thirds`` compares the first and the last two thirds
    of the series; both ±5 %, and "warn" rather than "fail" when not met.

    References
    ----------
    [1] ISO 9869-1:2014, Thermal insulation -- Building elements -- In-situ measurement of
        thermal resistance and thermal transmittance -- Part 1: Heat flow meter method.
    """
    t = _f(times_h).ravel()
    q = _f(q_w_m2).ravel()
    dt_ie = (_f(t_i_c) - _f(t_e_c)) * np.ones_like(q)
    if not (t.size == q.size == dt_ie.size) or t.size < 2:
        raise ValueError(
            f"times_h, q_w_m2 and temperatures need the same length >= 2, got {t.size}, {q.size}"
        )
    step = np.diff(t)
    if np.any(step <= 0):
        raise ValueError("times_h must be strictly increasing")
    w = np.append(step, step[-1])
    end = t[0] + np.cumsum(w)  # end of the period covered after each sample
    cq, cd = np.cumsum(q * w), np.cumsum(dt_ie * w)
    with np.errstate(divide="ignore", invalid="ignore"):
        running = cq / cd
    u_end = float(running[-1])
    duration = float(end[-1] - t[0])

    def u_between(start_h, stop_h):
        sel = (t >= start_h - 1e-9) & (end <= stop_h + 1e-9)
        return float(np.sum(q[sel] * w[sel]) / np.sum(dt_ie[sel] * w[sel])) if sel.any() else np.nan

    def u_at(time_h):
        j = np.searchsorted(end, time_h + 1e-9) - 1
        return float(running[j]) if j >= 0 else float("nan")

    checks = [
        Check(
            "iso9869_duration",
            "pass" if duration >= ISO9869_MIN_H - 1e-9 else "fail",
            duration,
            "h",
            f"test duration >= {ISO9869_MIN_H:g} h (ISO 9869-1, from memory)",
            scope="time_series",
        ),
        _crit(
            "iso9869_24h",
            _rel(u_end, u_at(end[-1] - 24.0)),
            ISO9869_TOL,
            "end value within ±5 % of the value 24 h before (ISO 9869-1, from memory)",
        ),
    ]
    n_days = int(2.0 * (duration / 24.0) / 3.0)
    span = 24.0 * n_days
    dev = (
        _rel(u_between(t[0], t[0] + span), u_between(end[-1] - span, end[-1]))
        if n_days >= 1
        else float("nan")
    )
    checks.append(
        _crit(
            "iso9869_two_thirds",
            dev,
            ISO9869_TOL,
            f"first and last INT(2 DT/3) = {n_days} days within ±5 % (ISO 9869-1, from memory)",
        )
    )
    through = float(cq[-1]) * 3600.0
    if stored_heat_j_m2 is None:
        checks.append(
            Check(
                "iso9869_storage",
                "warn",
                float("nan"),
                "-",
                "change of stored heat < 5 % of heat through the element (ISO 9869-1, from "
                "memory): not evaluated, no stored-heat estimate given",
                scope="time_series",
            )
        )
    else:
        checks.append(
            _crit(
                "iso9869_storage",
                abs(stored_heat_j_m2) / abs(through) if through else np.nan,
                ISO9869_TOL,
                "change of stored heat < 5 % of the heat through the element "
                "(ISO 9869-1, from memory)",
            )
        )
    third = duration / 3.0
    checks.append(
        _crit(
            "night_end_vs_third",
            _rel(u_end, u_at(end[-1] - third)),
            ISO9869_TOL,
            "envelope criterion, not ISO 9869-1: end value within ±5 % of the value one "
            "third of the duration earlier",
            fail_status="warn",
        )
    )
    checks.append(
        _crit(
            "night_two_thirds",
            _rel(u_between(t[0], t[0] + 2 * third), u_between(end[-1] - 2 * third, end[-1])),
            ISO9869_TOL,
            "envelope criterion, not ISO 9869-1: first and last two thirds of "
            "the series within ±5 %",
            fail_status="warn",
        )
    )
    return AverageMethodResult(u_end, t, running, duration, int(t.size), tuple(checks))


# ----------------------------------------------------------------------------- element U
