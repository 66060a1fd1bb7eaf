"""Radiometry of a thermal camera: band radiance, the measurement equation and its inverse.

A thermal camera measures the radiance it receives over its spectral band and reports it as a
temperature. This module holds Planck's law integrated over the band (exact series), a fast
band inversion (Sakuma-Hattori equation with a tabulated residual), the measurement equation of
thermography forward and inverse, and undoing the camera's own export settings. The air path's
transmittance is in `envelope.atmosphere`, the emissivity table in `envelope.materials`.

Temperatures are in °C in the public functions unless the name says ``_k``.
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass

import numpy as np
from scipy import constants as _sc
from scipy import optimize, special

from envelope.constants import T0_K
from envelope.materials import MATERIALS, Material, emissivity_for  # noqa: F401 (moved)

DEFAULT_BAND_UM = (7.5, 14.0)
"""Default camera band [µm]: long-wave cameras for buildings work in about 7.5-14 µm."""

_H, _C, _KB = _sc.h, _sc.c, _sc.k
_C1L = 2.0 * _H * _C**2  # first radiation constant for radiance [W m2 sr-1]
_C2 = _H * _C / _KB  # second radiation constant [m K]
_ZERO_C = T0_K
_PI4_15 = math.pi**4 / 15.0
# Coefficients B_k / (k! (k + 3)) of the power series of int_0^x t^3/(e^t - 1) dt, k = 0..30.
_BERN = special.bernoulli(30)
_POW_COEF = tuple(
    (k + 3, float(_BERN[k] / (math.factorial(k) * (k + 3))))
    for k in range(31)
    if k == 1 or k % 2 == 0
)
_EXP_TERMS = 16  # e^{-n x} series terms for x >= 2: truncation below e^{-32} relative
_FIT_RANGE_C = (-60.0, 200.0)  # Sakuma-Hattori least-squares range
_TABLE_RANGE_C = (-100.0, 400.0)  # residual table range (exact to the table accuracy here)
_TABLE_STEP_K = 0.25


def _series_upper(x):
    """int_x^inf t^3 / (e^t - 1) dt for x >= 0 (array), Widger & Woodall (1976)."""
    x = np.asarray(x, dtype=float)
    out = np.empty_like(x)
    small = x < 2.0
    xs = x[small]
    low = np.zeros_like(xs)
    for power, coef in _POW_COEF:
        low += coef * xs**power
    out[small] = _PI4_15 - low
    xl = x[~small]
    finite = np.isfinite(xl)
    xf = xl[finite]
    acc = np.zeros_like(xf)
    for n in range(1, _EXP_TERMS + 1):
        acc += np.exp(-n * xf) * (((xf / n + 3.0 / n**2) * xf + 6.0 / n**3) * xf + 6.0 / n**4)
    big = np.zeros_like(xl)
    big[finite] = acc
    out[~small] = big
    return out


def _check_band(band_um, allow_open=False):
    lo, hi = float(band_um[0]), float(band_um[1])
    ok = 0.0 <= lo < hi if allow_open else 0.0 < lo < hi < math.inf
    if not ok:
        raise ValueError(f"band_um must be (short, long) with 0 < short < long [µm], got {band_um!r}")
    return lo, hi


def spectral_radiance(wavelength_um, t_k):
    """Spectral radiance of a blackbody, Planck's law [W m-2 sr-1 µm-1].

    Parameters
    ----------
    wavelength_um : array_like
        Wavelength in vacuum [µm].
    t_k : array_like
        Temperature [K].

    Notes
    -----
    ``L_lambda = 2 h c^2 / lambda^5 / (exp(h c / (lambda k T)) - 1)`` [1],
    returned per micrometre of wavelength.

    References
    ----------
    [1] M. Planck, The Theory of Heat Radiation, 1914 (transl. M. Masius).
    """
    lam = np.asarray(wavelength_um, dtype=float) * 1e-6
    t = np.asarray(t_k, dtype=float)
    return _C1L / lam**5 / np.expm1(_C2 / (lam * t)) * 1e-6


def band_radiance(t_k, band_um=DEFAULT_BAND_UM):
    """Blackbody radiance integrated over a spectral band [W m-2 sr-1], exact.

    Parameters
    ----------
    t_k : array_like
        Temperature [K]; any shape. Zero gives 0, negative gives NaN.
    band_um : (float, float)
        Band limits [µm]; 0 and ``inf`` are allowed (the full spectrum gives sigma T^4 / pi).

    Notes
    -----
    With ``x = c2 / (lambda k T)`` the band integral is
    ``L = 2 k^4 T^4 / (h^3 c^2) [S(x_long) - S(x_short)]``, ``S(x) = int_x^inf t^3/(e^t-1) dt``.
    S is evaluated with the series of [1]: ``sum_n e^{-nx} (x^3/n + 3x^2/n^2 + 6x/n^3 + 6/n^4)``
    for x >= 2 (16 terms) and ``pi^4/15 - sum_k B_k x^(k+3) / (k! (k+3))`` (Bernoulli numbers)
    for x < 2, both converged below 1e-12 relative.

    References
    ----------
    [1] W. K. Widger and M. P. Woodall, "Integration of the Planck blackbody radiation
        function", Bull. Am. Meteorol. Soc. 57(10), 1217-1219, 1976.
    """
    lo, hi = _check_band(band_um, allow_open=True)
    t = np.asarray(t_k, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        tp = np.where(t > 0, t, 1.0)
        s_long = _series_upper(_C2 / (hi * 1e-6 * tp)) if hi < math.inf else _PI4_15
        s_short = _series_upper(_C2 / (lo * 1e-6 * tp)) if lo > 0 else 0.0
        out = 2.0 * _KB**4 * tp**4 / (_H**3 * _C**2) * (s_long - s_short)
    out = np.where(t > 0, out, np.where(t == 0, 0.0, np.nan))
    return out[()] if out.ndim == 0 else out


@dataclass(frozen=True)
class _BandFit:
    """Sakuma-Hattori constants of one band and its residual tables (internal)."""

    a_m: float
    b_mk: float
    c_w: float
    lo_k: float
    step_k: float
    fwd: np.ndarray  # T - T_sh(T) on the uniform T grid
    inv: np.ndarray  # T - T_sh at uniform T_sh nodes


def _sh_inverse(radiance, a_m, b_mk, c_w):
    return (_C2 / np.log1p(c_w / radiance) - b_mk) / a_m


@functools.lru_cache(maxsize=32)
def _band_fit(band):
    """Least-squares Sakuma-Hattori fit of one band (cached on the band tuple)."""
    t = np.arange(_FIT_RANGE_C[0], _FIT_RANGE_C[1] + 0.25, 0.5) + _ZERO_C
    rad = band_radiance(t, band)
    design = np.stack([t, np.ones_like(t)], axis=1)

    def solve(log_c):
        v = _C2 / np.log1p(np.exp(log_c) / rad)  # = A T + B for the Planck form
        coef, *_ = np.linalg.lstsq(design, v, rcond=None)
        return coef, v

    def rms(log_c):
        (a, b), v = solve(log_c)
        return float(np.sqrt(np.mean(((v - b) / a - t) ** 2)))

    lam = math.sqrt(band[0] * band[1]) * 1e-6
    mid = len(t) // 2
    log_c0 = math.log(rad[mid] * math.expm1(_C2 / (lam * t[mid])))
    grid = log_c0 + np.linspace(-4.0, 4.0, 161)
    best = grid[int(np.nanargmin([rms(g) for g in grid]))]
    res = optimize.minimize_scalar(rms, bounds=(best - 0.05, best + 0.05), method="bounded",
                                   options={"xatol": 1e-10})
    (a, b), _ = solve(res.x)
    c = math.exp(res.x)
    # Residual tables against the exact integral (fine grid, then uniform nodes).
    lo_k, hi_k = _TABLE_RANGE_C[0] + _ZERO_C, _TABLE_RANGE_C[1] + _ZERO_C
    nodes = np.arange(lo_k, hi_k + _TABLE_STEP_K / 2, _TABLE_STEP_K)
    fine = np.linspace(lo_k - 2.0, hi_k + 2.0, 20 * len(nodes))
    t_sh = _sh_inverse(band_radiance(fine, band), a, b, c)
    fwd = np.interp(nodes, fine, fine - t_sh)
    inv = np.interp(nodes, t_sh, fine - t_sh)
    fwd.setflags(write=False)
    inv.setflags(write=False)
    return _BandFit(float(a), float(b), c, float(lo_k), _TABLE_STEP_K, fwd, inv)


def _lerp(table, lo, step, x):
    """Linear interpolation in a uniform table, clamped at the ends (NaN passes)."""
    pos = (x - lo) / step
    with np.errstate(invalid="ignore"):
        pos = np.fmin(np.fmax(pos, 0.0), len(table) - 1.000001)
        idx = pos.astype(np.intp)
    frac = pos - idx
    return table[idx] + frac * (table[idx + 1] - table[idx])


def _fast_radiance(t_k, band):
    """Band radiance from the fitted equation with its residual table [W m-2 sr-1]."""
    f = _band_fit(band)
    t = np.asarray(t_k, dtype=float)
    with np.errstate(invalid="ignore", divide="ignore", over="ignore"):
        t0 = t - _lerp(f.fwd, f.lo_k, f.step_k, t)
        out = f.c_w / np.expm1(_C2 / (f.a_m * t0 + f.b_mk))
    return np.where(t > 0, out, np.nan)


def band_temperature(radiance, band_um=DEFAULT_BAND_UM):
    """Blackbody temperature of a band radiance [K], the fast inverse of `band_radiance`.

    Parameters
    ----------
    radiance : array_like
        Band radiance [W m-2 sr-1]; non-positive values give NaN.
    band_um : (float, float)
        Band limits [µm], finite, short < long.

    Returns
    -------
    ndarray or float
        Temperature [K]; float32 input gives float32 output.

    Notes
    -----
    The Planck form of the Sakuma-Hattori equation ``L = C / (exp(c2 / (A T + B)) - 1)`` ([1],
    [2]) is fitted per band by least squares in temperature on the exact integral over
    -60...+200 °C; its analytic inverse ``T = (c2 / ln(C / L + 1) - B) / A`` is then corrected
    by the residual against the exact integral, tabulated every 0.25 K over -100...+400 °C and
    interpolated linearly. Agreement with `band_radiance` is better than 1e-4 K in that range
    for any band (the equation alone is off by 0.01-0.5 K for broad bands); outside it the
    end correction is held constant.

    References
    ----------
    [1] F. Sakuma and S. Hattori, "Establishing a practical temperature standard by using a
        narrow-band radiation thermometer with a silicon detector", Temperature, Its
        Measurement and Control in Science and Industry 5, 421-427, 1982.
    [2] P. Saunders and D. R. White, "Physical basis of interpolation equations for radiation
        thermometry", Metrologia 40, 195-203, 2003.
    """
    band = _check_band(band_um)
    f = _band_fit(band)
    rad = np.asarray(radiance)
    dtype = np.float32 if rad.dtype == np.float32 else float
    r = rad.astype(float)
    with np.errstate(invalid="ignore", divide="ignore"):
        t0 = _sh_inverse(np.where(r > 0, r, np.nan), f.a_m, f.b_mk, f.c_w)
        out = (t0 + _lerp(f.inv, f.lo_k, f.step_k, t0)).astype(dtype)
    return out[()] if out.ndim == 0 else out


def _fraction(name, given):
    """``given`` as an array once checked to lie in (0, 1], with its least and greatest value."""
    if isinstance(given, (float, int)) and not isinstance(given, bool):
        value = float(given)  # a plain number: no array reductions
        if 0.0 < value <= 1.0:
            return np.asarray(given), value, value
    else:
        v = np.asarray(given)
        if v.dtype.kind in "fiu" and v.size:
            lo, hi = v.min(), v.max()  # NaN fails both comparisons below
            if lo > 0 and hi <= 1:
                return v, float(lo), float(hi)
    raise ValueError(f"{name} must lie in (0, 1], got {given!r}")


def _check_fractions(emissivity, transmittance):
    """Emissivity and transmittance as arrays once checked, and the emissivity's range."""
    eps, e_lo, e_hi = _fraction("emissivity", emissivity)
    tau, _, _ = _fraction("transmittance", transmittance)
    return eps, tau, (e_lo, e_hi)


def _scalar_out(out, like):
    return float(out) if np.ndim(like) == 0 and np.ndim(out) == 0 else out


def apparent_temperature(object_c, emissivity, reflected_c, transmittance=1.0,
                         atmosphere_c=None, band_um=DEFAULT_BAND_UM):
    """Apparent (blackbody-equivalent) temperature a camera sees [°C]: the forward equation.

    Parameters
    ----------
    object_c : array_like
        Object surface temperature [°C].
    emissivity : array_like
        Band emissivity of the surface [-], in (0, 1].
    reflected_c : array_like
        Reflected apparent temperature [°C].
    transmittance : array_like
        Band transmittance of the air path [-], in (0, 1].
    atmosphere_c : array_like, optional
        Air temperature along the path [°C]; None means the reflected temperature.
    band_um : (float, float)
        Camera band [µm].

    Notes
    -----
    ``W = tau eps L(T_obj) + tau (1 - eps) L(T_refl) + (1 - tau) L(T_atm)`` and the apparent
    temperature is ``L^-1(W)`` (measurement equation of thermography [1], with band
    radiance L instead of the camera signal).

    References
    ----------
    [1] W. Minkina and S. Dudzik, Infrared Thermography: Errors and Uncertainties, Wiley, 2009.
    """
    band = _check_band(band_um)
    eps, tau, _ = _check_fractions(emissivity, transmittance)
    atm = reflected_c if atmosphere_c is None else atmosphere_c
    obj = np.asarray(object_c)
    if obj.size >= 2 * _CHUNK and all(np.ndim(v) == 0 for v in (tau, reflected_c, atm)):
        if np.ndim(eps) == 0 and float(eps) == 1.0 and float(tau) == 1.0:
            return obj.astype(np.float32 if obj.dtype == np.float32 else float, copy=True)

        def exact_for(e):
            return ("apparent", e, float(tau), float(reflected_c), float(atm), band)

        dtype = np.float32 if obj.dtype == np.float32 else np.float64
        out = _smooth_fast_path(obj.astype(dtype, copy=False), eps, exact_for)
        if out is not None:
            return out
    out = _apparent_general(obj, eps, tau, reflected_c, atm, band)
    if obj.dtype == np.float32:
        out = np.asarray(out, dtype=np.float32)
    return _scalar_out(out, object_c)


def _apparent_general(object_c, eps, tau, reflected_c, atm, band):
    """The forward equation per pixel, exactly (float64)."""
    w = (tau * eps * _fast_radiance(np.asarray(object_c, float) + _ZERO_C, band)
         + tau * (1 - eps) * _fast_radiance(np.asarray(reflected_c, float) + _ZERO_C, band)
         + (1 - tau) * _fast_radiance(np.asarray(atm, float) + _ZERO_C, band))
    return band_temperature(w, band) - _ZERO_C


def _object_general(apparent_c, eps, tau, reflected_c, atm, band, dtype):
    w = _fast_radiance(np.asarray(apparent_c, float) + _ZERO_C, band)
    rest = (tau * (1 - eps) * _fast_radiance(np.asarray(reflected_c, float) + _ZERO_C, band)
            + (1 - tau) * _fast_radiance(np.asarray(atm, float) + _ZERO_C, band))
    l_obj = (w - rest) / (tau * eps)
    return (band_temperature(l_obj, band) - _ZERO_C).astype(dtype)


_CHUNK = 65536
"""Block of the tabulated path; images of at least two blocks take the fast paths."""
_BLOCK = 1 << 19
"""Elements per block of the polynomial paths (a 640 × 480 frame is one block: numpy's
per-call cost outweighs cache locality at these sizes)."""
_POLY_TOL_K = 2e-5
_SPLIT_TOL_K = 5e-6
"""Fit tolerance of each of the two polynomials of the emissivity-map path [K]."""
_FIT_GRID = np.linspace(-1.0, 1.0, 1001)
_FIT_GRID.setflags(write=False)


def _exact(key, x):
    """The exact per-pixel path named by ``key`` = (kind, eps, tau, refl, atm, band)."""
    kind, e, tau, refl, atm, band = key
    if kind == "object":
        return _object_general(x, e, tau, refl, atm, band, float)
    return _apparent_general(x, e, tau, refl, atm, band)


def _power_fit(values, half, tol, degrees):
    """Chebyshev least squares of ``values`` sampled on `_FIT_GRID` (x = mid + half * grid):
    the first of ``degrees`` within ``tol`` as power-series coefficients in (x - mid), lowest
    first, or None."""
    for degree in degrees:
        coef = np.polynomial.chebyshev.chebfit(_FIT_GRID, values, degree)
        if np.max(np.abs(np.polynomial.chebyshev.chebval(_FIT_GRID, coef) - values)) <= tol:
            power = np.polynomial.chebyshev.cheb2poly(coef)
            return tuple(float(c / half**k) for k, c in enumerate(power))
    return None


def _horner(s, coef, out):
    """``out = sum_k coef[k] s^k`` by Horner's scheme in place (``coef`` lowest first, at least
    two, in the dtype of ``out``); ``s`` must not share memory with ``out``."""
    np.multiply(s, coef[-1], out=out)
    np.add(out, coef[-2], out=out)
    for c in coef[-3::-1]:
        np.multiply(out, s, out=out)
        np.add(out, c, out=out)
    return out


def _finite_range(x):
    """Least and greatest non-NaN value of ``x`` (NaN when there is none), one pass each."""
    return float(np.fmin.reduce(x, axis=None)), float(np.fmax.reduce(x, axis=None))


@functools.lru_cache(maxsize=512)
def _chebyshev_fit(key, lo: float, hi: float):
    """Power-series coefficients (in T - mid) of the path ``key`` over [lo, hi], or None.

    Cached: frames of one view or series share their settings and (rounded) range, so the
    fit is paid once.
    """
    mid, half = (hi + lo) / 2.0, max((hi - lo) / 2.0, 1e-3)
    exact = _exact(key, mid + half * _FIT_GRID)
    if not np.all(np.isfinite(exact)):
        return None
    power = _power_fit(exact, half, _POLY_TOL_K, (4, 6, 8, 10, 12))
    return None if power is None else (mid, power)


def _by_polynomial(apparent, key):
    """Fit a smooth monotone function of the reading by a polynomial and evaluate it.

    ``key`` names the exact per-pixel path (`_exact`). Chebyshev least squares on 1001 exact
    points spanning the image's range (rounded out to whole kelvin, so frames share a fit),
    degrees 4...12, the first within 2e-5 K is evaluated by Horner's scheme in the image
    dtype. None if no degree fits (NaN in range or too wide a range).
    """
    lo, hi = _finite_range(apparent)
    if not (math.isfinite(lo) and math.isfinite(hi)):
        return None
    fit = _chebyshev_fit(key, float(math.floor(lo)), float(math.ceil(hi)))
    if fit is None:
        return None
    mid, power = fit
    dtype = apparent.dtype.type
    coef = [dtype(c) for c in power]  # polynomial in (T - mid)
    out = np.empty(apparent.shape, dtype=dtype)
    src, dst = apparent.reshape(-1), out.reshape(-1)
    sbuf = np.empty(min(_BLOCK, src.size), dtype)
    centre = dtype(mid)
    for start in range(0, src.size, _BLOCK):
        x = src[start:start + _BLOCK]
        s = sbuf[:x.size]
        np.subtract(x, centre, out=s)
        _horner(s, coef, dst[start:start + x.size])
    return out


@functools.lru_cache(maxsize=256)
def _split_fit(tau, refl, atm, band, lo, hi, e_lo, e_hi):
    """The two polynomials of the emissivity-map path (`_by_split`), or None.

    For readings in [lo, hi] °C and emissivities in [e_lo, e_hi]: ``p`` gives
    ``u = (L(T_app) - K) / tau`` [W m-2 sr-1] of ``T_app - mid``, ``q`` the object temperature
    [°C] of ``u / eps + shift = L_obj - L_mid``. Each is the lowest degree (2...12) of a
    Chebyshev least-squares fit on 1001 points within `_SPLIT_TOL_K` in temperature (``p``'s
    radiance error taken through the smallest ``eps dL/dT`` of the range), and the
    composition is checked against the per-pixel path at both ends and the middle of the
    emissivity range. None when the range reaches radiances with no solution or no degree
    fits. Cached per settings, whole-kelvin reading range and emissivity range.
    """
    l_refl = float(_fast_radiance(refl + _ZERO_C, band))
    l_atm = float(_fast_radiance(atm + _ZERO_C, band))
    k = tau * l_refl + (1.0 - tau) * l_atm
    mid, half = (hi + lo) / 2.0, max((hi - lo) / 2.0, 1e-3)
    t_app = mid + half * _FIT_GRID
    u = (_fast_radiance(t_app + _ZERO_C, band) - k) / tau
    ends = (u[0] / e_lo, u[0] / e_hi, u[-1] / e_lo, u[-1] / e_hi)  # u increases with T_app
    l_lo, l_hi = min(ends) + l_refl, max(ends) + l_refl
    if not (np.all(np.isfinite(u)) and l_lo > 0.0):
        return None
    l_mid, l_half = (l_hi + l_lo) / 2.0, max((l_hi - l_lo) / 2.0, 1e-9)
    l_obj = l_mid + l_half * _FIT_GRID
    t_obj = band_temperature(l_obj, band) - _ZERO_C
    if not np.all(np.isfinite(t_obj)):
        return None
    slope = float(np.min(np.diff(l_obj) / np.diff(t_obj)))  # least dL/dT [W m-2 sr-1 K-1]
    if not (math.isfinite(slope) and slope > 0.0):
        return None
    q = _power_fit(t_obj, l_half, _SPLIT_TOL_K, range(2, 13))
    p = _power_fit(u, half, _SPLIT_TOL_K * e_lo * slope, range(2, 13))
    if p is None or q is None:
        return None
    shift = l_refl - l_mid
    u_fit = np.polynomial.polynomial.polyval(t_app - mid, p)
    for e in sorted({e_lo, (e_lo + e_hi) / 2.0, e_hi}):
        got = np.polynomial.polynomial.polyval(u_fit / e + shift, q)
        exact = _object_general(t_app, e, tau, refl, atm, band, float)
        if not np.max(np.abs(got - exact)) <= 2.0 * _SPLIT_TOL_K:
            return None
    return mid, p, shift, q


def _by_split(apparent, eps, e_range, tau, refl, atm, band):
    """Object temperatures with a per-pixel emissivity map, through the radiance [°C].

    With scalar settings the inverse equation is ``L(T_obj) = u / eps + L_refl`` with
    ``u = (L(T_app) - tau L_refl - (1 - tau) L_atm) / tau``: a function of the reading, a
    per-pixel division, and a function of the radiance. Both functions are polynomials
    (`_split_fit`) evaluated in place by Horner's scheme in the image dtype. None when they
    cannot be fitted (the caller takes another path).
    """
    lo, hi = _finite_range(apparent)
    if not (math.isfinite(lo) and math.isfinite(hi)):
        return None
    fit = _split_fit(tau, refl, atm, band, float(math.floor(lo)), float(math.ceil(hi)),
                     *e_range)
    if fit is None:
        return None
    mid, p, shift, q = fit
    dtype = apparent.dtype.type
    p_coef, q_coef = [dtype(c) for c in p], [dtype(c) for c in q]
    centre, offset = dtype(mid), dtype(shift)
    out = np.empty(apparent.shape, dtype=dtype)
    src, e, dst = apparent.reshape(-1), eps.reshape(-1), out.reshape(-1)
    sbuf = np.empty(min(_BLOCK, src.size), dtype)
    for start in range(0, src.size, _BLOCK):
        x = src[start:start + _BLOCK]
        s, y = sbuf[:x.size], dst[start:start + x.size]
        np.subtract(x, centre, out=s)
        _horner(s, p_coef, y)  # u
        np.divide(y, e[start:start + x.size], out=s)
        np.add(s, offset, out=s)  # L_obj - L_mid
        _horner(s, q_coef, y)
    return out


def _by_table(apparent, key):
    """Tabulate a smooth function of the reading on a uniform grid, interpolate linearly."""
    lo, hi = float(np.nanmin(apparent)), float(np.nanmax(apparent))
    step = max((hi - lo) / 65000.0, 0.01)
    if not (math.isfinite(lo) and math.isfinite(hi)) or step > 0.05:
        return None
    nodes = lo + step * np.arange(int((hi - lo) / step) + 3)
    table = _exact(key, nodes)
    dtype = apparent.dtype.type
    val = table[:-1].astype(dtype)
    slope = np.diff(table).astype(dtype)
    out = np.empty(apparent.shape, dtype=dtype)
    src, dst = apparent.reshape(-1), out.reshape(-1)
    pos, flo, gv, gs = (np.empty(_CHUNK, dtype) for _ in range(4))
    idx = np.empty(_CHUNK, np.intp)
    inv_step, offset = dtype(1.0 / step), dtype(-lo / step)
    with np.errstate(invalid="ignore"):
        for start in range(0, src.size, _CHUNK):
            s = src[start:start + _CHUNK]
            m = s.size
            p, fl, ix, v, g = pos[:m], flo[:m], idx[:m], gv[:m], gs[:m]
            np.multiply(s, inv_step, out=p)
            np.add(p, offset, out=p)
            np.floor(p, out=fl)
            np.copyto(ix, fl, casting="unsafe")  # NaN gives a wild index; take clips it
            np.subtract(p, fl, out=p)  # NaN stays NaN
            np.take(val, ix, out=v, mode="clip")
            np.take(slope, ix, out=g, mode="clip")
            np.multiply(p, g, out=p)
            np.add(p, v, out=dst[start:start + m])
    return out


_MAX_LEVELS = 64
"""Most distinct emissivities of a map that the fast path handles group by group."""


def _smooth_fast_path(x, eps, exact_for):
    """Evaluate a per-pixel function of the reading fast, when its other inputs are scalar
    or an emissivity map of a few distinct values (one per element; for an
    object temperature, where `_by_split` cannot be fitted).

    ``exact_for(e)`` returns the key of the exact path for emissivity ``e``. Pixels are grouped by
    emissivity; each group goes through `_by_polynomial`, else `_by_table`. Returns None when
    a group cannot be fitted (the caller takes the exact path).
    """
    if np.ndim(eps) == 0:
        for fast in (_by_polynomial, _by_table):
            out = fast(x, exact_for(float(eps)))
            if out is not None:
                return out
        return None
    e = np.asarray(eps)
    if e.shape != x.shape:
        return None
    flat_e, flat = e.reshape(-1), x.reshape(-1)
    # the levels, found on a sample and then checked to cover every pixel (no full sort)
    levels = np.unique(flat_e[:: max(1, flat_e.size // 4096)])
    if levels.size > _MAX_LEVELS:
        return None
    masks = [flat_e == level for level in levels]
    counts = [int(np.count_nonzero(m)) for m in masks]
    if sum(counts) != flat.size:
        return None

    def evaluate(values, level):
        for fast in (_by_polynomial, _by_table):
            got = fast(values, exact_for(float(level)))
            if got is not None:
                return got
        return None

    # the most common emissivity over the whole frame (no gather), the others on their pixels
    major = int(np.argmax(counts))
    out = evaluate(flat, levels[major])
    if out is None:
        return None
    for k, (level, mask) in enumerate(zip(levels, masks, strict=True)):
        if k == major or counts[k] == 0:
            continue
        got = evaluate(flat[mask], level)
        if got is None:
            return None
        out[mask] = got
    return out.reshape(x.shape)


def object_temperature(apparent_c, emissivity, reflected_c, transmittance=1.0,
                       atmosphere_c=None, band_um=DEFAULT_BAND_UM):
    """Object surface temperature from an apparent temperature [°C]: the inverse equation.

    Parameters
    ----------
    apparent_c : array_like
        Apparent (blackbody-equivalent) temperature [°C], e.g. a thermogram.
    emissivity : array_like
        Band emissivity of the surface [-], in (0, 1]; broadcasts.
    reflected_c : array_like
        Reflected apparent temperature [°C].
    transmittance : array_like
        Band transmittance of the air path [-], in (0, 1].
    atmosphere_c : array_like, optional
        Air temperature along the path [°C]; None means the reflected temperature.
    band_um : (float, float)
        Camera band [µm].

    Returns
    -------
    ndarray or float
        Object temperature [°C]; NaN where the received radiance does not exceed the
        reflected and path terms. float32 input gives float32 output.

    Notes
    -----
    ``L(T_obj) = [W - tau (1 - eps) L(T_refl) - (1 - tau) L(T_atm)] / (tau eps)`` with
    ``W = L(T_app)`` (the measurement equation of [1] solved for the object term). With
    scalar settings and large images the correction is one smooth monotone function of the
    reading: it is fitted over the image's range by a Chebyshev polynomial (degree 4-12,
    within 2e-5 K of the per-pixel path) or, failing that, tabulated every <= 0.05 K and
    interpolated (error below 1e-5 K away from the NaN limit). An emissivity map of the
    image's shape is done through the radiance, ``L(T_obj) = u / eps + L(T_refl)`` with
    ``u = [W - tau L(T_refl) - (1 - tau) L(T_atm)] / tau``: ``u`` of the reading and the
    object temperature of the radiance are two polynomials (each within 5e-6 K, the two
    within 1e-5 K of the per-pixel path, `_split_fit`), with one division per pixel between
    them; where that range reaches radiances with no solution, a map of a few distinct
    values (one per element) is done group by group as for a scalar; otherwise per pixel.

    References
    ----------
    [1] W. Minkina and S. Dudzik, Infrared Thermography: Errors and Uncertainties, Wiley, 2009.

    Examples
    --------
    >>> round(object_temperature(20.0, 1.0, 20.0), 6)
    20.0
    """
    band = _check_band(band_um)
    eps, tau, e_range = _check_fractions(emissivity, transmittance)
    atm = reflected_c if atmosphere_c is None else atmosphere_c
    app = np.asarray(apparent_c)
    dtype = np.float32 if app.dtype == np.float32 else np.float64
    scalar = all(np.ndim(v) == 0 for v in (eps, tau, reflected_c, atm))
    if scalar and float(eps) == 1.0 and float(tau) == 1.0:
        out = app.astype(dtype, copy=True)
        return _scalar_out(out[()] if out.ndim == 0 else out, apparent_c)
    settings = (tau, reflected_c, atm)
    if app.size >= 2 * _CHUNK and all(np.ndim(v) == 0 for v in settings):
        x = app.astype(dtype, copy=False)
        if eps.shape == app.shape:  # a per-pixel emissivity map: the pipeline's case
            out = _by_split(x, eps, e_range, float(tau), float(reflected_c), float(atm), band)
            if out is not None:
                return out

        def exact_for(e):
            return ("object", e, float(tau), float(reflected_c), float(atm), band)

        out = _smooth_fast_path(x, eps, exact_for)
        if out is not None:
            return out
    out = _object_general(app, eps, tau, reflected_c, atm, band, dtype)
    return _scalar_out(out[()] if out.ndim == 0 else out, apparent_c)


def blackbody_reading(exported_c, export_emissivity=1.0, export_reflected_c=20.0,
                      export_transmittance=1.0, export_atmosphere_c=None,
                      band_um=DEFAULT_BAND_UM):
    """Undo the camera's export settings: the apparent (blackbody-equivalent) reading [°C].

    Parameters
    ----------
    exported_c : array_like
        Temperatures the camera exported, computed with its own settings [°C].
    export_emissivity, export_reflected_c, export_transmittance, export_atmosphere_c
        The settings the camera used [-, °C, -, °C]; None atmosphere means the reflected one.
    band_um : (float, float)
        Camera band [µm].

    Notes
    -----
    The camera solved the measurement equation with its settings, so the received radiance is
    the forward equation applied to the exported value with those settings; the apparent
    temperature is its blackbody equivalent. Settings 1 / any / 1 give the identity.
    """
    return apparent_temperature(exported_c, export_emissivity, export_reflected_c,
                                export_transmittance, export_atmosphere_c, band_um)


def export_reading(apparent_c, export_emissivity=1.0, export_reflected_c=20.0,
                   export_transmittance=1.0, export_atmosphere_c=None,
                   band_um=DEFAULT_BAND_UM):
    """What a camera with the given settings exports for an apparent temperature [°C].

    The inverse of `blackbody_reading` (same parameters); used to build test readings.
    """
    return object_temperature(apparent_c, export_emissivity, export_reflected_c,
                              export_transmittance, export_atmosphere_c, band_um)
