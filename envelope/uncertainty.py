"""Monte Carlo propagation to in-situ U (JCGM 101:2008): correlated draws, series, H.

The measurement model runs from what the camera and the thermometers read to U: apparent
readings -> object temperature by the measurement equation with the declared transmittance,
atmosphere temperature and camera band (:func:`envelope.radiometry.object_temperature`, the
same path as the image) -> surface heat flux (interior convection ensemble of
:mod:`envelope.convection`, or a heat-flux-meter spot; exact long-wave exchange with the mean
radiant temperature) -> U referred to air temperatures, and beside it to environmental
temperatures.

Correlations are carried by construction: every random input is a *keyed* stream of
standard variates, ``default_rng([seed, crc32(key)])``. One camera offset per camera
(key ``camera:<id>:offset``) sits in every reading of that camera in a view: the zone, the
probe spots, the tape, the heat-flux spot and a reflected temperature read off a reflector;
a probe's error enters once, through the offset it implies. Thermometers, weather and the
convection member of a surface configuration have keys shared across elements, so the
per-trial U of different elements (``keep_draws=True``) can be summed into H trial by trial
(:func:`heat_loss_from_draws`). Systematic inputs are drawn once per trial; camera noise and
air-temperature noise once per frame, so a series averages them down.
"""

from __future__ import annotations

import math
import zlib
from dataclasses import dataclass

import numpy as np

from envelope import convection, films, radiometry
from envelope import transmittance as tr
from envelope.budget import (
    FLOOR_NOTE,
    REMEDIES,
    Advice,
    HeatLossResult,
    defect_relative_uncertainty,
    heat_loss_from_draws,
    interval95,
    narrowing_advice,
)
from envelope.calibration import (
    TAPE_CONTRAST_RATIO,
    FluxSpot,
    robust_std,
    tape_emissivity_samples,
)
from envelope.constants import SIGMA, T0_K
from envelope.readings import Camera, SeriesInputs, ViewInputs, ZoneInputs
from envelope.validity import Check

__all__ = [
    "Camera",
    "ViewInputs",
    "ZoneInputs",
    "SeriesInputs",
    "UResult",
    "estimate_u",
    "estimate_series_u",
    "HeatLossResult",
    "heat_loss_from_draws",
    "keyed_normal",
    "Advice",
    "REMEDIES",
    "narrowing_advice",
    "defect_relative_uncertainty",
]


@dataclass(frozen=True)
class UResult:
    """Monte Carlo result for one zone [W m-2 K-1, °C, K].

    ``u_w_m2k`` is the mean of the valid draws (JCGM 101 §7.6) referred to air temperatures,
    ``u_best_w_m2k`` the model at the best estimates, ``u_low95_w_m2k``/``u_high95_w_m2k``
    the probabilistically symmetric 95 % interval (§7.7). ``u_env_*`` is the same
    heat flux referred to environmental temperatures (the definition of ISO 6946 design
    values). ``budget`` gives each input group's share of the variance (one group at a time,
    normalised); ``advice`` what would narrow the interval. ``draws`` holds the per-trial U
    (NaN where invalid) when asked for, for :func:`heat_loss_from_draws`.
    """

    u_w_m2k: float
    u_best_w_m2k: float
    u_std_w_m2k: float
    u_low95_w_m2k: float
    u_high95_w_m2k: float
    u_env_w_m2k: float
    u_env_low95_w_m2k: float
    u_env_high95_w_m2k: float
    emissivity: float
    emissivity_std: float
    t_si_c: float
    t_si_std_k: float
    h_c_w_m2k: float
    h_c_std_w_m2k: float
    h_c_members: dict
    camera_offset_k: float
    camera_offset_std_k: float
    budget: dict
    advice: tuple[Advice, ...]
    surface_air: Check
    calibrated: bool
    notes: tuple[str, ...]
    n_draws: int
    n_valid: int
    draws: np.ndarray | None = None


# ----------------------------------------------------------------------------- variates
def _key_rng(seed: int, key: str):
    return np.random.default_rng([int(seed) & 0xFFFFFFFF, zlib.crc32(key.encode("utf-8"))])


def keyed_normal(key: str, seed: int, n_draws: int) -> np.ndarray:
    """Standard normal variates of one named input: same (key, seed, n) -> same values.

    For inputs outside this module that share trials with U draws (e.g. a defect's psi:
    ``psi * (1 + rel_std * keyed_normal("defect:D3", seed, n))``).
    """
    return _key_rng(seed, key).standard_normal(int(n_draws))


class _Variates:
    """Keyed streams of scaled variates; a group not in ``active`` (or of zero scale) stays
    at its centre and costs nothing."""

    def __init__(self, seed: int, n: int, n_frames: int, active=None):
        self.seed, self.n, self.nf, self.active = seed, n, n_frames, active
        self.groups: dict[str, None] = {}

    def _on(self, group, scale):
        if np.all(np.asarray(scale) == 0):
            return False
        self.groups[group] = None
        return self.active is None or group in self.active

    def _shape(self, per_frame):
        return (self.n, self.nf if per_frame else 1)

    def normal(self, key, group, scale, per_frame=False):
        """scale x standard normal, shape (n, 1) or (n, n_frames); 0.0 when off."""
        if not self._on(group, scale):
            return 0.0
        return scale * _key_rng(self.seed, key).standard_normal(self._shape(per_frame))

    def rect(self, key, group, half, per_frame=False):
        """Rectangular on [-half, half]; 0.0 when off."""
        if not self._on(group, half):
            return 0.0
        return half * (2.0 * _key_rng(self.seed, key).random(self._shape(per_frame)) - 1.0)

    def member(self, key, group, n_members):
        """Index of an equal-weight member per trial, shape (n,), or None (mixture mean)."""
        if n_members == 1 or not self._on(group, 1.0):
            return None
        u = _key_rng(self.seed, key).random(self.n)
        return np.minimum((u * n_members).astype(int), n_members - 1)


# ----------------------------------------------------------------------------- model
def _obj(apparent, eps, refl, tau, atm, band):
    return np.asarray(radiometry.object_temperature(apparent, eps, refl, tau, atm, band_um=band),
                      dtype=float)


def _col(x):
    """First frame of a per-frame array (the survey frame), kept 2-D."""
    x = np.asarray(x, dtype=float)
    return x if x.ndim < 2 else x[:, :1]


def _weights(times_h):
    t = np.asarray(times_h, dtype=float)
    if t.size == 1:
        return np.ones(1)
    step = np.diff(t)
    if np.any(step <= 0):
        raise ValueError("series times_h must be strictly increasing")
    return np.append(step, step[-1])


def _frames(view: ViewInputs, zone: ZoneInputs, series: SeriesInputs | None):
    if series is None:
        one = np.ones((1, 1))
        return (np.ones(1), zone.apparent_c * one, view.t_ai_c * one, view.t_ae_c * one,
                view.reflected_c * one)
    arr = [np.asarray(x, dtype=float).ravel() for x in
           (series.times_h, series.apparent_c, series.t_ai_c, series.t_ae_c)]
    refl = (np.full(arr[0].size, view.reflected_c) if series.reflected_c is None
            else np.asarray(series.reflected_c, dtype=float).ravel())
    if len({a.size for a in (*arr, refl)}) != 1 or arr[0].size < 1:
        raise ValueError("series arrays must have one equal, non-zero length")
    return (arr[0], *(a[None, :] for a in (*arr[1:], refl)))


def _simulate(view: ViewInputs, zone: ZoneInputs, frames, V: _Variates, tape_weight=None):
    """Per-trial U (air and environmental), surface temperature, emissivity and h_c."""
    times, app, t_ai_f, t_ae_f, refl_f = frames
    cam, vid, el = view.camera, view.view_id, zone.element
    band, rel = cam.band_um, cam.relative_k
    ind, outd = view.indoor_sensor, view.outdoor_sensor
    t_ai = (t_ai_f + V.normal(f"air:{ind}", "t_ai", view.t_ai_std_k)
            + V.normal(f"air:{ind}:noise", "air_noise", view.air_noise_std_k, True))
    t_ae = (t_ae_f + V.normal(f"air:{outd}", "t_ae", view.t_ae_std_k)
            + V.normal(f"air:{outd}:noise", "air_noise", view.air_noise_std_k, True))
    t_side = t_ai if view.side == "interior" else t_ae
    atm = t_side if view.atmosphere_c is None else np.full((1, 1), float(view.atmosphere_c))
    tau = np.clip(view.transmittance + V.normal(f"{vid}:transmittance", "transmittance",
                                                view.transmittance_std), 0.01, 1.0)
    refl_sys = V.normal(f"{vid}:reflected", "reflected", view.reflected_std_k)
    rel_refl = V.rect(f"{vid}:reflector:relative", "camera_relative", rel)

    def eps_draw(key_el, value, std):
        return np.clip(value + V.normal(f"{vid}:{key_el}:emissivity", "emissivity", std),
                       0.01, 1.0)

    eps_prior = eps_draw(el, zone.emissivity, zone.emissivity_std)
    eps = eps_prior
    use_tape = view.tape is not None and view.tape_element in ("", el)
    if cam.offset_std_k is not None:
        offset = cam.offset_k + V.normal(f"camera:{cam.id}:offset", "camera_offset",
                                         cam.offset_std_k)
    else:
        offset = V.rect(f"camera:{cam.id}:offset", "camera_offset", cam.accuracy_k)
    probe_draws = [(p, p.surface_c + V.normal(f"{vid}:probe{k}", "probe", p.surface_std_k),
                    V.rect(f"{vid}:probe{k}:relative", "camera_relative", rel)
                    + V.normal(f"{vid}:probe{k}:noise", "camera_noise",
                               cam.noise_k / math.sqrt(p.n_pixels)),
                    None if p.element == el else eps_draw(p.element or f"probe{k}", p.emissivity,
                                                          p.emissivity_std))
                   for k, p in enumerate(view.probes)]
    if use_tape:
        tp = view.tape
        tape_eps = np.clip(tp.tape_emissivity + V.normal(f"{vid}:tape:emissivity", "tape",
                                                         tp.tape_emissivity_std), 0.01, 1.0)
        tape_err = [V.rect(f"{vid}:tape:relative{i}", "camera_relative", rel)
                    + V.normal(f"{vid}:tape:noise{i}", "camera_noise",
                               cam.noise_k / math.sqrt(tp.n_pixels)) for i in (0, 1)]
    tape_info = None
    atm0, tau0 = _col(atm), tau
    refl_c = view.reflected_c + refl_sys - ((offset + rel_refl) if view.reflected_by_camera else 0.0)
    for _ in range(3 if (probe_draws and (view.reflected_by_camera or use_tape)) else 1):
        if probe_draws:
            deltas = [p.apparent_c - err - radiometry.apparent_temperature(
                t_true, eps if eps_p is None else eps_p, refl_c, tau0, atm0, band_um=band)
                for p, t_true, err, eps_p in probe_draws]
            offset = np.mean(deltas, axis=0)
            refl_c = view.reflected_c + refl_sys - ((offset + rel_refl)
                                                    if view.reflected_by_camera else 0.0)
        if use_tape:
            e_tape, t_tape = tape_emissivity_samples(
                tp.tape_apparent_c - offset - tape_err[0],
                tp.surface_apparent_c - offset - tape_err[1], refl_c, tape_eps, tau0, atm0, band)
            tape_info = (e_tape, t_tape - refl_c)
            w = tape_weight if tape_weight is not None else 0.0
            eps = np.clip(w * np.nan_to_num(e_tape, nan=zone.emissivity)
                          + (1.0 - w) * eps_prior, 0.01, 1.0)
    # zone surface temperature, frame by frame
    refl = refl_c + (refl_f - view.reflected_c)
    a_zone = (app - offset - V.rect(f"{vid}:{el}:relative", "camera_relative", rel)
              - V.normal(f"{vid}:{el}:noise", "camera_noise",
                         cam.noise_k / math.sqrt(zone.n_pixels), True))
    t_s = _obj(a_zone, eps, refl, tau, atm, band)
    if view.mrt_c is None:
        mrt = refl + V.normal(f"{vid}:mrt", "mrt", view.mrt_std_k)
    else:
        mrt = (view.mrt_c + V.normal(f"{vid}:mrt", "mrt", view.mrt_std_k)
               + (refl_f - view.reflected_c))
    ts_k, mrt_k = t_s + T0_K, mrt + T0_K
    h_r = eps * SIGMA * (ts_k**2 + mrt_k**2) * (ts_k + mrt_k)
    if view.side == "interior":
        h_c = _h_conv(zone, t_s, t_ai, V)
        flux = view.flux if view.flux_element in ("", el) else None
        if flux is None:
            q = h_c * (t_ai - t_s) + h_r * (mrt - t_s)
        else:
            q = _flux_h_total(view, flux, V, offset, refl_c, eps, tau0, atm0, t_ai) * (t_ai - t_s)
        t_env_i = films.environmental_temperature(t_ai, mrt, h_c, h_r)
        t_env_e = _exterior_environment(view, t_ae, V)
    else:
        wind = np.abs(view.wind_m_s + V.normal("weather:wind", "wind", view.wind_std_m_s))
        t_sky = ((view.t_ae_c if view.t_sky_c is None else view.t_sky_c)
                 + V.normal("weather:sky", "t_sky", view.t_sky_std_k) + (t_ae_f - view.t_ae_c))
        h_c = _h_exterior(view, np.asarray(wind, dtype=float), V)
        q = tr.heat_flux_exterior(t_s, t_ae, eps, h_c, t_sky_c=t_sky, t_ground_c=t_ae,
                                  f_sky=view.f_sky)
        t_env_i = t_ai
        t_mrt_e = view.f_sky * t_sky + (1.0 - view.f_sky) * t_ae
        h_re = films.radiative_coefficient(t_s, t_mrt_e, eps)
        t_env_e = films.environmental_temperature(t_ae, t_mrt_e, h_c, h_re)
    w = _weights(times)
    q, t_ai, t_ae, t_s, h_c, t_env_i, t_env_e = np.broadcast_arrays(
        q, t_ai, t_ae, t_s, h_c, t_env_i, t_env_e)
    with np.errstate(divide="ignore", invalid="ignore"):
        u = np.sum(q * w, axis=1) / np.sum((t_ai - t_ae) * w, axis=1)
        u_env = np.sum(q * w, axis=1) / np.sum((t_env_i - t_env_e) * w, axis=1)
    n = q.shape[0]
    return dict(u=u, u_env=u_env, t_s=np.mean(t_s, axis=1), h_c=np.mean(h_c, axis=1),
                eps=np.broadcast_to(eps, (n, 1))[:, 0], offset=np.broadcast_to(offset, (n, 1))[:, 0],
                tape=tape_info)


def _by_member(func, members, idx, *args):
    """Evaluate member idx[k] for trial k only (rows of the broadcast arguments)."""
    shape = np.broadcast_shapes((idx.size, 1), *(np.shape(a) for a in args))
    full = [np.broadcast_to(a, shape) for a in args]
    out = np.empty(shape)
    for m, name in enumerate(members):
        rows = idx == m
        if rows.any():
            out[rows] = func(name, *(a[rows] for a in full))
    return out


def _h_conv(zone: ZoneInputs, t_s, t_ai, V: _Variates):
    ens = zone.convection
    if not isinstance(ens, convection.Ensemble):
        h = float(ens)
        if h <= 0:
            raise ValueError(f"a fixed h_c must be positive, got {h}")
        return np.full(np.broadcast_shapes(np.shape(t_s), np.shape(t_ai)), h)
    kw = dict(heat_flow=ens.heat_flow, height_m=ens.height_m,
              hydraulic_diameter_m=ens.hydraulic_diameter_m, tilt_deg=ens.tilt_deg)
    idx = V.member(f"convection:{ens.name}:member", "h_c", len(ens.members))
    if idx is None:
        h = np.mean(convection.ensemble_coefficients(ens, t_s, t_ai), axis=0)
    else:
        h = _by_member(lambda m, ts, ta: convection.interior_coefficient(m, ts, ta, **kw),
                       ens.members, idx, t_s, t_ai)
    return h * (1.0 + V.rect(f"convection:{ens.name}:factor", "h_c", ens.band))


def _h_exterior(view: ViewInputs, wind, V: _Variates):
    idx = V.member("convection:exterior:member", "h_c", len(view.exterior_convection))
    if idx is None:
        h = np.mean([films.convective_coefficient(m, wind_m_s=wind)
                     for m in view.exterior_convection], axis=0)
    else:
        h = _by_member(lambda m, v: films.convective_coefficient(m, wind_m_s=v),
                       view.exterior_convection, idx, wind)
    return h * (1.0 + V.rect("convection:exterior:factor", "h_c", view.exterior_band))


def _exterior_environment(view: ViewInputs, t_ae, V: _Variates):
    """Outdoor environmental temperature for an interior view (ISO 6946 exterior films)."""
    t_sky = ((view.t_ae_c if view.t_sky_c is None else view.t_sky_c)
             + V.normal("weather:sky", "t_sky", view.t_sky_std_k) + (t_ae - view.t_ae_c))
    t_mrt_e = view.f_sky * t_sky + (1.0 - view.f_sky) * t_ae
    h_ce = 4.0 + 4.0 * view.wind_m_s
    h_re = films.radiative_coefficient(t_ae, t_mrt_e, view.exterior_emissivity)
    return films.environmental_temperature(t_ae, t_mrt_e, h_ce, h_re)


def _flux_h_total(view, flux: FluxSpot, V, offset, refl, eps, tau, atm, t_ai):
    vid, cam = view.view_id, view.camera
    q = flux.q_w_m2 + V.normal(f"{vid}:flux:q", "flux", flux.q_std_w_m2)
    if flux.surface_c is not None:
        t_spot = flux.surface_c + V.normal(f"{vid}:flux:surface", "flux", flux.surface_std_k)
    else:
        e = eps if flux.emissivity is None else flux.emissivity
        a = flux.apparent_c - offset - V.rect(f"{vid}:flux:relative", "camera_relative",
                                              cam.relative_k)
        t_spot = _obj(a, e, refl, tau, atm, cam.band_um)
    return q / (_col(t_ai) - t_spot)


# ----------------------------------------------------------------------------- estimates
def _validate(view: ViewInputs, zone: ZoneInputs, n_draws: int):
    if view.side not in ("interior", "exterior"):
        raise ValueError(f"side must be 'interior' or 'exterior', got {view.side!r}")
    if n_draws < 100:
        raise ValueError(f"n_draws must be >= 100, got {n_draws}")
    for obj, names in ((view, ("t_ai_std_k", "t_ae_std_k", "air_noise_std_k", "reflected_std_k",
                               "mrt_std_k", "transmittance_std", "wind_std_m_s", "t_sky_std_k",
                               "exterior_band")),
                       (view.camera, ("accuracy_k", "relative_k", "noise_k")),
                       (zone, ("emissivity_std",))):
        for name in names:
            if getattr(obj, name) < 0:
                raise ValueError(f"{name} must be >= 0, got {getattr(obj, name)}")
    if not 0 < zone.emissivity <= 1:
        raise ValueError(f"emissivity must lie in (0, 1], got {zone.emissivity}")
    if not 0 < view.transmittance <= 1:
        raise ValueError(f"transmittance must lie in (0, 1], got {view.transmittance}")
    if zone.n_pixels < 1:
        raise ValueError(f"n_pixels must be >= 1, got {zone.n_pixels}")


def _tape_weight(view, zone, sim):
    """Weight of the tape in the inverse-variance combination, or (0, note) when refused."""
    e_tape, contrast = sim["tape"]
    e_tape, contrast = np.ravel(e_tape), np.ravel(contrast)
    ok = np.isfinite(e_tape)
    c_mean, c_std = abs(float(np.nanmean(contrast))), float(np.nanstd(contrast, ddof=1))
    if ok.sum() < 10 or c_mean < TAPE_CONTRAST_RATIO * c_std:
        return 0.0, (f"tape refused: contrast with the reflected temperature {c_mean:.2f} K is "
                     f"below {TAPE_CONTRAST_RATIO:g} x its uncertainty ({c_std:.2f} K); declared "
                     f"emissivity {zone.emissivity:g} ± {zone.emissivity_std:g} kept")
    t_std = robust_std(e_tape)
    p_std = zone.emissivity_std
    w = p_std**2 / (p_std**2 + t_std**2) if p_std > 0 or t_std > 0 else 0.0
    return w, (f"tape: emissivity {float(np.mean(e_tape[ok])):.3f} ± {t_std:.3f} (contrast "
               f"{c_mean:.1f} K) combined with the declared {zone.emissivity:g} ± {p_std:g}, "
               f"tape weight {w:.2f}")


MAX_TRIAL_FRAMES = 2_000_000
"""Most (trials × frames) a series Monte Carlo evaluates at once: bounds its memory (about
0.3 GB of temporaries) whatever the length of the series."""


def _estimate(view, zone, series, n_draws, seed, budget, keep_draws):
    _validate(view, zone, n_draws)
    frames = _frames(view, zone, series)
    nf = frames[0].size
    notes = []
    if n_draws * nf > MAX_TRIAL_FRAMES:
        n_draws = max(1000, MAX_TRIAL_FRAMES // nf)
        notes.append(f"series of {nf} frames: {n_draws} Monte Carlo trials (memory bound)")
    V = _Variates(seed, n_draws, nf)
    w_tape = None
    if view.tape is not None and view.tape_element in ("", zone.element):
        sim0 = _simulate(view, zone, frames, _Variates(seed, n_draws, nf), tape_weight=0.0)
        w_tape, note = _tape_weight(view, zone, sim0)
        notes.append(note)
    sim = _simulate(view, zone, frames, V, tape_weight=w_tape)
    u, u_env = sim["u"], sim["u_env"]
    ok = np.isfinite(u) & np.isfinite(u_env)
    if ok.sum() < 0.5 * n_draws:
        raise ValueError(f"only {int(ok.sum())} of {n_draws} draws gave a finite U: check the "
                         "readings, emissivity and temperatures")
    nominal = _simulate(view, zone, frames, _Variates(seed, n_draws, nf, active=set()), w_tape)
    shares = {}
    if budget:
        var = {}
        n_b = min(n_draws, max(2000, 200_000 // nf))  # shares need fewer draws than quantiles
        for g in V.groups:
            ug = _simulate(view, zone, frames, _Variates(seed, n_b, nf, active={g}), w_tape)["u"]
            var[g] = float(np.nanvar(ug)) if np.size(ug) > 1 else 0.0
        total = sum(var.values())
        shares = {g: v / total for g, v in var.items() if total > 0 and v > 1e-9 * total}
    if view.probes:
        notes.append(f"{len(view.probes)} contact-probe spot(s) give the camera offset "
                     f"{float(np.mean(sim['offset'])):+.2f} K")
    if view.reflected_by_camera:
        notes.append("reflected temperature read with the same camera: its offset is shared")
    if view.flux is not None and view.flux_element in ("", zone.element):
        notes.append("heat-flux-meter spot: total surface coefficient h_tot = q / (T_ai - T_si) "
                     "replaces the convection ensemble")
    lo, hi, raised = interval95(u[ok])
    elo, ehi, _ = interval95(u_env[ok])
    if raised:
        notes.append(f"U: {FLOOR_NOTE}")
    t_s, h_c = sim["t_s"][ok], sim["h_c"][ok]
    ens = zone.convection
    members = ({} if not isinstance(ens, convection.Ensemble) or view.side != "interior" else
               convection.ensemble_spread(ens, float(np.mean(t_s)), view.t_ai_c)[2])
    t_s_std = float(np.std(t_s, ddof=1))
    check = convection.check_surface_air(float(np.mean(t_s)),
                                         view.t_ai_c if view.side == "interior" else view.t_ae_c,
                                         t_s_std)
    shares_sorted = dict(sorted(shares.items(), key=lambda kv: -kv[1]))
    eps_all = np.broadcast_to(sim["eps"], u.shape)[ok]
    offs = np.broadcast_to(sim["offset"], u.shape)[ok]
    return UResult(
        u_w_m2k=float(np.mean(u[ok])), u_best_w_m2k=float(nominal["u"][0]),
        u_std_w_m2k=float(np.std(u[ok], ddof=1)), u_low95_w_m2k=lo,
        u_high95_w_m2k=hi, u_env_w_m2k=float(np.mean(u_env[ok])),
        u_env_low95_w_m2k=elo, u_env_high95_w_m2k=ehi,
        emissivity=float(np.mean(eps_all)), emissivity_std=float(np.std(eps_all, ddof=1)),
        t_si_c=float(np.mean(t_s)), t_si_std_k=t_s_std, h_c_w_m2k=float(np.mean(h_c)),
        h_c_std_w_m2k=float(np.std(h_c, ddof=1)), h_c_members=members,
        camera_offset_k=float(np.mean(offs)), camera_offset_std_k=float(np.std(offs, ddof=1)),
        budget=shares_sorted,
        advice=narrowing_advice(shares_sorted, delta_t_k=view.t_ai_c - view.t_ae_c),
        surface_air=check, calibrated=bool(view.probes) or view.camera.offset_std_k is not None,
        notes=tuple(notes), n_draws=int(n_draws), n_valid=int(ok.sum()),
        draws=np.where(ok, u, np.nan) if keep_draws else None)


def estimate_u(view: ViewInputs, zone: ZoneInputs, *, n_draws: int = 20000, seed: int = 0,
               budget: bool = True, keep_draws: bool = False) -> UResult:
    """U of one zone in one view with its 95 % interval (JCGM 101:2008).

    Parameters
    ----------
    view : ViewInputs
        What the view's readings share (camera, air, reflected and radiant temperatures,
        probe, tape and heat-flux spots, exterior weather).
    zone : ZoneInputs
        The element's zone reading, emissivity and convection ensemble.
    n_draws : int
        Monte Carlo trials M.
    seed : int
        Seed of the keyed streams; the same seed gives byte-identical results, and the same
        (seed, n_draws) in several calls gives the same shared inputs trial by trial.
    budget : bool
        Compute the variance budget and the advice (one extra evaluation per input group).
    keep_draws : bool
        Return the per-trial U in ``draws`` (for :func:`heat_loss_from_draws`).

    Returns
    -------
    UResult

    Notes
    -----
    Interior: T_si = T_obj(A - delta - e_rel - e_noise; eps, T_refl, tau, T_atm, band),
    q = h_c (T_ai - T_si) + eps sigma (T_mrt^4 - T_si^4) (Fokaides & Kalogirou 2011, Eq. 1),
    U = q / (T_ai - T_ae); with a heat-flux-meter spot q = h_tot (T_ai - T_si),
    h_tot = q_spot / (T_ai - T_spot). Environmental definition: U_env = q / (T_env,i -
    T_env,e), T_env = (h_c T_air + h_r T_mrt) / (h_c + h_r) (:func:`envelope.films.
    environmental_temperature`; outdoors with ISO 6946's h_ce = 4 + 4 v, eps 0.9 and the
    sky/ground mix). Exterior: the balance of :func:`envelope.transmittance.u_exterior`.

    The camera offset delta: from the probes when the view has any
    (delta = mean_k [A_probe,k - e_rel - e_noise - A(T_probe,k)], the probe temperature drawn
    about its reading), else the camera's known offset, else rectangular ± accuracy. A
    reflected temperature read with the camera is R - delta - e_rel. Tape: its emissivity per
    trial (:func:`envelope.calibration.tape_emissivity_samples`) combined with the prior by
    inverse variance (weight from the tape draws), or refused below
    ``TAPE_CONTRAST_RATIO`` standard uncertainties of contrast.

    References
    ----------
    [1] JCGM 101:2008, Supplement 1 to the GUM -- Propagation of distributions using a
        Monte Carlo method, §§5.9, 7.6, 7.7.
    [2] Fokaides, P. A., Kalogirou, S. A., Applied Energy 88 (2011) 4358-4365,
        doi:10.1016/j.apenergy.2011.05.014.
    """
    return _estimate(view, zone, None, n_draws, seed, budget, keep_draws)


def estimate_series_u(view: ViewInputs, zone: ZoneInputs, series: SeriesInputs, *,
                      n_draws: int = 20000, seed: int = 0, budget: bool = True,
                      keep_draws: bool = False) -> UResult:
    """U of a zone from a series by the average method, with its 95 % interval.

    Parameters are those of :func:`estimate_u`, and ``series`` (per-frame zone readings and
    air temperatures, reflected temperature per frame optional). The view's ``t_ai_c``,
    ``t_ae_c`` and ``reflected_c`` are the reference values about which per-frame values move.

    Notes
    -----
    Per trial the systematic inputs (camera offset, probe, emissivity, tape, reflected and
    radiant temperature biases, thermometer biases, convection member and factor) are drawn
    once and applied to every frame; camera noise and air-temperature noise are drawn per
    frame. U_trial = sum_j q_j w_j / sum_j (T_ai,j - T_ae,j) w_j with w_j the time each frame
    stands for (ISO 9869-1 average method, as :func:`envelope.transmittance.average_method`).
    Storage in the element is not modelled here: see :mod:`envelope.dynamic`.
    """
    return _estimate(view, zone, series, n_draws, seed, budget, keep_draws)


