"""Temperature factor at the internal surface: as measured, and at the design convention.

The measured factor fRsi = (θsi - θe)/(θi - θe) of a survey night holds for the surface
resistance of that night (about 0.13 m²K/W on an open wall). The condensation and mould
limits (ISO 13788's fRsi,min, BRE IP 1/06, DIN 4108-2) are defined for the factor at a
design surface resistance, 0.25 m²K/W on opaque elements and 0.13 m²K/W on glazing, whose
extra resistance stands for corners, furniture and curtains. `design_temperature_factor`
turns the measured surface heat flux into that factor. `envelope.condensation` judges risk
on it and re-exports `temperature_factor`.
"""

from __future__ import annotations

import warnings

import numpy as np

from envelope.errors import EnvelopeWarning, SurveyError
from envelope.geometry import GLAZED_KINDS
from envelope.psychrometrics import _out

__all__ = [
    "MIN_DT_K",
    "R_SI_DESIGN_OPAQUE",
    "R_SI_DESIGN_GLAZING",
    "GLAZING_KINDS",
    "temperature_factor",
    "design_surface_resistance",
    "design_temperature_factor",
    "design_factor_from_measured",
    "design_factor_map",
]

MIN_DT_K = 1.0
"""Indoor-outdoor difference below which fRsi is ill-conditioned [K]."""


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


# ------------------------------------------------------- factor at the design convention
R_SI_DESIGN_OPAQUE = 0.25
"""Internal surface resistance for the temperature factor of opaque elements [m²K/W]
(ISO 13788:2012 §4, clause from memory; BRE IP 1/06 and DIN 4108-2 use the same 0.25)."""
R_SI_DESIGN_GLAZING = 0.13
"""Internal surface resistance for the temperature factor of glazing and frames [m²K/W]
(ISO 13788:2012 §4, clause from memory)."""
GLAZING_KINDS = GLAZED_KINDS
"""Element kinds judged with the glazing resistance."""


def design_surface_resistance(kind: str) -> float:
    """Internal surface resistance of the design convention for an element kind [m²K/W].

    0.13 for glazing (`GLAZING_KINDS`), 0.25 for every opaque kind (walls, roofs, ceilings,
    floors, doors), after ISO 13788:2012 §4 (clause from memory).
    """
    if not isinstance(kind, str) or not kind:
        raise ValueError(f"kind must be an element kind such as 'wall'; got {kind!r}")
    return R_SI_DESIGN_GLAZING if kind.lower() in GLAZING_KINDS else R_SI_DESIGN_OPAQUE


def _r_si(value) -> float:
    r = float(value)
    if not np.isfinite(r) or r <= 0.0:
        raise ValueError(f"r_si_design_m2k_w must be a positive resistance; got {value!r}")
    return r


def design_temperature_factor(q_w_m2, t_si_c, t_e_c, r_si_design_m2k_w=R_SI_DESIGN_OPAQUE):
    """Temperature factor at the design convention from the measured surface heat flux [-].

    Parameters
    ----------
    q_w_m2 : array_like
        Heat flux into the internal surface measured on the survey night [W/m²] (positive
        from the room into the element), e.g. `envelope.transmittance.heat_flux_interior`.
    t_si_c : array_like
        Internal surface temperature on the survey night [°C].
    t_e_c : array_like
        Outdoor air temperature on the survey night [°C].
    r_si_design_m2k_w : float
        Internal surface resistance of the convention [m²K/W]: 0.25 opaque, 0.13 glazing
        (`design_surface_resistance`).

    Returns
    -------
    float or ndarray
        f_Rsi at the design convention; NaN where q <= 0 (the surface gains heat: a heat
        source or a reflection) or where the surface is colder than the outdoor air.

    Notes
    -----
    The resistance behind the surface, from the surface to the outdoor air, is measured::

        R' = (θsi - θe) / q                         [m²K/W]

    and the factor at the convention is that of a surface with R' behind it and the
    design resistance in front of it::

        f_Rsi,design = R' / (R' + R_si,design)

    which is f_Rsi = (θsi - θe)/(θi - θe) of the steady 1-D series network with R_si set
    to the convention (the definition of fRsi in [1] with the surface resistance that [1] prescribes; the same
    convention as [2] and [3]). The measured-night factor is the same formula with the
    night's own R_si = (θi - θsi)/q (about 0.13 on an open wall). Per pixel the heat path is
    taken as 1-D; at junctions the full method of [4] re-solves the 2-D field with
    R_si = 0.25, which the tests compare with (tests/test_bridges.py).

    References
    ----------
    [1] ISO 13788:2012, §4 (surface resistances for the temperature factor; clause from memory) and §5.
    [2] BRE Information Paper IP 1/06, Assessing the effects of thermal bridging at junctions
        and around openings (2006).
    [3] DIN 4108-2:2013, Mindestanforderungen an den Wärmeschutz, §6.2.
    [4] ISO 10211:2017, Thermal bridges in building construction -- Heat flows and surface
        temperatures -- Detailed calculations.

    Examples
    --------
    >>> round(design_temperature_factor(32.0, 15.84, 0.0), 3)  # U = 1.6, ΔT = 20 K
    0.664
    """
    r_si = _r_si(r_si_design_m2k_w)
    q = np.asarray(q_w_m2, dtype=float)
    dt_se = np.asarray(t_si_c, dtype=float) - np.asarray(t_e_c, dtype=float)
    with np.errstate(divide="ignore", invalid="ignore"):
        r_behind = np.where((q > 0.0) & (dt_se >= 0.0), dt_se / q, np.nan)
        f = r_behind / (r_behind + r_si)
    return _out(f)


def design_factor_from_measured(frsi, r_si_survey_m2k_w, r_si_design_m2k_w=R_SI_DESIGN_OPAQUE):
    """Design-convention factor from a measured factor and the night's surface resistance.

    Parameters
    ----------
    frsi : array_like
        Measured temperature factor [-] (`temperature_factor`).
    r_si_survey_m2k_w : array_like
        Internal surface resistance on the survey night [m²K/W], 1 / (h_c + h_r).
    r_si_design_m2k_w : float
        Resistance of the convention [m²K/W].

    Notes
    -----
    With R' = R_si,survey f / (1 - f) (the 1-D network rearranged),
    ``f_design = f R_si,survey / (f R_si,survey + (1 - f) R_si,design)``; the same number as
    `design_temperature_factor` when q = (θi - θsi) / R_si,survey.
    """
    r_d = _r_si(r_si_design_m2k_w)
    f = np.asarray(frsi, dtype=float)
    r_s = np.asarray(r_si_survey_m2k_w, dtype=float)
    if np.any(r_s[np.isfinite(r_s)] <= 0.0):
        raise ValueError("r_si_survey_m2k_w must be > 0")
    with np.errstate(divide="ignore", invalid="ignore"):
        out = f * r_s / (f * r_s + (1.0 - f) * r_d)
    return _out(np.where((f >= 0.0) & (f <= 1.0), out, np.nan))


def design_factor_map(q_w_m2, t_si_c, t_e_c, regions) -> np.ndarray:
    """Design-convention factor over a thermogram, each element with its own R_si [-].

    Parameters
    ----------
    q_w_m2, t_si_c : ndarray (H, W)
        Measured surface heat flux [W/m²] and surface temperature [°C].
    t_e_c : float
        Outdoor air temperature [°C].
    regions : mapping of name -> object with ``kind`` and ``mask`` (H, W)
        The thermogram's elements (`envelope.geometry.ElementRegion`).

    Returns
    -------
    ndarray (H, W)
        `design_temperature_factor` with `design_surface_resistance` of each element's kind
        on its mask; NaN outside every element.
    """
    q = np.asarray(q_w_m2, dtype=float)
    t = np.asarray(t_si_c, dtype=float)
    if q.shape != t.shape:
        raise ValueError(f"q_w_m2 shape {q.shape} differs from t_si_c shape {t.shape}")
    out = np.full(q.shape, np.nan)
    for reg in regions.values():
        m = np.asarray(reg.mask, bool)
        if m.shape != q.shape:
            raise ValueError(f"mask of {getattr(reg, 'name', '?')!r} has shape {m.shape}, "
                             f"the image {q.shape}")
        out[m] = design_temperature_factor(q[m], t[m], t_e_c, design_surface_resistance(reg.kind))
    return out
