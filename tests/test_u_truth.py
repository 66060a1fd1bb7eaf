"""Coverage of the U interval when the true convection is none of the ensemble's members.

Each scene's true surface temperature comes from the interior heat balance
h_c(dT) (T_ai - T_si) + eps sigma (T_r^4 - T_si^4) = U (T_ai - T_ae), solved here with
scipy's brentq, where h_c is a published correlation that the survey's ensemble does NOT
contain (written out in this file):

- walls: Awbi & Hatton (1999) heated wall, h = 1.823 dT^0.293 / D^0.121, and Fohanno &
  Polidori (2006), h = 1.332 (dT/H)^(1/4) for Ra* <= 6.3e9, 1.235 e^(0.0467 H) dT^0.316
  above (both as transcribed in the EnergyPlus Engineering Reference, from memory);
- windows: Fohanno & Polidori with the glazing height;
- ceilings (cold, heat flowing up): Awbi & Hatton heated floor (the same unstable
  configuration), h = 2.175 dT^0.308 / D^0.076;
- floors (cold, stable): Raithby & Hollands as in Incropera et al., 7th ed., Eq. 9.32,
  Nu = 0.52 Ra^(1/5) with L = A/P (from memory).

The camera's offset (rectangular ±2 K), relative error (±0.2 K per reading) and noise, the
thermometers' errors, the reflected temperature's scatter and the emissivity are drawn from
the distributions the survey states; probes and same-camera reflectors in some scenes.
"""

import math

import numpy as np
from scipy.optimize import brentq

from envelope import convection, films, radiometry
from envelope.calibration import ProbeSpot
from envelope.constants import SIGMA, T0_K
from envelope.uncertainty import (
    Camera,
    SeriesInputs,
    ViewInputs,
    ZoneInputs,
    estimate_series_u,
    estimate_u,
)

G = 9.80665


def awbi_hatton_wall(dt, d=3.08):
    return 1.823 * abs(dt) ** 0.293 / max(d, 1.0) ** 0.121


def awbi_hatton_floor(dt, d=4.0):
    return 2.175 * abs(dt) ** 0.308 / max(d, 1.0) ** 0.076


def fohanno_polidori(dt, height, t_film=19.0):
    air = films.air_properties(t_film)
    h_lam = 1.332 * (abs(dt) / height) ** 0.25
    ra_star = G * air.beta * h_lam * abs(dt) * height**4 / (air.k * air.nu * air.alpha)
    return h_lam if ra_star <= 6.3e9 else 1.235 * math.exp(0.0467 * height) * abs(dt) ** 0.316


def raithby_hollands_stable(dt, length=1.0, t_film=19.0):
    air = films.air_properties(t_film)
    ra = G * air.beta * abs(dt) * length**3 / (air.nu * air.alpha)
    return 0.52 * ra**0.2 * air.k / length


def true_surface(u, t_ai, t_ae, t_r, eps, h_of_dt):
    def balance(ts):
        rad = eps * SIGMA * ((t_r + T0_K) ** 4 - (ts + T0_K) ** 4)
        return h_of_dt(t_ai - ts) * (t_ai - ts) + rad - u * (t_ai - t_ae)

    return brentq(balance, t_ae - 5.0, t_ai + 5.0, xtol=1e-10)


KINDS = {  # kind: (heat flow, U range, emissivity, truth, ensemble kind, height)
    "wall-ah": ("horizontal", (0.25, 2.0), 0.93, lambda dt: awbi_hatton_wall(dt), "wall", 2.5),
    "wall-fp": ("horizontal", (0.25, 2.0), 0.93, lambda dt: fohanno_polidori(dt, 2.5), "wall", 2.5),
    "window": ("horizontal", (1.2, 3.0), 0.84, lambda dt: fohanno_polidori(dt, 1.2), "window", 1.2),
    "ceiling": ("upward", (0.15, 2.0), 0.90, lambda dt: awbi_hatton_floor(dt), "ceiling", 2.4),
    "floor": ("downward", (0.2, 1.5), 0.90, lambda dt: raithby_hollands_stable(dt), "floor", 2.4),
}


def _scene(k, rng):
    names = list(KINDS)
    name = names[k % len(names)]
    heat_flow, (u_lo, u_hi), eps0, h_true, ens_kind, height = KINDS[name]
    u = math.exp(rng.uniform(math.log(u_lo), math.log(u_hi)))
    t_ai = rng.uniform(18.0, 22.0)
    t_ae = t_ai - rng.uniform(12.0, 25.0)
    t_r = t_ai - rng.uniform(0.3, 2.0)
    eps = float(np.clip(rng.normal(eps0, 0.02), 0.5, 1.0))
    t_si = true_surface(u, t_ai, t_ae, t_r, eps, h_true)
    offset = rng.uniform(-2.0, 2.0)

    def read(t_obj, e):  # the camera: measurement equation + offset + relative error
        return (radiometry.apparent_temperature(t_obj, e, t_r, 1.0, t_ai) + offset
                + rng.uniform(-0.2, 0.2))

    zone_reading = read(t_si, eps) + rng.normal(0.0, 0.05 / math.sqrt(2000))
    by_camera = k % 2 == 0
    refl = (t_r + offset + rng.uniform(-0.2, 0.2) + rng.normal(0.0, 0.2) if by_camera
            else t_r + rng.normal(0.0, 0.5))
    probes = ()
    if k % 3:
        probes = (ProbeSpot(read(t_si, eps), t_si + rng.normal(0.0, 0.1), 0.1, eps0, 0.02,
                            element="zone"),)
    view = ViewInputs(
        f"s{k}", t_ai + rng.normal(0.0, 0.3), t_ae + rng.normal(0.0, 0.3), refl,
        camera=Camera(accuracy_k=2.0, relative_k=0.2, noise_k=0.05),
        t_ai_std_k=0.3, t_ae_std_k=0.3, reflected_std_k=0.2 if by_camera else 0.5,
        reflected_by_camera=by_camera, probes=probes, atmosphere_c=t_ai)
    ens = convection.interior_ensemble(ens_kind, heat_flow, height_m=height)
    zone = ZoneInputs("zone", zone_reading, eps0, 0.02, n_pixels=2000, convection=ens)
    return u, view, zone


def test_interval_covers_truth_with_model_error():
    # JCGM 101 §7.7: a 95 % interval; the true U must fall inside in >= 90 % of 50 scenes
    # (binomial: at a true 95 %, 50 scenes give >= 45 hits with probability 0.96).
    rng = np.random.default_rng(20260115)
    hits, rel_widths, calibrated = [], [], []
    for k in range(50):
        u, view, zone = _scene(k, rng)
        r = estimate_u(view, zone, n_draws=2000, seed=k, budget=False)
        hits.append(r.u_low95_w_m2k <= u <= r.u_high95_w_m2k)
        rel_widths.append((r.u_high95_w_m2k - r.u_low95_w_m2k) / u)
        calibrated.append(bool(view.probes))
    assert np.mean(hits) >= 0.90, np.flatnonzero(~np.array(hits))
    # and the intervals are not trivially wide where the camera is calibrated
    cal = np.array(calibrated)
    assert np.median(np.array(rel_widths)[cal]) < 1.2


def test_calibrated_series_interval_within_twenty_percent():
    # Issue 14: same-camera reflector readings, a calibrated probe (0.1 K), dT >= 20 K and
    # >= 20 frames: the interval lies within ±20 % of the truth. Scene: an uninsulated solid
    # wall (U 1.5), truth h_c by Awbi & Hatton. (At U 0.5 the same survey gives about ±35 %:
    # the camera's ±0.2 K relative accuracy and the reflector's 0.2 K scatter on a 2 K
    # surface-air difference; see the report.)
    u, t_ai, t_ae, t_r, eps, offset = 1.5, 21.0, 0.5, 20.2, 0.93, 1.1
    t_si = true_surface(u, t_ai, t_ae, t_r, eps, awbi_hatton_wall)
    a = radiometry.apparent_temperature(t_si, eps, t_r, 1.0, t_ai) + offset
    probe = ProbeSpot(a + 0.05, t_si - 0.05, 0.1, eps, 0.02, element="wall")
    view = ViewInputs("study", t_ai, t_ae, t_r + offset + 0.1, reflected_std_k=0.2,
                      reflected_by_camera=True, probes=(probe,), t_ai_std_k=0.2, t_ae_std_k=0.2,
                      air_noise_std_k=0.2, atmosphere_c=t_ai,
                      camera=Camera(accuracy_k=2.0, relative_k=0.2))
    n = 20
    rng = np.random.default_rng(3)
    series = SeriesInputs(np.arange(n) * 0.5, a + rng.normal(0, 0.05 / math.sqrt(2000), n),
                          t_ai + rng.normal(0, 0.2, n), np.full(n, t_ae))
    r = estimate_series_u(view, ZoneInputs("wall", a, eps, 0.02, n_pixels=2000), series,
                          n_draws=4000, budget=False)
    assert r.u_low95_w_m2k <= u <= r.u_high95_w_m2k
    assert r.u_low95_w_m2k >= 0.8 * u and r.u_high95_w_m2k <= 1.2 * u
