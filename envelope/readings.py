"""What the Monte Carlo of :mod:`envelope.uncertainty` is told about a view and a zone.

Plain data: the camera (accuracy, relative accuracy, noise, band, a known offset), the view's
shared readings (air temperatures and their thermometers, reflected and mean radiant
temperatures, transmittance and atmosphere, reference spots, exterior weather), one zone's
reading with its emissivity and convection ensemble, and the per-frame data of a series.
Units are in the names (°C, K, m s-1, W m-2); ``*_std*`` are standard uncertainties.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass, field

from envelope import convection, radiometry
from envelope.calibration import FluxSpot, ProbeSpot, TapeSpot

__all__ = ["Camera", "ViewInputs", "ZoneInputs", "SeriesInputs"]


@dataclass(frozen=True)
class Camera:
    """One camera: its accuracy figures and band.

    ``accuracy_k`` and ``relative_k`` are ± limits of rectangular distributions, as camera
    specifications state them: the absolute error (one offset per camera and view) and the
    reading-to-reading error within an image (one draw per reading). ``noise_k`` is the
    temporal noise per pixel (standard deviation). When the offset is known from elsewhere
    (a survey-wide calibration) give ``offset_k`` and ``offset_std_k``; probe spots in the
    view take precedence over both.
    """

    id: str = "camera"
    accuracy_k: float = 2.0
    relative_k: float = 0.2
    noise_k: float = 0.05
    band_um: tuple[float, float] = radiometry.DEFAULT_BAND_UM
    offset_k: float = 0.0
    offset_std_k: float | None = None


@dataclass(frozen=True)
class ViewInputs:
    """What one view (thermogram) shares among its elements.

    Readings are apparent temperatures with no camera offset removed (the Monte Carlo finds
    the offset itself from the probes). ``reflected_c`` is the reflected apparent temperature
    of the measurement equation; with ``reflected_by_camera`` it was read off a reflector
    with the same camera and ``reflected_std_k`` is the method's own scatter (the offset is
    counted apart). ``mrt_c`` is the mean radiant temperature of the long-wave exchange; when
    None it is the reflected temperature (the same draw, plus ``mrt_std_k`` of independent
    difference). ``atmosphere_c`` None means the air temperature of the camera's side.
    ``indoor_sensor``/``outdoor_sensor`` name the thermometers (their errors are shared by
    every view that names the same sensor). ``air_noise_std_k`` is the per-reading scatter of
    an air temperature about its systematic error (drawn per frame). Exterior views use
    ``exterior_convection`` (names of :func:`envelope.films.convective_coefficient`, drawn
    with equal weights, each times 1 ± ``exterior_band``), wind and sky.
    """

    view_id: str
    t_ai_c: float
    t_ae_c: float
    reflected_c: float
    camera: Camera = Camera()
    side: str = "interior"
    t_ai_std_k: float = 0.3
    t_ae_std_k: float = 0.3
    air_noise_std_k: float = 0.0
    indoor_sensor: str = "indoor"
    outdoor_sensor: str = "outdoor"
    reflected_std_k: float = 0.5
    reflected_by_camera: bool = False
    mrt_c: float | None = None
    mrt_std_k: float = 0.0
    transmittance: float = 1.0
    transmittance_std: float = 0.0
    atmosphere_c: float | None = None
    probes: tuple[ProbeSpot, ...] = ()
    tape: TapeSpot | None = None
    tape_element: str = ""
    flux: FluxSpot | None = None
    flux_element: str = ""
    wind_m_s: float = 0.0
    wind_std_m_s: float = 0.5
    t_sky_c: float | None = None
    t_sky_std_k: float = 2.0
    f_sky: float = 0.5
    exterior_convection: tuple[str, ...] = ("iso6946_wind",)
    exterior_band: float = 0.2
    exterior_emissivity: float = 0.9


@dataclass(frozen=True)
class ZoneInputs:
    """One element's zone in a view.

    ``apparent_c`` is the zone's mean apparent reading (no offset removed) over
    ``n_pixels`` pixels; ``convection`` an :class:`envelope.convection.Ensemble` (see
    :func:`envelope.convection.interior_ensemble`) or a fixed h_c [W m-2 K-1].
    """

    element: str
    apparent_c: float
    emissivity: float
    emissivity_std: float = 0.02
    n_pixels: int = 1000
    convection: convection.Ensemble | float = field(
        default_factory=lambda: convection.interior_ensemble("wall"))


@dataclass(frozen=True)
class SeriesInputs:
    """Per-frame data of a series of one zone (arrays of equal length, times increasing)."""

    times_h: Sequence[float]
    apparent_c: Sequence[float]
    t_ai_c: Sequence[float]
    t_ae_c: Sequence[float]
    reflected_c: Sequence[float] | None = None
