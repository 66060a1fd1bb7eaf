"""Heat storage in the element: the ISO 9869-1 dynamic method and a lag correction.

The average method of ISO 9869-1 (``envelope.transmittance.average_method``) assumes the
heat stored in the element is the same at the start and at the end; on a night whose
outdoor temperature drifts, or a series shorter than the element's response, it is not, and
U comes out biased. Two remedies live here:

- :func:`dynamic_method` — the dynamic analysis of ISO 9869-1 (Annex B; written from memory
  of the standard, not from its text): q is regressed on the temperature difference, the
  temperature rates and exponentially weighted temperature histories with a few time
  constants, and U is the steady part of the fit;
- :func:`lagged_temperature` with :func:`response_time_h` — a first-order lag of the outdoor
  temperature whose mean delay matches the element's (from its layers, or from its areal heat
  capacity), so that a single night's q can be referred to the outdoor temperature the
  interior surface is still answering to.

Times in h, temperatures in °C, q in W m-2 (positive from inside to outside).
"""

from __future__ import annotations

import math
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np
from scipy import stats

from envelope.validity import Check

__all__ = [
    "DynamicResult",
    "dynamic_method",
    "Layer",
    "response_time_h",
    "lagged_temperature",
]


def _f(x):
    return np.asarray(x, dtype=float).ravel()


# ----------------------------------------------------------------------------- dynamic method
@dataclass(frozen=True)
class DynamicResult:
    """Result of :func:`dynamic_method`.

    Attributes
    ----------
    u_w_m2k : float
        Steady-state U of the fit.
    u_std_w_m2k, u_low95_w_m2k, u_high95_w_m2k : float
        Standard uncertainty of U from the least-squares fit and its 95 % interval
        (Student t with M - k degrees of freedom).
    tau_h : tuple of float
        The time constants of the best fit [h].
    k1, k2 : float
        Coefficients of the indoor and outdoor temperature rates [J m-2 K-1].
    residual_std_w_m2 : float
        Standard deviation of the fit residuals.
    n_equations : int
        M, the equations used (samples after the history window).
    u_subset_w_m2k : float
        U from the series without its first quarter (for the stability criterion).
    checks : tuple of Check
        ``dynamic_interval`` (after ISO 9869-1, from memory) and ``dynamic_stability`` (ours).
    """

    u_w_m2k: float
    u_std_w_m2k: float
    u_low95_w_m2k: float
    u_high95_w_m2k: float
    tau_h: tuple[float, ...]
    k1: float
    k2: float
    residual_std_w_m2: float
    n_equations: int
    u_subset_w_m2k: float
    checks: tuple[Check, ...]

    @property
    def converged(self) -> bool:
        return all(c.status == "pass" for c in self.checks)


def _design(t_i, t_e, dt_s, taus_s, p):
    """Design matrix rows i = p+1..N-1 (columns U, K1, K2, P_1..P_m, Q_1..Q_m)."""
    n = t_i.size
    rows = np.arange(p + 1, n)
    rate_i = np.diff(t_i, prepend=np.nan) / dt_s  # backward differences, rate[j] at sample j
    rate_e = np.diff(t_e, prepend=np.nan) / dt_s
    cols = [t_i[rows] - t_e[rows], rate_i[rows], rate_e[rows]]
    lags = np.arange(1, p + 1)  # i - j for j = i-1 ... i-p
    hist_i = np.stack([rate_i[rows - k] for k in lags], axis=1)
    hist_e = np.stack([rate_e[rows - k] for k in lags], axis=1)
    for series in (hist_i, hist_e):
        for tau in taus_s:
            beta = math.exp(-dt_s / tau)
            cols.append(series @ ((1.0 - beta) * beta**lags))
    return np.stack(cols, axis=1)


def _fit(q, t_i, t_e, dt_s, taus_s, p):
    x = _design(t_i, t_e, dt_s, taus_s, p)
    y = q[p + 1:]
    scale = np.linalg.norm(x, axis=0)
    scale[scale == 0] = 1.0
    coef, *_ = np.linalg.lstsq(x / scale, y, rcond=None)
    coef = coef / scale
    res = y - x @ coef
    return coef, res, x


def dynamic_method(times_h, q_w_m2, t_i_c, t_e_c, *, n_tau=2, ratio=5.0, history_h=None,
                   tau_grid_h=None, tol=0.05) -> DynamicResult:
    """U by the dynamic method of ISO 9869-1 (Annex B, from memory).

    Parameters
    ----------
    times_h : array_like
        Sample times [h], evenly spaced.
    q_w_m2 : array_like
        Heat flux through the interior surface [W m-2].
    t_i_c, t_e_c : array_like
        Interior and exterior temperatures [°C] (air or surface; U refers to them).
    n_tau : int
        Number m of time constants (1–3).
    ratio : float
        tau_{n+1} = tau_n / ratio.
    history_h : float, optional
        History window p dt [h]; default half the series (the regression then uses the
        second half as equations; a shorter window truncates the element's memory).
    tau_grid_h : array_like, optional
        Trial values of the longest time constant [h]; default 30 values log-spaced from
        2 dt to history_h / 3 (so the weights have decayed to e^-3 at the window's end).
    tol : float
        Relative tolerance of the criteria (0.05).

    Returns
    -------
    DynamicResult

    Notes
    -----
    For i = p+1 .. N-1 (M = N - p - 1 equations), with T' the backward-difference rate:
    q_i = U (T_I,i - T_E,i) + K1 T'_I,i + K2 T'_E,i
    + sum_n P_n sum_{k=1..p} T'_I,i-k (1 - b_n) b_n^k + sum_n Q_n sum_{k=1..p} T'_E,i-k (1 - b_n) b_n^k,
    b_n = exp(-dt / tau_n): the rates and their exponentially weighted histories carry the
    stored heat and vanish in steady state, where q = U (T_I - T_E). The 2m + 3 unknowns are found by
    linear least squares (columns scaled) for each trial tau_1; the tau_1 with the smallest
    residual sum of squares S^2 is kept. u(U) = sqrt(S^2 / (M - 2m - 3) [(X'X)^-1]_11) and the
    95 % interval uses Student's t with M - 2m - 3 degrees of freedom (the usual least-squares
    statistic; the standard states an equivalent form). That interval is the fit's own: it
    treats residuals as random, so it leaves out the measurement uncertainty of q and the
    temperatures, and the model's truncation; propagate those apart.

    Criteria: ``dynamic_interval``, the 95 % half-width at most 5 % of U (after ISO 9869-1,
    from memory); ``dynamic_stability``, U from the series without its first quarter within
    5 % of U (ours, in the spirit of the standard's convergence rules).

    References
    ----------
    [1] ISO 9869-1:2014, Thermal insulation -- Building elements -- In-situ measurement of
        thermal resistance and thermal transmittance -- Part 1: Heat flow meter method,
        Annex B (dynamic analysis method).
    [2] Anderlind, G., Multiple regression analysis of in situ thermal measurements -- Study
        of an attic insulated with 800 mm loose fill insulation, J. Thermal Insul. Build.
        Envelopes 16 (1992) 81-104.
    """
    t, q, ti, te = _f(times_h), _f(q_w_m2), _f(t_i_c), _f(t_e_c)
    ti, te = ti * np.ones_like(q), te * np.ones_like(q)
    if not (t.size == q.size == ti.size == te.size):
        raise ValueError("times_h, q_w_m2, t_i_c and t_e_c need the same length")
    if not 1 <= n_tau <= 3:
        raise ValueError(f"n_tau must be 1, 2 or 3, got {n_tau}")
    if ratio <= 1:
        raise ValueError(f"ratio must exceed 1, got {ratio}")
    step = np.diff(t)
    if t.size < 8 or np.any(step <= 0) or np.ptp(step) > 1e-6 * step.mean():
        raise ValueError("dynamic_method needs >= 8 evenly spaced, increasing samples")
    dt_h = float(step.mean())
    hist = (t[-1] - t[0]) / 2.0 if history_h is None else float(history_h)
    p = max(2, int(round(hist / dt_h)))
    k = 2 * n_tau + 3
    if t.size - p - 1 <= k + 2:
        raise ValueError(f"too few samples: {t.size - p - 1} equations for {k} unknowns")
    grid = (np.geomspace(2 * dt_h, max(p * dt_h / 3.0, 3 * dt_h), 30) if tau_grid_h is None
            else _f(tau_grid_h))
    dt_s = dt_h * 3600.0

    def taus(t1_h):
        return [t1_h * 3600.0 / ratio**n for n in range(n_tau)]

    best = None
    for t1 in grid:
        coef, res, x = _fit(q, ti, te, dt_s, taus(t1), p)
        s2 = float(res @ res)
        if best is None or s2 < best[0]:
            best = (s2, t1, coef, x)
    s2, t1, coef, x = best
    m_eq = x.shape[0]
    dof = m_eq - k
    norms = np.linalg.norm(x, axis=0)
    norms[norms == 0] = 1.0
    xs = x / norms
    cov_s = np.linalg.pinv(xs.T @ xs)
    var_u = s2 / dof * cov_s[0, 0] / norms[0] ** 2
    u_val, u_std = float(coef[0]), math.sqrt(max(var_u, 0.0))
    half = float(stats.t.ppf(0.975, dof)) * u_std
    cut = t.size // 4
    sub = _fit(q[cut:], ti[cut:], te[cut:], dt_s, taus(t1), min(p, (t.size - cut) // 4 + 2))[0]
    u_sub = float(sub[0])
    rel_half = half / abs(u_val) if u_val else float("inf")
    rel_sub = abs(u_sub - u_val) / abs(u_val) if u_val else float("inf")
    checks = (
        Check("dynamic_interval", "pass" if rel_half <= tol else "fail", rel_half, "-",
              f"95 % half-width of U <= {tol:.0%} of U (after ISO 9869-1 Annex B, from memory)",
              scope="time_series"),
        Check("dynamic_stability", "pass" if rel_sub <= tol else "warn", rel_sub, "-",
              f"envelope criterion, not ISO 9869-1: U without the first quarter of the series "
              f"within {tol:.0%}", scope="time_series"),
    )
    return DynamicResult(u_val, u_std, u_val - half, u_val + half,
                         tuple(x / 3600.0 for x in taus(t1)), float(coef[1]), float(coef[2]),
                         math.sqrt(s2 / dof), int(m_eq), u_sub, checks)


# ----------------------------------------------------------------------------- response time
@dataclass(frozen=True)
class Layer:
    """One homogeneous layer: thickness [m], conductivity [W m-1 K-1], density [kg m-3],
    specific heat [J kg-1 K-1]."""

    thickness_m: float
    conductivity_w_mk: float
    density_kg_m3: float
    specific_heat_j_kgk: float


def _mul(a, b):
    """Product of 2x2 matrices whose entries are (c0, c1) polynomials in s, to first order."""
    out = np.zeros((2, 2, 2))
    for i in range(2):
        for j in range(2):
            for k in range(2):
                out[i, j, 0] += a[i, k, 0] * b[k, j, 0]
                out[i, j, 1] += a[i, k, 0] * b[k, j, 1] + a[i, k, 1] * b[k, j, 0]
    return out


def response_time_h(layers: Sequence[Layer] | None = None, *, u_w_m2k=None,
                    heat_capacity_kj_m2k=None, r_si=0.13, r_se=0.04) -> float:
    """Mean delay of the interior heat flux after a change of outdoor temperature [h].

    Parameters
    ----------
    layers : sequence of Layer, optional
        Layers from inside to outside.
    u_w_m2k, heat_capacity_kj_m2k : float, optional
        Without layers: U and the areal heat capacity of the element [kJ m-2 K-1], taken as
        one homogeneous layer of resistance 1/U - r_si - r_se (an approximation: capacity
        outside the insulation delays more, inside it less).
    r_si, r_se : float
        Surface resistances [m2 K W-1] (ISO 6946 Table 7: 0.13, 0.04).

    Notes
    -----
    With the transmission matrix of each layer expanded to first order in the Laplace
    variable s, [[1 + sRC/2, R(1 + sRC/6)], [sC, 1 + sRC/2]] (ISO 13786:2017 §6 gives the
    exact hyperbolic form), and the film resistances [[1, R_s], [0, 1]], the product from
    inside to outside has B(s) = R_tot + s B_1 + ...; the interior flux answers an outdoor
    change through -1/B(s), whose mean delay is B_1 / R_tot. For one homogeneous layer without
    films this is RC/6.

    References
    ----------
    [1] ISO 13786:2017, Thermal performance of building components -- Dynamic thermal
        characteristics -- Calculation methods.
    """
    if layers is None:
        if u_w_m2k is None or heat_capacity_kj_m2k is None:
            raise ValueError("give layers, or u_w_m2k and heat_capacity_kj_m2k")
        if u_w_m2k <= 0 or heat_capacity_kj_m2k < 0:
            raise ValueError("u_w_m2k must be > 0 and heat_capacity_kj_m2k >= 0")
        r_wall = 1.0 / u_w_m2k - r_si - r_se
        if r_wall <= 0:
            raise ValueError(f"1/U - r_si - r_se must be positive, got {r_wall:.3f} m2K/W")
        mats = [(r_wall, heat_capacity_kj_m2k * 1e3)]
    else:
        mats = []
        for lay in layers:
            if min(lay.thickness_m, lay.conductivity_w_mk) <= 0:
                raise ValueError("layer thickness and conductivity must be positive")
            mats.append((lay.thickness_m / lay.conductivity_w_mk,
                         lay.density_kg_m3 * lay.specific_heat_j_kgk * lay.thickness_m))
    film = lambda r: np.array([[[1, 0], [r, 0]], [[0, 0], [1, 0]]], dtype=float)  # noqa: E731
    total = film(r_si)
    for r, c in mats:
        m = np.array([[[1, r * c / 2], [r, r * r * c / 6]], [[0, c], [1, r * c / 2]]])
        total = _mul(total, m)
    total = _mul(total, film(r_se))
    b0, b1 = total[0, 1]
    return float(b1 / b0 / 3600.0)


def lagged_temperature(times_h, t_c, tau_h, t_start_c=None):
    """First-order lag of a temperature history [°C] (exact for piecewise-linear input).

    Parameters
    ----------
    times_h : array_like
        Sample times [h], increasing.
    t_c : array_like
        Temperature at those times [°C].
    tau_h : float
        Time constant [h] (:func:`response_time_h`).
    t_start_c : float, optional
        Lagged value at the first sample; default the first temperature (steady before).

    Returns
    -------
    numpy.ndarray

    Notes
    -----
    y' = (x - y)/tau with x linear between samples: y_1 = x_1 + (y_0 - x_0) E
    - (x_1 - x_0) (tau/dt)(1 - E), E = exp(-dt/tau). Referring q to T_ai - y instead of
    T_ai - T_ae corrects U for the heat still leaving storage after a fall of the outdoor
    temperature, to the extent a first-order lag describes the element.
    """
    t, x = _f(times_h), _f(t_c)
    if t.size != x.size or t.size < 1:
        raise ValueError("times_h and t_c need the same non-zero length")
    if tau_h <= 0:
        raise ValueError(f"tau_h must be positive, got {tau_h}")
    if np.any(np.diff(t) <= 0):
        raise ValueError("times_h must be strictly increasing")
    y = np.empty_like(x)
    y[0] = x[0] if t_start_c is None else float(t_start_c)
    for i in range(1, x.size):
        dt = t[i] - t[i - 1]
        e = math.exp(-dt / tau_h)
        y[i] = x[i] + (y[i - 1] - x[i - 1]) * e - (x[i] - x[i - 1]) * (tau_h / dt) * (1.0 - e)
    return y
