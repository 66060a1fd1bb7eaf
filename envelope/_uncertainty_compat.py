"""The earlier interface of :mod:`envelope.uncertainty`, mapped onto :func:`estimate_u`.

``UInputs``/``Calibration``/``monte_carlo_u`` keep the pipeline running until it builds
:class:`envelope.uncertainty.ViewInputs` and :class:`~envelope.uncertainty.ZoneInputs` itself.
Field names are the old ones (``u_*`` for standard uncertainties); the physics is the new
engine's (one correction path with the atmosphere and band, correlated offset, tape combined
by inverse variance or refused).
"""

from __future__ import annotations

from dataclasses import dataclass, field

from envelope import convection, radiometry
from envelope.calibration import ProbeSpot, TapeSpot

__all__ = ["Calibration", "UInputs", "UEstimate", "monte_carlo_u"]


@dataclass(frozen=True)
class Calibration:
    """Reference-spot readings on the zone (earlier interface; see ProbeSpot, TapeSpot)."""

    probe_surface_c: float | None = None
    u_probe_k: float = 0.2
    probe_apparent_c: float | None = None
    tape_apparent_c: float | None = None
    tape_emissivity: float = 0.95
    u_tape_emissivity: float = 0.02
    surface_next_to_tape_apparent_c: float | None = None

    @property
    def has_probe(self) -> bool:
        return self.probe_surface_c is not None and self.probe_apparent_c is not None

    @property
    def has_tape(self) -> bool:
        return self.tape_apparent_c is not None and self.surface_next_to_tape_apparent_c is not None


@dataclass(frozen=True)
class UInputs:
    """Inputs of one element U (earlier interface). ``h_c_model`` with ``h_c_alternatives``
    are the members of a convection ensemble drawn with equal weights, each times 1 ±
    ``h_c_band``; a float is a fixed coefficient."""

    apparent_c: float
    emissivity: float
    u_emissivity: float
    reflected_c: float
    u_reflected_k: float
    t_ai_c: float
    u_t_ai_k: float
    t_ae_c: float
    u_t_ae_k: float
    camera_accuracy_k: float = 2.0
    camera_relative_k: float = 0.2
    transmittance: float = 1.0
    side: str = "interior"
    h_c_model: str | float = "iso6946"
    h_c_alternatives: tuple[str, ...] = ()
    h_c_band: float = 0.2
    direction: str = "horizontal"
    wind_m_s: float = 0.0
    u_wind: float = 0.5
    height_m: float = 2.5
    t_sky_c: float | None = None
    u_t_sky_k: float = 2.0
    f_sky: float = 0.5
    calibration: Calibration | None = None
    atmosphere_c: float | None = None
    band_um: tuple[float, float] = radiometry.DEFAULT_BAND_UM


@dataclass(frozen=True)
class UEstimate:
    """Result of :func:`monte_carlo_u` (earlier interface)."""

    u_w_m2k: float
    u_best_w_m2k: float
    u_std: float
    low95: float
    high95: float
    budget: dict[str, float]
    calibrated: bool
    calibration_note: str
    n_draws: int
    n_valid: int
    emissivity_mean: float
    emissivity_std: float
    t_s_mean_c: float
    t_s_std_k: float
    estimate: str = field(default="mean of the Monte Carlo draws (JCGM 101 §7.6)")


def _convection(inp: UInputs):
    if not isinstance(inp.h_c_model, str):
        return float(inp.h_c_model)
    members = (inp.h_c_model, *inp.h_c_alternatives)
    return convection.Ensemble("legacy:" + "+".join(members), members, heat_flow=inp.direction,
                               height_m=inp.height_m, band=inp.h_c_band)


def monte_carlo_u(inputs: UInputs, n_draws: int = 20000, seed: int = 0) -> UEstimate:
    """Element U with its 95 % interval through :func:`envelope.uncertainty.estimate_u`."""
    from envelope.uncertainty import Camera, ViewInputs, ZoneInputs, estimate_u

    inp = inputs
    if inp.side not in ("interior", "exterior"):
        raise ValueError(f"side must be 'interior' or 'exterior', got {inp.side!r}")
    if not 0 <= inp.h_c_band < 1:
        raise ValueError(f"h_c_band must lie in [0, 1), got {inp.h_c_band}")
    for name in ("u_emissivity", "u_reflected_k", "u_t_ai_k", "u_t_ae_k", "camera_accuracy_k",
                 "camera_relative_k", "u_wind", "u_t_sky_k"):
        if getattr(inp, name) < 0:
            raise ValueError(f"{name} must be >= 0, got {getattr(inp, name)}")
    cal = inp.calibration or Calibration()
    probes = ((ProbeSpot(cal.probe_apparent_c, cal.probe_surface_c, cal.u_probe_k,
                         inp.emissivity, inp.u_emissivity, element="zone", n_pixels=1),)
              if cal.has_probe else ())
    tape = (TapeSpot(cal.tape_apparent_c, cal.surface_next_to_tape_apparent_c,
                     cal.tape_emissivity, cal.u_tape_emissivity) if cal.has_tape else None)
    ext = (() if not isinstance(inp.h_c_model, str) else
           tuple("iso6946_wind" if m == "iso6946" else m
                 for m in (inp.h_c_model, *inp.h_c_alternatives)))
    view = ViewInputs(
        "view", inp.t_ai_c, inp.t_ae_c, inp.reflected_c,
        camera=Camera(accuracy_k=inp.camera_accuracy_k, relative_k=inp.camera_relative_k,
                      noise_k=0.0, band_um=tuple(inp.band_um)),
        side=inp.side, t_ai_std_k=inp.u_t_ai_k, t_ae_std_k=inp.u_t_ae_k,
        reflected_std_k=inp.u_reflected_k, transmittance=inp.transmittance,
        atmosphere_c=inp.atmosphere_c, probes=probes, tape=tape, wind_m_s=inp.wind_m_s,
        wind_std_m_s=inp.u_wind, t_sky_c=inp.t_sky_c, t_sky_std_k=inp.u_t_sky_k, f_sky=inp.f_sky,
        exterior_convection=ext or ("iso6946_wind",), exterior_band=inp.h_c_band)
    zone = ZoneInputs("zone", inp.apparent_c, inp.emissivity, inp.u_emissivity, n_pixels=1,
                      convection=_convection(inp) if inp.side == "interior" else 2.5)
    r = estimate_u(view, zone, n_draws=n_draws, seed=seed)
    calibrated = cal.has_probe or cal.has_tape
    note = "; ".join(r.notes) if calibrated else (
        f"no reference-spot calibration: camera absolute accuracy ±{inp.camera_accuracy_k:g} K "
        "(rectangular) applies")
    return UEstimate(r.u_w_m2k, r.u_best_w_m2k, r.u_std_w_m2k, r.u_low95_w_m2k, r.u_high95_w_m2k,
                     r.budget, calibrated, note, r.n_draws, r.n_valid, r.emissivity,
                     r.emissivity_std, r.t_si_c, r.t_si_std_k)
