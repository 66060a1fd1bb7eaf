"""An independent 1-D transient conduction model of a layered wall (test reference only).

Finite volumes of about ``cell_m``, Crank-Nicolson in time. Not the project's forward model:
the tool never integrates the heat equation in time, so a wall simulated here carries the
storage, the lag and (with ``interior``) the nonlinear interior film that a real heavy wall
has. Its steady state is the series-resistance U of ISO 6946 when the films are fixed.
"""

from __future__ import annotations

from typing import NamedTuple

import numpy as np
from scipy.linalg import lu_factor, lu_solve

R_SI, R_SE = 0.13, 0.04  # ISO 6946:2017 Table 7


class Transient(NamedTuple):
    times_h: np.ndarray
    q_w_m2: np.ndarray  # heat flux into the wall at its interior surface
    t_si_c: np.ndarray  # interior surface temperature
    u_w_m2k: float  # steady U with the fixed films R_SI, R_SE


def wall_fd(layers, t_ai, t_ae, t_end_h, dt_s=120.0, cell_m=0.01, interior=None) -> Transient:
    """Interior surface flux and temperature of a layered wall driven by air temperatures.

    Parameters
    ----------
    layers : sequence of (thickness m, conductivity W/mK, density kg/m3, specific heat J/kgK)
        Inside to outside.
    t_ai, t_ae : callable time_h -> °C
        Indoor and outdoor air.
    interior : callable (t_surface_c, time_h) -> (h_w_m2k, t_env_c), optional
        A nonlinear interior film (a convection correlation plus long-wave exchange),
        re-evaluated each step at the last surface temperature; default the fixed R_SI to
        the indoor air. The exterior film is R_SE to the outdoor air.

    Starts from the steady state of the t = 0 temperatures (fixed films).
    """
    dx, k, c = [], [], []
    for d, lam, rho, cp in layers:
        n = max(2, round(d / cell_m))
        dx += [d / n] * n
        k += [lam] * n
        c += [rho * cp * d / n] * n
    dx, k, c = map(np.array, (dx, k, c))
    n = dx.size
    g = 1.0 / (dx[:-1] / (2 * k[:-1]) + dx[1:] / (2 * k[1:]))
    g0 = 2 * k[0] / dx[0]  # surface to the first node's centre
    g_out = 1.0 / (R_SE + dx[-1] / (2 * k[-1]))
    base = np.zeros((n, n))
    idx = np.arange(n - 1)
    base[idx, idx] += g
    base[idx + 1, idx + 1] += g
    base[idx, idx + 1] -= g
    base[idx + 1, idx] -= g
    base[-1, -1] += g_out
    cap = np.diag(c / dt_s)

    def film(t_s, t):
        return (1.0 / R_SI, float(t_ai(t))) if interior is None else interior(t_s, t)

    def system(h):
        kmat = base.copy()
        kmat[0, 0] += h * g0 / (h + g0)
        return kmat

    def b(t, h, t_env):
        v = np.zeros(n)
        v[0], v[-1] = h * g0 / (h + g0) * t_env, g_out * float(t_ae(t))
        return v

    def surface(temp0, h, t_env):
        return (h * t_env + g0 * temp0) / (h + g0)

    h, t_env = 1.0 / R_SI, float(t_ai(0.0))
    temp = np.linalg.solve(system(h), b(0.0, h, t_env))
    t_s = surface(temp[0], h, t_env)
    h, t_env = film(t_s, 0.0)
    kmat = system(h)
    lu = None if interior is not None else lu_factor(cap + 0.5 * kmat)
    steps = round(t_end_h * 3600 / dt_s)
    times = np.arange(steps + 1) * dt_s / 3600
    q, ts = np.empty(steps + 1), np.empty(steps + 1)
    ts[0] = surface(temp[0], h, t_env)
    q[0] = h * (t_env - ts[0])
    for s in range(1, steps + 1):
        t0, t1 = times[s - 1], times[s]
        h1, env1 = film(ts[s - 1], t1)
        k1 = kmat if interior is None else system(h1)
        rhs = (cap - 0.5 * kmat) @ temp + 0.5 * (b(t0, h, t_env) + b(t1, h1, env1))
        temp = (lu_solve(lu, rhs) if lu is not None
                else np.linalg.solve(cap + 0.5 * k1, rhs))
        h, t_env, kmat = h1, env1, k1
        ts[s] = surface(temp[0], h, t_env)
        q[s] = h * (t_env - ts[s])
    u = 1.0 / (R_SI + sum(d / lam for d, lam, _, _ in layers) + R_SE)
    return Transient(times, q, ts, u)
