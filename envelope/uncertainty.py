"""Monte Carlo propagation of uncertainty to an element U-value (JCGM 101:2008).

The measurement model runs from the camera reading to U: apparent temperature over the zone
-> object temperature (measurement equation, :mod:`envelope.radiometry`) -> surface heat flux
(film coefficients, :mod:`envelope.films`) -> U (:mod:`envelope.transmittance`). Every input
with a stated uncertainty is drawn at once for all draws (fully vectorised), with
``numpy.random.default_rng(seed)``: the same seed gives byte-identical results.

Reference-spot calibration: a contact probe on the surface removes the camera's absolute
offset; a tape of known emissivity on the surface gives the surface's own emissivity.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass, field

import numpy as np

from envelope import films, radiometry, transmittance
from envelope.constants import T0_K
from envelope.errors import EnvelopeWarning


@dataclass(frozen=True)
class Calibration:
    """Reference-spot readings taken during the survey (any subset).

    Attributes
    ----------
    probe_surface_c : float, optional
        Contact-probe surface temperature at a spot of the zone [°C].
    u_probe_k : float
        Standard uncertainty of the probe reading [K] (probe accuracy and contact).
    probe_apparent_c : float, optional
        Apparent (blackbody-equivalent) camera reading at the probe spot [°C].
    tape_apparent_c : float, optional
        Apparent reading on a tape patch of known emissivity stuck on the surface [°C].
    tape_emissivity : float
        Emissivity of the tape [-] (its data-sheet value).
    u_tape_emissivity : float
        Standard uncertainty of the tape emissivity [-].
    surface_next_to_tape_apparent_c : float, optional
        Apparent reading on the bare surface next to the tape [°C].
    """

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
    """Best estimates and uncertainties of the inputs of an element U [°C, K, -].

    Standard uncertainties are named ``u_*``. ``camera_accuracy_k`` and
    ``camera_relative_k`` are half-widths (± limits) of rectangular distributions, as
    camera specifications state them. ``h_c_model`` is the convective model; "iso6946" means
    the ISO 6946 conventional value of the side (h_ci by direction inside, 4 + 4 v outside).
    Model uncertainty of h_c: each draw picks one of ``(h_c_model, *h_c_alternatives)`` with
    equal probability and multiplies it by a rectangular factor 1 ± ``h_c_band`` (our choice:
    a ±20 % band is about the spread between ISO 6946 and natural-convection correlations at
    survey temperature differences). A float ``h_c_model`` is a fixed coefficient with the same
    band. Exterior: ``wind_m_s`` (``u_wind``; normal draws folded at 0 m/s), sky temperature ``t_sky_c`` (``u_t_sky_k``;
    None: the outdoor air), ground at the outdoor air, sky view factor ``f_sky``.
    """

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


@dataclass(frozen=True)
class UEstimate:
    """Monte Carlo result for an element U [W m-2 K-1].

    ``u_w_m2k`` is the mean of the valid draws (JCGM 101 §7.6); ``u_best_w_m2k`` is the
    model evaluated at the best estimates. ``low95``/``high95`` bound the probabilistically
    symmetric 95 % coverage interval (2.5 and 97.5 percentiles, JCGM 101 §7.7). ``budget``
    maps each input group to its share of the variance (one-at-a-time resampling, shares
    normalised to sum to 1; interactions are not counted).
    """

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


def _sample(inp: UInputs, n: int, rng) -> dict[str, np.ndarray]:
    """All primitive draws, always in the same order (reproducible streams)."""
    cal = inp.calibration or Calibration()
    d = {
        "emissivity": rng.normal(inp.emissivity, inp.u_emissivity, n),
        "reflected": rng.normal(inp.reflected_c, inp.u_reflected_k, n),
        "t_ai": rng.normal(inp.t_ai_c, inp.u_t_ai_k, n),
        "t_ae": rng.normal(inp.t_ae_c, inp.u_t_ae_k, n),
        "camera_absolute": rng.uniform(-inp.camera_accuracy_k, inp.camera_accuracy_k, n),
        "camera_relative": rng.uniform(-inp.camera_relative_k, inp.camera_relative_k, n),
        "h_c_factor": rng.uniform(1.0 - inp.h_c_band, 1.0 + inp.h_c_band, n),
        "h_c_choice": rng.integers(0, 1 + len(inp.h_c_alternatives), n),
        "wind": np.abs(rng.normal(inp.wind_m_s, inp.u_wind, n)),
        "t_sky": rng.normal(inp.t_ae_c if inp.t_sky_c is None else inp.t_sky_c, inp.u_t_sky_k, n),
        "probe": rng.normal(
            cal.probe_surface_c if cal.probe_surface_c is not None else 0.0, cal.u_probe_k, n
        ),
        "tape_emissivity": rng.normal(cal.tape_emissivity, cal.u_tape_emissivity, n),
        "tape_relative": rng.uniform(-inp.camera_relative_k, inp.camera_relative_k, (2, n)),
    }
    d["emissivity"] = np.clip(d["emissivity"], 0.01, 1.0)
    d["tape_emissivity"] = np.clip(d["tape_emissivity"], 0.01, 1.0)
    return d


def _nominal(inp: UInputs) -> dict[str, object]:
    cal = inp.calibration or Calibration()
    return {
        "emissivity": inp.emissivity,
        "reflected": inp.reflected_c,
        "t_ai": inp.t_ai_c,
        "t_ae": inp.t_ae_c,
        "camera_absolute": 0.0,
        "camera_relative": 0.0,
        "h_c_factor": 1.0,
        "h_c_choice": 0,
        "wind": inp.wind_m_s,
        "t_sky": inp.t_ae_c if inp.t_sky_c is None else inp.t_sky_c,
        "probe": cal.probe_surface_c if cal.probe_surface_c is not None else 0.0,
        "tape_emissivity": cal.tape_emissivity,
        "tape_relative": np.zeros((2, 1)),
    }


def _groups(inp: UInputs) -> dict[str, tuple[str, ...]]:
    cal = inp.calibration or Calibration()
    g = {}
    g["emissivity (tape)" if cal.has_tape else "emissivity"] = (
        ("tape_emissivity", "tape_relative") if cal.has_tape else ("emissivity",)
    )
    g["reflected"] = ("reflected",)
    g["t_ai"] = ("t_ai",)
    g["t_ae"] = ("t_ae",)
    if not cal.has_probe or cal.has_tape:
        g["camera_absolute"] = ("camera_absolute",)
    if cal.has_probe:
        g["camera_relative"] = ("camera_relative",)
        g["probe"] = ("probe",)
    g["h_c"] = ("h_c_factor", "h_c_choice")
    if inp.side == "exterior":
        g["wind"] = ("wind",)
        if inp.t_sky_c is not None:
            g["t_sky"] = ("t_sky",)
    return g


def _tape_emissivity(inp: UInputs, d):
    """Surface emissivity from a tape of known emissivity beside it (same true temperature)."""
    cal = inp.calibration
    tau, t_r = inp.transmittance, d["reflected"]
    off = d["camera_absolute"]
    t_tape = radiometry.object_temperature(
        cal.tape_apparent_c - off + d["tape_relative"][0], d["tape_emissivity"], t_r, tau
    )
    w = radiometry.band_radiance(
        cal.surface_next_to_tape_apparent_c - off + d["tape_relative"][1] + T0_K
    )
    l_r = radiometry.band_radiance(np.asarray(t_r, float) + T0_K)
    l_t = radiometry.band_radiance(np.asarray(t_tape, float) + T0_K)
    with np.errstate(divide="ignore", invalid="ignore"):
        eps = (w - l_r) / (tau * (l_t - l_r))  # path term uses the reflected temperature
    return np.clip(np.nan_to_num(eps, nan=1.0), 0.01, 1.0), t_tape


def _model(inp: UInputs, d) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """U, surface temperature and emissivity for one set of (drawn or nominal) inputs."""
    cal = inp.calibration or Calibration()
    tau, t_r = inp.transmittance, d["reflected"]
    eps = _tape_emissivity(inp, d)[0] if cal.has_tape else d["emissivity"]
    if cal.has_probe:
        a_probe = radiometry.apparent_temperature(d["probe"], eps, t_r, tau)
        a_zone = a_probe + (inp.apparent_c - cal.probe_apparent_c) + d["camera_relative"]
    else:
        a_zone = inp.apparent_c - d["camera_absolute"]
    shape = np.broadcast_shapes(
        *(np.shape(v) for k, v in d.items() if k != "tape_relative"),
        np.shape(d["tape_relative"])[1:],
    )
    t_s = radiometry.object_temperature(a_zone, eps, t_r, tau)
    t_s = np.broadcast_to(np.asarray(t_s, dtype=float), shape)
    t_air = d["t_ai"] if inp.side == "interior" else d["t_ae"]
    models = (inp.h_c_model, *inp.h_c_alternatives)
    hs = []
    for m in models:
        if not isinstance(m, str):
            hs.append(np.broadcast_to(float(m), t_s.shape))
            continue
        if m == "iso6946" and inp.side == "exterior":
            m = "iso6946_wind"
        hs.append(
            np.broadcast_to(
                films.convective_coefficient(
                    m,
                    direction=inp.direction,
                    t_s_c=t_s,
                    t_a_c=t_air,
                    height_m=inp.height_m,
                    wind_m_s=d["wind"],
                ),
                t_s.shape,
            )
        )
    choice = np.broadcast_to(np.asarray(d["h_c_choice"]), t_s.shape)
    h_c = np.choose(choice, hs) * d["h_c_factor"]
    if inp.side == "interior":
        u = transmittance.u_interior(t_s, d["t_ai"], d["t_ae"], t_r, eps, h_c)
    else:
        u = transmittance.u_exterior(
            t_s,
            d["t_ae"],
            d["t_ai"],
            eps,
            h_c,
            t_sky_c=d["t_sky"],
            t_ground_c=d["t_ae"],
            f_sky=inp.f_sky,
        )
    return np.asarray(u, dtype=float), t_s, np.broadcast_to(np.asarray(eps, float), t_s.shape)


def _validate(inp: UInputs, n_draws: int):
    if inp.side not in ("interior", "exterior"):
        raise ValueError(f"side must be 'interior' or 'exterior', got {inp.side!r}")
    if n_draws < 100:
        raise ValueError(f"n_draws must be >= 100, got {n_draws}")
    for name in (
        "u_emissivity",
        "u_reflected_k",
        "u_t_ai_k",
        "u_t_ae_k",
        "camera_accuracy_k",
        "camera_relative_k",
        "h_c_band",
        "u_wind",
        "u_t_sky_k",
    ):
        if getattr(inp, name) < 0:
            raise ValueError(f"{name} must be >= 0, got {getattr(inp, name)}")
    if not 0 < inp.emissivity <= 1:
        raise ValueError(f"emissivity must lie in (0, 1], got {inp.emissivity}")
    if not 0 <= inp.h_c_band < 1:
        raise ValueError(f"h_c_band must lie in [0, 1), got {inp.h_c_band}")


def _calibration_note(inp: UInputs) -> tuple[bool, str]:
    cal = inp.calibration or Calibration()
    notes = []
    if cal.has_probe:
        notes.append(
            f"contact probe at {cal.probe_surface_c:g} °C (u = {cal.u_probe_k:g} K) replaces the "
            f"camera's absolute accuracy (±{inp.camera_accuracy_k:g} K) by the probe uncertainty "
            f"and the relative accuracy (±{inp.camera_relative_k:g} K)"
        )
    if cal.has_tape:
        notes.append(
            f"tape of emissivity {cal.tape_emissivity:g} (u = {cal.u_tape_emissivity:g}) gives "
            "the surface emissivity from the measurement equation, replacing the stated "
            f"{inp.emissivity:g} ± {inp.u_emissivity:g}"
        )
    if not notes:
        return False, (
            f"no reference-spot calibration: camera absolute accuracy ±{inp.camera_accuracy_k:g} K "
            "(rectangular) applies"
        )
    return True, "; ".join(notes)


def monte_carlo_u(inputs: UInputs, n_draws: int = 20000, seed: int = 0) -> UEstimate:
    """Element U with its 95 % coverage interval by Monte Carlo (JCGM 101:2008).

    Parameters
    ----------
    inputs : UInputs
        Best estimates, uncertainties and optional calibration.
    n_draws : int
        Number of Monte Carlo trials M (all drawn at once).
    seed : int
        Seed of ``numpy.random.default_rng``; same seed, byte-identical result.

    Returns
    -------
    UEstimate

    Notes
    -----
    Measurement model, interior side: T_s = T_obj(A - delta; eps, T_r, tau) with A the zone's
    apparent reading and delta the camera offset (rectangular, ± camera accuracy); then
    U = [h_c (T_ai - T_si) + eps sigma (T_r^4 - T_si^4)] / (T_ai - T_ae). Exterior side: the
    exterior balance of :func:`envelope.transmittance.u_exterior`.

    Probe calibration: the true apparent temperature at the probe spot is
    A_p = T_app(T_probe; eps, T_r, tau); the zone's is A_p + (A - A_probe reading) + delta_rel,
    delta_rel rectangular ± relative accuracy: the camera's common offset cancels in the
    difference (this is the exact form of "offset = T_obj(probe pixel) - T_probe").

    Tape calibration: the tape's object temperature T follows from its reading and its known
    emissivity; the bare surface beside it, at the same T, gives
    eps = (L(A_s) - L(T_r)) / (tau (L(T) - L(T_r))), L the band radiance [1]. It is poorly
    conditioned when T is close to T_r (a warning is issued below 3 K).

    Draws whose object temperature is undefined (NaN) are dropped; ``n_valid`` says how many
    remain. The budget resamples one input group at a time with all others at their best
    estimates.

    References
    ----------
    [1] JCGM 101:2008, Evaluation of measurement data -- Supplement 1 to the "Guide to the
        expression of uncertainty in measurement" -- Propagation of distributions using a
        Monte Carlo method, §§5.9, 7.6, 7.7.
    [2] Fokaides, P. A., Kalogirou, S. A., Applied Energy 88 (2011) 4358-4365.
    """
    _validate(inputs, n_draws)
    rng = np.random.default_rng(seed)
    draws = _sample(inputs, n_draws, rng)
    nominal = _nominal(inputs)
    cal = inputs.calibration or Calibration()
    if cal.has_tape:
        _, t_tape = _tape_emissivity(inputs, nominal)
        if abs(float(np.ravel(t_tape)[0]) - inputs.reflected_c) < 3.0:
            warnings.warn(
                "tape calibration: tape temperature within 3 K of the reflected temperature, "
                "the emissivity it gives is poorly determined",
                EnvelopeWarning,
                stacklevel=2,
            )
    u, t_s, eps = _model(inputs, draws)
    ok = np.isfinite(u)
    if ok.sum() < 0.5 * n_draws:
        raise ValueError(
            f"only {int(ok.sum())} of {n_draws} draws gave a finite U: check the readings, "
            "emissivity and temperatures"
        )
    uv = u[ok]
    u_best = float(np.ravel(_model(inputs, nominal)[0])[0])
    budget_var = {}
    for name, keys in _groups(inputs).items():
        d = dict(nominal)
        for k in keys:
            d[k] = draws[k]
        ug = _model(inputs, d)[0]
        budget_var[name] = float(np.nanvar(ug)) if np.ndim(ug) else 0.0
    total = sum(budget_var.values())
    budget = {k: (v / total if total > 0 else 0.0) for k, v in budget_var.items()}
    low, high = np.quantile(uv, [0.025, 0.975])
    calibrated, note = _calibration_note(inputs)
    return UEstimate(
        u_w_m2k=float(np.mean(uv)),
        u_best_w_m2k=u_best,
        u_std=float(np.std(uv, ddof=1)),
        low95=float(low),
        high95=float(high),
        budget=budget,
        calibrated=calibrated,
        calibration_note=note,
        n_draws=int(n_draws),
        n_valid=int(ok.sum()),
        emissivity_mean=float(np.mean(eps[ok])),
        emissivity_std=float(np.std(eps[ok], ddof=1)),
        t_s_mean_c=float(np.mean(t_s[ok])),
        t_s_std_k=float(np.std(t_s[ok], ddof=1)),
    )
