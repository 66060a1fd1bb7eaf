"""Air leakage: from a blower-door result to the heat carried by the leaking air.

A leak shows on a thermogram as a cold plume, but the heat it costs is mostly carried by the
air, not conducted through the surface. With a blower-door result (EN ISO 9972: n50 or q50)
the building's air change rate under natural conditions follows from a published
infiltration model, and from it the ventilation heat-loss coefficient of the leakage
(ISO 13789). That coefficient is shared among the leaks found, by the rule of
`leak_shares`. Without a blower-door result the leak's energy is only the surface excess
the camera sees: a lower bound, flagged as such.

Models of the natural air change rate (``model=``):

- ``"sherman-lbl"`` (default): n = n50 / N with the LBL correlation factor
  N = C × f_height × f_shielding of Sherman [2] (C the climate factor, about 20 for a
  mild climate: the "n50 / 20" rule; height factor 1.0 / 0.9 / 0.8 / 0.7 for 1 / 1.5 / 2 /
  3 storeys; shielding factor 1.2 well shielded / 1.0 normal / 0.9 exposed; from memory).
  It is a seasonal-average estimate, what an annual energy figure needs.
- ``"en12831"``: n = n50 e ε, the whole-building infiltration of EN 12831:2003 §7.2.2 /
  Annex D (shielding coefficient e 0.01 / 0.02 / 0.03 for heavy / moderate / no shielding
  with more than one exposed façade; height correction ε 1.0 up to 10 m, 1.2 to 30 m, 1.5
  above; from memory). A design-load method: lower than the seasonal average.

References
----------
[1] EN ISO 9972:2015, Thermal performance of buildings -- Determination of air permeability
    of buildings -- Fan pressurization method (n50, q50, the power law).
[2] M. H. Sherman, "Estimation of infiltration from leakage and climate indicators",
    Energy and Buildings 10 (1987) 81–86, doi:10.1016/0378-7788(87)90008-9.
[3] EN 12831:2003, Heating systems in buildings -- Method for calculation of the design
    heat load, §7.2.2 and Annex D.
[4] ISO 13789:2017, Thermal performance of buildings -- Transmission and ventilation heat
    transfer coefficients -- Calculation method, §9 (H_V = ρ_a c_a V̇).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

__all__ = [
    "RHO_C_AIR_J_M3K",
    "SHIELDING",
    "Airtightness",
    "n50_from_q50",
    "natural_air_change_rate",
    "infiltration_heat_loss",
    "leakage_flow_at",
    "view_share",
    "leak_shares",
    "LOWER_BOUND_NOTE",
]

RHO_C_AIR_J_M3K = 1200.0
"""Volumetric heat capacity of air for ventilation heat loss [J/(m³ K)] (ISO 13789:2017
§9.3, from memory; 1.2 kg/m³ × 1000 J/(kg K))."""

SHIELDING = ("well-shielded", "normal", "exposed")
"""Shielding classes of the site."""

_LBL_SHIELDING = {"well-shielded": 1.2, "normal": 1.0, "exposed": 0.9}
_LBL_HEIGHT = ((1.0, 1.0), (1.5, 0.9), (2.0, 0.8), (3.0, 0.7))  # storeys -> factor
_EN12831_E = {"well-shielded": 0.01, "normal": 0.02, "exposed": 0.03}

LOWER_BOUND_NOTE = ("lower bound: only the surface excess the camera sees is counted; the "
                    "heat carried by the leaking air needs a blower-door result (EN ISO 9972 "
                    "n50 or q50 with the building volume)")
"""Flag text for a leak whose air is not counted."""


@dataclass(frozen=True)
class Airtightness:
    """A blower-door result and what the infiltration models need.

    Attributes
    ----------
    volume_m3 : float
        Internal volume of the building (EN ISO 9972 V) [m³].
    n50_per_h : float, optional
        Air change rate at 50 Pa [1/h].
    q50_m3_h_m2 : float, optional
        Air permeability at 50 Pa [m³/(h m²)]; needs `envelope_area_m2`.
    envelope_area_m2 : float, optional
        Envelope area A_E [m²] (for q50, and to share the leakage by viewed area).
    storeys : float
        Storeys above ground (1, 1.5, 2, 3...).
    shielding : {"well-shielded", "normal", "exposed"}
    climate_factor : float
        Sherman's climate factor C [-] ("sherman-lbl").
    model : {"sherman-lbl", "en12831"}
    flow_exponent : float
        Exponent n of the leakage power law V̇ = C Δp^n [-] (EN ISO 9972; 0.65 is common
        practice when the test does not report it).
    """

    volume_m3: float
    n50_per_h: float | None = None
    q50_m3_h_m2: float | None = None
    envelope_area_m2: float | None = None
    storeys: float = 1.0
    shielding: str = "normal"
    climate_factor: float = 20.0
    model: str = "sherman-lbl"
    flow_exponent: float = 0.65

    def __post_init__(self):
        def positive(name, v, allow_none=False):
            if v is None and allow_none:
                return
            if v is None or not np.isfinite(v) or v <= 0:
                raise ValueError(f"{name} must be a positive number; got {v!r}")

        positive("volume_m3", self.volume_m3)
        positive("n50_per_h", self.n50_per_h, True)
        positive("q50_m3_h_m2", self.q50_m3_h_m2, True)
        positive("envelope_area_m2", self.envelope_area_m2, True)
        positive("storeys", self.storeys)
        positive("climate_factor", self.climate_factor)
        if (self.n50_per_h is None) == (self.q50_m3_h_m2 is None):
            raise ValueError("give exactly one of n50_per_h and q50_m3_h_m2")
        if self.q50_m3_h_m2 is not None and self.envelope_area_m2 is None:
            raise ValueError("q50_m3_h_m2 needs envelope_area_m2 to give n50")
        if self.shielding not in SHIELDING:
            raise ValueError(f"shielding must be one of {', '.join(SHIELDING)}; "
                             f"got {self.shielding!r}")
        if self.model not in _MODELS:
            raise ValueError(f"unknown infiltration model {self.model!r}; valid: "
                             f"{', '.join(_MODELS)}")
        if not 0.5 <= self.flow_exponent <= 1.0:
            raise ValueError(f"flow_exponent must lie in [0.5, 1] (EN ISO 9972); got "
                             f"{self.flow_exponent!r}")

    @property
    def n50(self) -> float:
        """Air change rate at 50 Pa [1/h]."""
        if self.n50_per_h is not None:
            return float(self.n50_per_h)
        return n50_from_q50(self.q50_m3_h_m2, self.envelope_area_m2, self.volume_m3)


def n50_from_q50(q50_m3_h_m2: float, envelope_area_m2: float, volume_m3: float) -> float:
    """Air change rate at 50 Pa from the air permeability [1/h]: n50 = q50 A_E / V.

    Notes
    -----
    Both are the leakage flow at 50 Pa, V̇50, over the internal volume (n50) or the
    envelope area (q50), the definitions of EN ISO 9972:2015 §3 [1].
    """
    for name, v in (("q50_m3_h_m2", q50_m3_h_m2), ("envelope_area_m2", envelope_area_m2),
                    ("volume_m3", volume_m3)):
        if v is None or not np.isfinite(v) or v <= 0:
            raise ValueError(f"{name} must be a positive number; got {v!r}")
    return float(q50_m3_h_m2) * float(envelope_area_m2) / float(volume_m3)


def _height_factor(storeys: float) -> float:
    s, f = zip(*_LBL_HEIGHT, strict=True)
    return float(np.interp(storeys, s, f))


def _sherman(at: Airtightness) -> tuple[float, str]:
    f_h = _height_factor(at.storeys)
    f_s = _LBL_SHIELDING[at.shielding]
    n_factor = at.climate_factor * f_h * f_s
    return at.n50 / n_factor, (
        f"Sherman (1987) LBL correlation: n = n50 / N, N = C {at.climate_factor:g} × height "
        f"{f_h:.2f} ({at.storeys:g} storeys) × shielding {f_s:.2f} ({at.shielding}) = "
        f"{n_factor:.1f}")


def _en12831(at: Airtightness) -> tuple[float, str]:
    e = _EN12831_E[at.shielding]
    height_m = 3.0 * at.storeys  # about 3 m a storey (common practice)
    eps = 1.0 if height_m <= 10.0 else (1.2 if height_m <= 30.0 else 1.5)
    return at.n50 * e * eps, (
        f"EN 12831:2003 whole-building infiltration: n = n50 e ε, e {e:.2f} ({at.shielding}), "
        f"ε {eps:.1f}")


_MODELS = {"sherman-lbl": _sherman, "en12831": _en12831}


def natural_air_change_rate(at: Airtightness) -> tuple[float, str]:
    """Air change rate by infiltration under natural conditions [1/h], and how it was found.

    See the module notes for the models ([2], [3]).

    Examples
    --------
    >>> n, _ = natural_air_change_rate(Airtightness(300.0, n50_per_h=8.0, storeys=2))
    >>> round(n, 3)  # 8 / (20 * 0.8 * 1.0)
    0.5
    """
    return _MODELS[at.model](at)


def infiltration_heat_loss(at: Airtightness) -> tuple[float, str]:
    """Ventilation heat-loss coefficient of the building's infiltration [W/K].

    Notes
    -----
    ``H = ρ_a c_a n V / 3600`` with ρ_a c_a = 1200 J/(m³ K) (ISO 13789:2017 §9 [4]; n in
    1/h, V in m³).
    """
    n, how = natural_air_change_rate(at)
    return RHO_C_AIR_J_M3K * n * at.volume_m3 / 3600.0, how


def leakage_flow_at(at: Airtightness, pressure_difference_pa: float) -> float:
    """The building's leakage flow at a pressure difference [m³/h] (power law of [1]).

    ``V̇(Δp) = n50 V (Δp / 50)^n``: e.g. the flow through the whole envelope while the
    depressurised thermogram was taken.
    """
    dp = float(pressure_difference_pa)
    if not np.isfinite(dp) or dp <= 0:
        raise ValueError(f"pressure_difference_pa must be > 0; got {pressure_difference_pa!r}")
    return at.n50 * at.volume_m3 * (dp / 50.0) ** at.flow_exponent


def view_share(h_inf_w_k: float, viewed_area_m2: float | None,
               envelope_area_m2: float | None) -> tuple[float, str]:
    """Part of the infiltration heat loss that the leaks of one view carry [W/K].

    Notes
    -----
    Leakage is taken as spread over the envelope in proportion to area (the assumption
    behind q50, a flow per m² of envelope): a view of area A_v carries
    ``H_inf A_v / A_E``. Without both areas, the whole of H_inf is given to the view's
    leaks, which overstates each share when leaks elsewhere were not seen (noted).
    """
    if not np.isfinite(h_inf_w_k) or h_inf_w_k < 0:
        raise ValueError(f"h_inf_w_k must be >= 0; got {h_inf_w_k!r}")
    if viewed_area_m2 is None or envelope_area_m2 is None:
        return float(h_inf_w_k), ("the building's whole infiltration is given to the leaks "
                                  "found (no viewed or envelope area to share it by): an "
                                  "upper bound for each leak")
    if not (viewed_area_m2 > 0 and envelope_area_m2 > 0):
        raise ValueError("viewed_area_m2 and envelope_area_m2 must be > 0")
    frac = min(float(viewed_area_m2) / float(envelope_area_m2), 1.0)
    return float(h_inf_w_k) * frac, (
        f"{100 * frac:.1f} % of the building's infiltration (viewed {viewed_area_m2:.1f} m² of "
        f"{envelope_area_m2:.1f} m² envelope, leakage taken as spread by area)")


def leak_shares(h_view_w_k: float, signals) -> np.ndarray:
    """Share a view's infiltration heat loss among its leaks [W/K each].

    Parameters
    ----------
    h_view_w_k : float
        Infiltration heat-loss coefficient the view's leaks carry (`view_share`) [W/K].
    signals : array_like
        Each leak's signal under the pressure difference: the surface cooling integrated
        over its zone, ``∫ max(T_base - T_dep, 0) dA`` [K m²].

    Notes
    -----
    Rule: in proportion to the signal (the colder and larger the plume the pressure
    difference draws, the more air it lets through); equal shares when no leak has a
    signal. The rule is ours (stated, not from a standard).
    """
    s = np.clip(np.nan_to_num(np.asarray(signals, dtype=float).ravel(), nan=0.0), 0.0, None)
    if s.size == 0:
        return s
    if not np.isfinite(h_view_w_k) or h_view_w_k < 0:
        raise ValueError(f"h_view_w_k must be >= 0; got {h_view_w_k!r}")
    total = float(s.sum())
    if total <= 0:
        return np.full(s.size, h_view_w_k / s.size)
    return h_view_w_k * s / total

