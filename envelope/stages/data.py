"""The results of each stage: frozen dataclasses, built once, never changed in place.

A later stage that adds to an earlier result (the builder verdict on an element result, the
rank of a defect) makes a new object with `dataclasses.replace`.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np

from envelope.calibration import Offset
from envelope.geometry import Homography
from envelope.outlines import Outline
from envelope.survey import Survey, Thermogram
from envelope.validity import Check

__all__ = ["CorrectedView", "SurfaceFlux", "ElementResult", "ViewResult", "SeriesResult",
           "HeatBalance", "EnergyCase", "Failure", "Assessment"]


@dataclass(frozen=True, eq=False)
class CorrectedView:
    """One thermogram after radiometric correction and geometry.

    Attributes
    ----------
    thermogram : Thermogram
        The survey's entry with its reflected temperature as used (the camera offset removed
        when it was read with the same camera).
    object_c : ndarray (H, W), float32
        Corrected surface temperature [°C].
    apparent_c : ndarray (H, W), float32
        Blackbody-equivalent reading after the camera offset was removed [°C].
    emissivity : ndarray (H, W), float32
        Emissivity used per pixel [-].
    emissivity_source : dict
        Element name → where its emissivity came from.
    regions : dict of str to ElementRegion
    outlines : tuple of Outline
    homography : Homography
    area_map_m2 : ndarray (H, W)
        Façade area of each pixel [m²].
    transmittance : float
        Atmospheric transmittance of the path [-].
    atmosphere_c : float
        Temperature of the air path [°C].
    offset : Offset
        Camera offset removed.
    checks : tuple of Check
        Checks of the view (viewing angle, sun).
    reflected_declared_c : float
        The reflected apparent temperature as the survey gives it [°C].
    probes : tuple of calibration.ProbeSpot
        Contact probes with the camera's raw readings (no offset removed).
    tapes : dict
        Element name → (calibration.TapeSpot with raw readings, calibration.TapeEmissivity):
        an emissivity tape on that element and what it gave.
    """

    thermogram: Thermogram
    object_c: np.ndarray
    apparent_c: np.ndarray
    emissivity: np.ndarray
    emissivity_source: dict
    regions: dict
    outlines: tuple[Outline, ...]
    homography: Homography
    area_map_m2: np.ndarray
    transmittance: float
    atmosphere_c: float
    offset: Offset
    checks: tuple[Check, ...] = ()
    reflected_declared_c: float | None = None
    probes: tuple = ()
    tapes: dict = field(default_factory=dict)

    @property
    def side(self) -> str:
        return self.thermogram.side


@dataclass(frozen=True, eq=False)
class SurfaceFlux:
    """Surface heat flux of a view's elements [W/m²] and the film coefficients behind it.

    Attributes
    ----------
    q_w_m2 : ndarray (H, W)
        Heat flux through the element surface, positive outwards; NaN outside elements.
    h_c_w_m2k : dict
        Element name → convective coefficient used [W/(m²·K)].
    h_c_model : dict
        Element name → convective model name.
    sky : dict
        Element name → (sky temperature [°C], sky view factor [-]) on exterior views.
    """

    q_w_m2: np.ndarray
    h_c_w_m2k: dict
    h_c_model: dict
    sky: dict = field(default_factory=dict)


@dataclass(frozen=True)
class ElementResult:
    """U, uncertainty, temperature factor and risk of one element in one view.

    ``u_w_m2k`` is the U of the element's undisturbed area (its reference zone, or the
    element without the zones of its defects), referred to air temperatures; ``u_env_*`` the
    same heat flow referred to environmental temperatures (the definition of ISO 6946 design
    values). ``u_whole_w_m2k`` is the area-weighted U over the whole net area, defects
    included (the element as built), with its own Monte Carlo interval. Intervals are 95 %
    (JCGM 101); ``_std`` marks a standard uncertainty. ``narrowing`` lists what would narrow
    the interval (contributor, share of the variance, remedy). ``verdict`` judges the U
    named by ``verdict_basis``.
    """

    name: str
    kind: str
    thermogram: str
    side: str
    label: str | None
    area_net_m2: float
    area_source: str
    emissivity: float
    emissivity_source: str
    u_w_m2k: float
    u_std_w_m2k: float
    u_low95_w_m2k: float
    u_high95_w_m2k: float
    u_env_w_m2k: float
    u_env_low95_w_m2k: float
    u_env_high95_w_m2k: float
    u_whole_w_m2k: float
    u_whole_std_w_m2k: float | None
    u_whole_low95_w_m2k: float | None
    u_whole_high95_w_m2k: float | None
    u_whole_env_w_m2k: float | None
    u_whole_env_low95_w_m2k: float | None
    u_whole_env_high95_w_m2k: float | None
    undisturbed_share: float
    undisturbed_zone: str
    u_method: str
    h_c_model: str
    h_c_w_m2k: float
    h_c_std_w_m2k: float
    calibrated: bool
    calibration_note: str
    budget: tuple[tuple[str, float], ...]
    narrowing: tuple[tuple[str, float, str], ...] = ()
    u_valid: bool = True
    u_note: str = ""
    frsi_min: float | None = None
    frsi_p05: float | None = None
    frsi_design_min: float | None = None
    frsi_design_p05: float | None = None
    risk: str = "not assessed"
    risk_judged_on: str | None = None
    risk_note: str = ""
    t_si_design_c: float | None = None
    rh_si_design: float | None = None
    u_specified_w_m2k: float | None = None
    u_specified_basis: str = "environmental"
    verdict: str | None = None
    verdict_reason: str = ""
    verdict_basis: str | None = None
    coverage_share: float | None = None
    checks: tuple[Check, ...] = ()


@dataclass(frozen=True, eq=False)
class ViewResult:
    """Everything one thermogram gave; ``status`` "assessed", "paired" (the depressurised
    image of a pressure pair, used by its baseline) or "failed" (``error`` says why).
    ``undisturbed`` maps each element to its undisturbed pixels (`zones.undisturbed_mask`),
    ``u_draws`` to the Monte Carlo's per-trial U over them (for the joint H)."""

    thermogram: Thermogram
    status: str
    error: str | None = None
    corrected: CorrectedView | None = None
    frsi: np.ndarray | None = None
    frsi_design: np.ndarray | None = None
    u_map_w_m2k: np.ndarray | None = None
    elements: tuple[ElementResult, ...] = ()
    defects: tuple = ()
    checks: tuple[Check, ...] = ()
    paired_with: str | None = None
    undisturbed: dict = field(default_factory=dict)
    u_draws: dict = field(default_factory=dict)

    @property
    def object_c(self):
        return None if self.corrected is None else self.corrected.object_c

    @property
    def regions(self) -> dict:
        return {} if self.corrected is None else self.corrected.regions


@dataclass(frozen=True)
class SeriesResult:
    """U of one element from a logged night series: ISO 9869-1 average method (``u_w_m2k``,
    with the series Monte Carlo's interval), the dynamic method beside it (``u_dynamic_*``,
    its regression interval) and, when the element's heat capacity is known, the average
    method against the outdoor temperature lagged by the element's response time
    (``u_lag_corrected_w_m2k``)."""

    id: str
    element: str
    thermogram: str
    u_w_m2k: float
    u_std_w_m2k: float | None
    u_low95_w_m2k: float | None
    u_high95_w_m2k: float | None
    budget: tuple[tuple[str, float], ...]
    camera_offset_k: float
    calibration_note: str
    duration_h: float
    n_frames: int
    converged: bool
    u_running_w_m2k: tuple[float, ...]
    times_h: tuple[float, ...]
    checks: tuple[Check, ...] = ()
    u_dynamic_w_m2k: float | None = None
    u_dynamic_low95_w_m2k: float | None = None
    u_dynamic_high95_w_m2k: float | None = None
    u_lag_corrected_w_m2k: float | None = None
    notes: tuple[str, ...] = ()


@dataclass(frozen=True)
class HeatBalance:
    """H with its parts, heat flow at survey and design conditions, annual loss.

    ``heat_loss`` is an `energy.HeatLoss`; flows in W, annual figures in kWh (None when the
    survey has no degree-days or design temperatures). ``h_std_w_k`` and the 95 % interval
    come from the joint Monte Carlo over the elements' shared inputs;
    ``h_std_independent_w_k`` is what summing the parts as independent would claim.
    """

    heat_loss: object
    q_survey_w: float
    q_design_w: float | None
    design_indoor_c: float | None
    design_outdoor_c: float | None
    hdd_kd: float | None
    annual_kwh: float | None
    annual_kwh_std: float | None
    h_std_w_k: float | None = None
    h_low95_w_k: float | None = None
    h_high95_w_k: float | None = None
    h_std_independent_w_k: float | None = None


@dataclass(frozen=True)
class EnergyCase:
    """Heat balance, retrofit measures, their package and the heat loss after them."""

    balance: HeatBalance | None
    measures: tuple = ()
    package: object | None = None
    after: object | None = None


@dataclass(frozen=True)
class Failure:
    """A view or series that could not be assessed, and why (a user error)."""

    what: str
    file: str
    error: str


@dataclass(frozen=True, eq=False)
class Assessment:
    """A whole survey assessed: the input, every stage's result, and what failed."""

    survey: Survey
    checks: tuple[Check, ...]
    limit_mould: object | None
    limit_condensation: object | None
    views: tuple[ViewResult, ...]
    elements: tuple[ElementResult, ...]
    defects: tuple
    series: tuple[SeriesResult, ...]
    energy: EnergyCase
    failures: tuple[Failure, ...]
    notes: tuple[str, ...]
