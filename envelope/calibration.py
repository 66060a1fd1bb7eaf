"""Reference spots in a view: contact probe, emissivity tape and heat-flux-meter spot.

A thermogram is calibrated in place by readings taken during the survey:

- a **contact probe** on a surface gives its true temperature, hence the camera's offset
  (one number per camera and view: it sits in every reading of that camera, including a
  reflected temperature read off a reflector);
- an **emissivity tape** of known emissivity next to a bare patch gives the surface's own
  emissivity from the measurement equation, provided the tape stands out enough from the
  reflected temperature (see :data:`TAPE_CONTRAST_RATIO`);
- a **heat-flux-meter spot** gives the surface heat flux q, hence the total surface
  coefficient h_tot = q / (T_ai - T_si) of that view, in place of a convection model.

The functions here are the pure pieces; :mod:`envelope.uncertainty` draws them per trial.
Readings are apparent (blackbody-equivalent) temperatures [°C].
"""

from __future__ import annotations

import math
import warnings
from collections.abc import Sequence
from dataclasses import dataclass

import numpy as np

from envelope import radiometry
from envelope.constants import T0_K

__all__ = [
    "Offset",
    "spot_pixel",
    "spot_mean",
    "view_offset",
    "TAPE_CONTRAST_RATIO",
    "ProbeSpot",
    "TapeSpot",
    "FluxSpot",
    "TapeEmissivity",
    "probe_offset",
    "camera_offset_from_probes",
    "tape_emissivity_samples",
    "tape_emissivity",
    "combine_emissivity",
    "robust_std",
    "total_coefficient_from_flux",
]

#: A tape is used only when its contrast with the reflected temperature, |T_tape - T_refl|,
#: is at least this many times the standard uncertainty of that contrast. Why: the tape's
#: emissivity is a ratio whose denominator is that contrast (in radiance); below about ten
#: standard uncertainties (coefficient of variation > 0.1) the ratio is skewed and
#: heavy-tailed, and the inverse-variance combination with the prior, which assumes a
#: near-normal estimate, no longer holds (Díaz-Francés & Rubio 2013, from memory); near a
#: zero contrast the estimate blows up. What the contrast's uncertainty holds depends on the
#: view: with the camera offset removed by a probe and a reflected temperature known to
#: 0.5 K the threshold is about 5.5 K; with a same-camera reflector (0.2 K) about 2.5 K; with
#: an uncorrected ±2 K camera and a declared reflected temperature about 13 K (the offset
#: then moves the tape's temperature but not the reflected one).
TAPE_CONTRAST_RATIO = 10.0


@dataclass(frozen=True)
class ProbeSpot:
    """A contact-probe reading and the camera's reading at the same spot.

    Attributes
    ----------
    apparent_c : float
        Camera's apparent reading at the spot (3 x 3 px mean) [°C], offset not removed.
    surface_c : float
        Probe's surface temperature [°C].
    surface_std_k : float
        Standard uncertainty of the probe reading (accuracy and contact) [K].
    emissivity, emissivity_std : float
        Emissivity of the surface under the probe and its standard uncertainty [-].
    element : str
        Element under the probe (its emissivity draw is shared with that element's zone).
    n_pixels : int
        Pixels averaged in the camera reading (camera noise / sqrt(n)).
    """

    apparent_c: float
    surface_c: float
    surface_std_k: float = 0.2
    emissivity: float = 0.93
    emissivity_std: float = 0.02
    element: str = ""
    n_pixels: int = 9


@dataclass(frozen=True)
class TapeSpot:
    """An emissivity tape and the bare surface next to it, read by the camera.

    Attributes
    ----------
    tape_apparent_c, surface_apparent_c : float
        Apparent readings on the tape and on the bare surface beside it [°C].
    tape_emissivity, tape_emissivity_std : float
        The tape's (data-sheet) emissivity and its standard uncertainty [-].
    n_pixels : int
        Pixels averaged in each reading.
    """

    tape_apparent_c: float
    surface_apparent_c: float
    tape_emissivity: float = 0.95
    tape_emissivity_std: float = 0.02
    n_pixels: int = 9


@dataclass(frozen=True)
class FluxSpot:
    """A heat-flux-meter reading on the element [W m-2].

    Attributes
    ----------
    q_w_m2, q_std_w_m2 : float
        Mean heat flux into the surface from the room over the survey and its standard
        uncertainty (sensor calibration, the meter's own resistance and emissivity mismatch;
        ISO 9869-1 puts such errors at several per cent).
    apparent_c : float, optional
        Camera's apparent reading next to the meter [°C] (same camera: its offset is shared).
    surface_c, surface_std_k : float, optional
        Surface temperature at the meter from its own thermocouple [°C] and its standard
        uncertainty [K]; used instead of the camera when given.
    emissivity : float, optional
        Emissivity of the surface beside the meter (default: the zone's).
    """

    q_w_m2: float
    q_std_w_m2: float
    apparent_c: float | None = None
    surface_c: float | None = None
    surface_std_k: float = 0.2
    emissivity: float | None = None

    def __post_init__(self):
        if self.apparent_c is None and self.surface_c is None:
            raise ValueError("a heat-flux-meter spot needs apparent_c or surface_c")
        if self.q_std_w_m2 < 0 or self.surface_std_k < 0:
            raise ValueError("q_std_w_m2 and surface_std_k must be >= 0")


# ----------------------------------------------------------------------------- spots
@dataclass(frozen=True)
class Offset:
    """Camera offset removed from a view's apparent temperatures [K].

    Attributes
    ----------
    value_k : float
        What the camera read too warm (positive) at the reference [K].
    std_k : float or None
        Standard uncertainty left after the correction [K]; None when nothing was removed.
    source : str
        Where it came from, in words.
    """

    value_k: float = 0.0
    std_k: float | None = None
    source: str = ""


def spot_pixel(xy_px, shape) -> tuple[int, int] | None:
    """``(row, col)`` of the pixel holding point ``xy_px`` = (x, y), or None outside the frame."""
    col, row = int(math.floor(xy_px[0])), int(math.floor(xy_px[1]))
    if 0 <= row < shape[0] and 0 <= col < shape[1]:
        return row, col
    return None


def spot_mean(image, row: int, col: int) -> float:
    """Mean of the 3 × 3 px patch around a pixel (NaN-aware): one spot reading [°C].

    Returns NaN when the whole patch is invalid.
    """
    patch = np.asarray(image)[max(row - 1, 0): row + 2, max(col - 1, 0): col + 2]
    with warnings.catch_warnings():
        warnings.simplefilter("ignore", RuntimeWarning)  # an all-NaN patch gives NaN
        return float(np.nanmean(patch))


def view_offset(probes: Sequence[ProbeSpot], reflected_c, *, transmittance=1.0,
                atmosphere_c=None, band_um=radiometry.DEFAULT_BAND_UM,
                reflected_by_camera=False, relative_accuracy_k=0.0, noise_k=0.0,
                survey_offset_k=None, survey_offset_std_k=0.3) -> tuple[Offset, float]:
    """The camera offset of one view and the reflected temperature as used [°C].

    From the view's contact probes (`camera_offset_from_probes`), else the survey's stated
    offset (its uncertainty combined with the relative accuracy), else none.
    """
    refl = float(reflected_c)
    if probes:
        value, std, refl_used = camera_offset_from_probes(
            probes, refl, transmittance=transmittance, atmosphere_c=atmosphere_c,
            band_um=band_um, reflected_by_camera=reflected_by_camera,
            relative_accuracy_k=relative_accuracy_k, noise_k=noise_k)
        plural = "s" if len(probes) > 1 else ""
        source = f"contact probe{plural} in this thermogram: camera read {value:+.2f} K, removed"
        if reflected_by_camera:
            source += (f"; reflected temperature read with the same camera: {refl:.2f} → "
                       f"{refl_used:.2f} °C")
        return Offset(value, std, source), refl_used
    if survey_offset_k is not None:
        std = math.sqrt(survey_offset_std_k**2 + relative_accuracy_k**2 / 3.0)
        refl_used = refl - survey_offset_k if reflected_by_camera else refl
        return (Offset(float(survey_offset_k), std,
                       f"survey camera offset {survey_offset_k:+.2f} K removed"), refl_used)
    return Offset(), refl


# ----------------------------------------------------------------------------- probe
def probe_offset(probe_apparent_c, probe_surface_c, emissivity, reflected_c, transmittance=1.0,
                 atmosphere_c=None, band_um=radiometry.DEFAULT_BAND_UM):
    """Camera offset implied by one contact-probe spot [K] (positive: camera reads warm).

    Notes
    -----
    delta = A_read - A(T_probe), with A(T) the apparent temperature of a surface at T by the
    measurement equation (:func:`envelope.radiometry.apparent_temperature`). Vectorised.
    """
    expected = radiometry.apparent_temperature(probe_surface_c, emissivity, reflected_c,
                                               transmittance, atmosphere_c, band_um=band_um)
    out = np.asarray(probe_apparent_c, dtype=float) - np.asarray(expected, dtype=float)
    return out if out.ndim else float(out)


def camera_offset_from_probes(probes: Sequence[ProbeSpot], reflected_c, *, transmittance=1.0,
                              atmosphere_c=None, band_um=radiometry.DEFAULT_BAND_UM,
                              reflected_by_camera=False, relative_accuracy_k=0.0,
                              noise_k=0.0):
    """The camera's offset in one view from its probe spots, and its standard uncertainty.

    Parameters
    ----------
    probes : sequence of ProbeSpot
        Probe spots of the view (at least one).
    reflected_c : float
        Reflected apparent temperature as declared [°C]; when ``reflected_by_camera`` it was
        read off a reflector with the same camera and carries the same offset.
    relative_accuracy_k : float
        Camera relative accuracy (± limit, rectangular) [K].
    noise_k : float
        Camera noise per pixel (standard deviation) [K].

    Returns
    -------
    (float, float, float)
        Offset [K], its standard uncertainty [K] (probe errors and the relative accuracy and
        noise of the spot readings, averaged over the probes), and the reflected temperature
        corrected for the offset [°C] (unchanged unless ``reflected_by_camera``).

    Notes
    -----
    With a reflector read by the same camera, T_refl = R - delta, and the probe's expected
    reading depends on T_refl through (1 - eps) only: two fixed-point steps converge to
    (1 - eps)^2 of the first correction (below 1e-4 K for eps > 0.8).
    """
    if not probes:
        raise ValueError("camera_offset_from_probes needs at least one probe")
    refl = float(reflected_c)
    offset = 0.0
    for _ in range(3 if reflected_by_camera else 1):
        refl_used = refl - offset if reflected_by_camera else refl
        deltas = [probe_offset(p.apparent_c, p.surface_c, p.emissivity, refl_used, transmittance,
                               atmosphere_c, band_um) for p in probes]
        offset = float(np.mean(deltas))
    var_each = [p.surface_std_k**2 + relative_accuracy_k**2 / 3.0 + noise_k**2 / p.n_pixels
                for p in probes]
    std = math.sqrt(float(np.sum(var_each)) / len(probes) ** 2)
    return offset, std, (refl - offset if reflected_by_camera else refl)


# ----------------------------------------------------------------------------- tape
def robust_std(draws) -> float:
    """Half the 15.87–84.13 % range of the finite draws (the standard deviation for a normal
    distribution; finite for the heavy-tailed ratio of a poorly conditioned tape)."""
    x = np.asarray(draws, dtype=float).ravel()
    x = x[np.isfinite(x)]
    if x.size < 3:
        return float("inf")
    lo, hi = np.quantile(x, [0.158655, 0.841345])
    return float(0.5 * (hi - lo))


def tape_emissivity_samples(tape_apparent_c, surface_apparent_c, reflected_c, tape_emissivity,
                            transmittance=1.0, atmosphere_c=None,
                            band_um=radiometry.DEFAULT_BAND_UM):
    """Surface emissivity and tape temperature from tape and bare-surface readings.

    All arguments broadcast (draws of a Monte Carlo, or scalars).

    Returns
    -------
    (numpy.ndarray, numpy.ndarray)
        Emissivity [-] (not clipped; NaN where the contrast vanishes) and the tape's object
        temperature [°C].

    Notes
    -----
    The tape's object temperature T follows from its reading and known emissivity; the bare
    surface beside it is at the same T, so its radiance W_s = tau eps L(T) + tau (1 - eps)
    L(T_r) + (1 - tau) L(T_atm) gives
    eps = [W_s - (1 - tau) L(T_atm) - tau L(T_r)] / [tau (L(T) - L(T_r))], L the band
    radiance (measurement equation, e.g. Minkina & Dudzik 2009).
    """
    tau = np.asarray(transmittance, dtype=float)
    atm = reflected_c if atmosphere_c is None else atmosphere_c
    t_tape = radiometry.object_temperature(tape_apparent_c, tape_emissivity, reflected_c, tau,
                                           atm, band_um=band_um)

    def rad(t_c):
        return radiometry.band_radiance(np.asarray(t_c, dtype=float) + T0_K, band_um)

    l_r, l_t = rad(reflected_c), rad(t_tape)
    with np.errstate(divide="ignore", invalid="ignore"):
        eps = (rad(surface_apparent_c) - (1.0 - tau) * rad(atm) - tau * l_r) / (tau * (l_t - l_r))
    return np.asarray(eps, dtype=float), np.asarray(t_tape, dtype=float)


def combine_emissivity(prior, prior_std, tape, tape_std):
    """Inverse-variance combination of the prior emissivity and the tape's [-].

    Returns
    -------
    (float, float, float)
        Combined emissivity, its standard uncertainty, and the weight w of the tape
        (combined = w tape + (1 - w) prior, w = prior_std^2 / (prior_std^2 + tape_std^2)).
    """
    if prior_std < 0 or tape_std < 0:
        raise ValueError("standard uncertainties must be >= 0")
    if prior_std == 0 and tape_std == 0:
        return float(prior), 0.0, 0.0
    w = prior_std**2 / (prior_std**2 + tape_std**2)
    std = math.sqrt(w**2 * tape_std**2 + (1.0 - w) ** 2 * prior_std**2)
    return float(w * tape + (1.0 - w) * prior), std, float(w)


@dataclass(frozen=True)
class TapeEmissivity:
    """A view's emissivity after its tape (or the prior, when the tape was refused).

    ``emissivity``/``emissivity_std`` are what the image path should use everywhere for that
    surface (maps, fRsi, defects, U). ``tape_*`` describe the tape alone (its spread as
    :func:`robust_std`: a poorly conditioned tape has heavy tails); ``weight`` is its
    share in the combination (0 when refused); ``contrast_k`` is |T_tape - T_refl| and
    ``contrast_std_k`` its standard uncertainty; ``note`` says what was done, in words.
    """

    emissivity: float
    emissivity_std: float
    accepted: bool
    tape_emissivity: float
    tape_emissivity_std: float
    weight: float
    contrast_k: float
    contrast_std_k: float
    note: str


def tape_emissivity(tape: TapeSpot, reflected_c, prior_emissivity, prior_std, *,
                    reflected_std_k, offset_std_k=0.0, reflected_by_camera=False,
                    relative_accuracy_k=0.2, noise_k=0.05, transmittance=1.0,
                    atmosphere_c=None, band_um=radiometry.DEFAULT_BAND_UM, n_draws=4000,
                    seed=0) -> TapeEmissivity:
    """The view's emissivity from its tape, combined with the prior by inverse variance.

    Parameters
    ----------
    tape : TapeSpot
        Readings (apparent, with the camera offset already removed if the image path removes
        it; ``offset_std_k`` is then what is left of it).
    reflected_c, reflected_std_k : float
        Reflected apparent temperature [°C] and its standard uncertainty [K] (for a reflector
        read by the camera: the method's own scatter; the offset is counted apart).
    prior_emissivity, prior_std : float
        Declared emissivity and its standard uncertainty [-].
    offset_std_k : float
        Standard uncertainty of the camera offset left in the readings [K].
    reflected_by_camera : bool
        The reflected temperature was read with the same camera (its offset cancels).
    relative_accuracy_k : float
        Camera relative accuracy (± limit, rectangular, per reading) [K].
    noise_k : float
        Camera noise per pixel [K].
    n_draws, seed : int
        Monte Carlo draws (JCGM 101) and seed.

    Returns
    -------
    TapeEmissivity

    Notes
    -----
    Per draw: one camera offset shared by the tape, the surface and (when read by the
    camera) the reflected temperature; relative accuracy and noise per reading; the tape's
    emissivity from its data sheet; then :func:`tape_emissivity_samples`. The tape is
    refused when |T_tape - T_refl| < ``TAPE_CONTRAST_RATIO`` x its standard uncertainty;
    otherwise :func:`combine_emissivity`. The draws are clipped to (0, 1] only after the
    standard deviation is taken, so a poorly conditioned tape shows its true spread.
    """
    if not 0 < prior_emissivity <= 1 or prior_std < 0:
        raise ValueError(f"prior emissivity must lie in (0, 1] with std >= 0, got "
                         f"{prior_emissivity}, {prior_std}")
    if reflected_std_k < 0 or offset_std_k < 0 or relative_accuracy_k < 0 or noise_k < 0:
        raise ValueError("uncertainties must be >= 0")
    rng = np.random.default_rng(seed)
    n = int(n_draws)
    off = rng.normal(0.0, offset_std_k, n)
    rel = rng.uniform(-relative_accuracy_k, relative_accuracy_k, (2, n))
    noise = rng.normal(0.0, noise_k / math.sqrt(tape.n_pixels), (2, n))
    refl = reflected_c + rng.normal(0.0, reflected_std_k, n) - (off if reflected_by_camera else 0)
    eps_t = np.clip(rng.normal(tape.tape_emissivity, tape.tape_emissivity_std, n), 0.01, 1.0)
    eps, t_tape = tape_emissivity_samples(tape.tape_apparent_c - off + rel[0] + noise[0],
                                          tape.surface_apparent_c - off + rel[1] + noise[1],
                                          refl, eps_t, transmittance, atmosphere_c, band_um)
    e0, t0 = tape_emissivity_samples(tape.tape_apparent_c, tape.surface_apparent_c, reflected_c,
                                     tape.tape_emissivity, transmittance, atmosphere_c, band_um)
    e0, t0 = float(e0), float(t0)
    contrast = abs(t0 - reflected_c)
    contrast_std = float(np.std(t_tape - refl, ddof=1))
    tape_std = robust_std(eps)
    if not (np.isfinite(e0) and contrast >= TAPE_CONTRAST_RATIO * contrast_std):
        note = (f"tape refused: its contrast with the reflected temperature, {contrast:.2f} K, "
                f"is below {TAPE_CONTRAST_RATIO:g} x its uncertainty ({contrast_std:.2f} K); "
                f"the emissivity it gives ({e0:.2f} ± {tape_std:.2f}) cannot be combined; "
                f"declared {prior_emissivity:g} ± {prior_std:g} kept")
        return TapeEmissivity(float(prior_emissivity), float(prior_std), False, e0, tape_std,
                              0.0, contrast, contrast_std, note)
    value, std, w = combine_emissivity(prior_emissivity, prior_std, e0, tape_std)
    value = min(max(value, 0.01), 1.0)
    note = (f"tape: emissivity {e0:.3f} ± {tape_std:.3f} (contrast {contrast:.1f} K), combined "
            f"with the declared {prior_emissivity:g} ± {prior_std:g} (tape weight {w:.2f}): "
            f"{value:.3f} ± {std:.3f}")
    return TapeEmissivity(value, std, True, e0, tape_std, w, contrast, contrast_std, note)


# ----------------------------------------------------------------------------- flux spot
def total_coefficient_from_flux(q_w_m2, t_ai_c, t_si_c):
    """Total interior surface coefficient from a heat-flux-meter spot [W m-2 K-1].

    Notes
    -----
    h_tot = q / (T_ai - T_si): convection and long-wave radiation together, referred to the
    room air temperature, at the spot (vectorised). The zone's flux is then
    h_tot (T_ai - T_si,zone), which assumes the spot's radiant surroundings hold for the zone.

    References
    ----------
    [1] ISO 9869-1:2014, Thermal insulation -- Building elements -- In-situ measurement of
        thermal resistance and thermal transmittance -- Part 1: Heat flow meter method.
    """
    with np.errstate(divide="ignore", invalid="ignore"):
        out = np.asarray(q_w_m2, dtype=float) / (np.asarray(t_ai_c, float) - np.asarray(t_si_c, float))
    return out if out.ndim else float(out)
