"""Atmospheric transmittance of the air path between camera and surface (water vapour).

Building surveys look through metres to tens of metres of air; water vapour absorbs a little
of the 8–12 µm radiance on the way. The continuum model here is approximate and the
correction small (τ above 0.98 for building distances), but it is computed rather than
assumed when the surveyor gives no transmittance.
"""

from __future__ import annotations

import warnings

import numpy as np

from envelope.condensation import saturation_vapour_pressure
from envelope.constants import P_ATM_PA, R_V_J_KGK, T0_K
from envelope.errors import EnvelopeWarning
from envelope.radiometry import DEFAULT_BAND_UM, _check_band, spectral_radiance

__all__ = ["atmospheric_transmittance"]

_ZERO_C = T0_K
_R_V = R_V_J_KGK
_P_ATM = P_ATM_PA


def _tau_continuum(distance_m, air_c, rh, band_um):
    t_k = np.asarray(air_c, dtype=float) + _ZERO_C
    e_pa = np.asarray(rh, dtype=float) * saturation_vapour_pressure(air_c)
    rho_v = e_pa / (_R_V * t_k)  # vapour density [kg m-3]
    w_g_cm2 = rho_v * np.asarray(distance_m, dtype=float) * 0.1  # precipitable water [g cm-2]
    # Band average weighted by the blackbody spectrum at the air temperature.
    nu = np.linspace(1e4 / band_um[1], 1e4 / band_um[0], 64)  # wavenumber [cm-1]
    lam_um = 1e4 / nu
    tt = np.expand_dims(t_k, -1)
    weight = spectral_radiance(lam_um, tt) * lam_um**2  # per unit wavenumber
    c_s = (4.18 + 5578.0 * np.exp(-7.87e-3 * nu)) * np.exp(1800.0 * (1.0 / tt - 1.0 / 296.0))
    pressure_atm = np.expand_dims(e_pa + 0.002 * (_P_ATM - e_pa), -1) / _P_ATM
    depth = c_s * pressure_atm * np.expand_dims(w_g_cm2, -1)
    tau = np.sum(np.exp(-depth) * weight, axis=-1) / np.sum(weight, axis=-1)
    return tau


def _tau_none(distance_m, air_c, rh, band_um):
    return np.ones(np.broadcast(distance_m, np.asarray(air_c), rh).shape)


_TAU_MODELS = {"water-vapour-continuum": _tau_continuum, "none": _tau_none}


def atmospheric_transmittance(distance_m, air_c, rh, band_um=DEFAULT_BAND_UM,
                              model="water-vapour-continuum"):
    """Band transmittance of the air between camera and surface [-], approximate.

    Parameters
    ----------
    distance_m : array_like
        Path length [m], >= 0.
    air_c : array_like
        Air temperature [°C].
    rh : array_like
        Relative humidity [-], 0-1.
    band_um : (float, float)
        Camera band [µm]; the continuum model is for the 8-12 µm window.
    model : {"water-vapour-continuum", "none"}
        "none" gives 1.

    Notes
    -----
    Precipitable water along the path ``w = rho_v d`` with ``rho_v = rh p_sat(T) / (R_v T)``
    (p_sat from the Magnus formula with the ISO 13788 constants [2]). Spectral optical depth of
    the self- and foreign-broadened water-vapour continuum after [1] (coefficients from
    memory): ``k(nu) = [4.18 + 5578 exp(-7.87e-3 nu)] exp[1800 (1/T - 1/296)]`` in
    cm2 g-1 atm-1, times ``(e + 0.002 (P - e))`` [atm] and w [g cm-2]; averaged over the band
    weighted by the blackbody spectrum at the air temperature. Line absorption, CO2 and
    aerosols are neglected, so the result overestimates tau somewhat; for building surveys
    (tens of metres) tau stays above 0.98 and the correction is small. Outside 8-12 µm the
    model is an extrapolation and a warning is issued.

    References
    ----------
    [1] R. E. Roberts, J. E. A. Selby and L. M. Biberman, "Infrared continuum absorption by
        atmospheric water vapor in the 8-12 µm window", Applied Optics 15(9), 2085-2090, 1976.
    [2] ISO 13788:2012, Hygrothermal performance of building components and building
        elements, Annex E (saturation vapour pressure).
    """
    if model not in _TAU_MODELS:
        raise ValueError(f"unknown transmittance model {model!r}; valid: {sorted(_TAU_MODELS)}")
    band = _check_band(band_um)
    d = np.asarray(distance_m, dtype=float)
    h = np.asarray(rh, dtype=float)
    if np.any(d < 0) or np.any((h < 0) | (h > 1)):
        raise ValueError("distance_m must be >= 0 and rh a fraction in [0, 1]")
    if model != "none" and (band[0] < 7.0 or band[1] > 15.0):
        warnings.warn(f"the water-vapour continuum model is for about 8-12 µm; band {band} "
                      "is an extrapolation", EnvelopeWarning, stacklevel=2)
    out = _TAU_MODELS[model](d, air_c, h, band)
    return float(out) if np.ndim(out) == 0 else out
