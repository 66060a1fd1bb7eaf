"""Tests of envelope.uncertainty: JCGM 101 Monte Carlo, coverage, calibration."""

import dataclasses

import numpy as np
import pytest

from envelope import radiometry, synth
from envelope.errors import EnvelopeWarning
from envelope.uncertainty import Calibration, UInputs, monte_carlo_u

# Stated uncertainties of the recovery study (common practice for a careful interior survey).
U_EPS, U_TR, U_TAI, U_TAE = 0.02, 0.3, 0.2, 0.2
EPS0, H_C0, BAND = 0.9, 2.5, 0.2
ACC = 1.0  # camera absolute accuracy ±1 K, systematic, drawn per trial
NOISE = 0.05  # camera noise [K] per pixel


def _trial(u_true, delta_t, rng, probe=False):
    """One synthetic survey: true values drawn from the stated distributions, rendered."""
    t_ai_true = 20.0
    t_ae_true = t_ai_true - delta_t
    eps_true = rng.normal(EPS0, U_EPS)
    t_r_true = 19.5 + rng.normal(0, 0.5)
    h_c_true = H_C0 * rng.uniform(1 - BAND, 1 + BAND)
    offset = rng.uniform(-ACC, ACC)
    t_si = synth.surface_temperature_for_u(
        u_true, t_ai_true, t_ae_true, t_r_true, eps_true, h_c_true
    )
    image = synth.render_apparent(
        np.full((8, 8), t_si), eps_true, t_r_true, noise_k=NOISE, offset_k=offset, rng=rng
    )
    cal = None
    if probe:
        cal = Calibration(
            probe_surface_c=t_si + rng.normal(0, 0.1),
            u_probe_k=0.1,
            probe_apparent_c=float(image[3, 3]),
        )
    return UInputs(
        apparent_c=float(image.mean()),
        emissivity=EPS0,
        u_emissivity=U_EPS,
        reflected_c=t_r_true + rng.normal(0, U_TR),
        u_reflected_k=U_TR,
        t_ai_c=t_ai_true + rng.normal(0, U_TAI),
        u_t_ai_k=U_TAI,
        t_ae_c=t_ae_true + rng.normal(0, U_TAE),
        u_t_ae_k=U_TAE,
        camera_accuracy_k=ACC,
        camera_relative_k=0.2,
        h_c_band=BAND,
        calibration=cal,
    )


def _study(u_true, delta_t, probe=False, trials=200):
    rng = np.random.default_rng(int(1000 * u_true + delta_t + 7 * probe))
    hits, widths = 0, []
    for k in range(trials):
        est = monte_carlo_u(_trial(u_true, delta_t, rng, probe), n_draws=2000, seed=k)
        hits += est.low95 <= u_true <= est.high95
        widths.append(est.high95 - est.low95)
    return hits / trials, float(np.mean(widths))


@pytest.mark.parametrize("u_true", [0.2, 0.5, 1.5])
def test_coverage_and_width_shrinks_with_delta_t(u_true):
    # JCGM 101 §7.7: a 95 % coverage interval; with the true inputs drawn from the stated
    # distributions the true U must fall inside in >= 90 % of 200 trials (binomial: 95 % of
    # 200 is 190 ± 3).
    cov10, w10 = _study(u_true, 10.0)
    cov20, w20 = _study(u_true, 20.0)
    assert cov10 >= 0.90
    assert cov20 >= 0.90
    assert w20 < w10


def test_probe_calibration_narrows_and_still_covers():
    cov, w_cal = _study(0.5, 10.0, probe=True)
    _, w_raw = _study(0.5, 10.0, probe=False, trials=50)
    assert cov >= 0.90
    assert w_cal < 0.7 * w_raw


def _inputs(**kw):
    base = dict(
        apparent_c=radiometry.apparent_temperature(17.0, 0.9, 19.5),
        emissivity=0.9,
        u_emissivity=0.03,
        reflected_c=19.5,
        u_reflected_k=0.5,
        t_ai_c=20.0,
        u_t_ai_k=0.2,
        t_ae_c=0.0,
        u_t_ae_k=0.3,
        camera_accuracy_k=1.0,
    )
    base.update(kw)
    return UInputs(**base)


def test_reproducible_and_seed_dependent():
    a = monte_carlo_u(_inputs(), n_draws=5000, seed=3)
    b = monte_carlo_u(_inputs(), n_draws=5000, seed=3)
    c = monte_carlo_u(_inputs(), n_draws=5000, seed=4)
    assert a == b
    assert a.low95 != c.low95
    assert a.n_draws == a.n_valid == 5000
    assert not a.calibrated and "no reference-spot calibration" in a.calibration_note
    assert sum(a.budget.values()) == pytest.approx(1.0)
    assert max(a.budget, key=a.budget.get) == "camera_absolute"
    assert a.low95 < a.u_best_w_m2k < a.high95


def test_rectangular_h_c_alone_gives_analytic_quantiles():
    # Only h_c uncertain (rectangular factor 1 ± 0.2): U = A f + B is rectangular, so its
    # 2.5/97.5 % quantiles are A (0.8 + 0.4 {0.025, 0.975}) + B and its standard deviation
    # A 0.4/sqrt(12) (JCGM 101 §6.4.2, rectangular distribution). Tolerance: the Monte Carlo
    # quantile scatter at M = 20000 (about 5e-4 A).
    inp = _inputs(
        u_emissivity=0.0,
        u_reflected_k=0.0,
        u_t_ai_k=0.0,
        u_t_ae_k=0.0,
        camera_accuracy_k=0.0,
        reflected_c=17.0,
        emissivity=1.0,
        apparent_c=17.0,
    )
    est = monte_carlo_u(inp, n_draws=20000, seed=1)
    a = 2.5 * (20.0 - 17.0) / 20.0  # h_c (T_ai - T_si) / dT; radiation term B = 0 (T_r = T_si)
    assert est.low95 == pytest.approx(a * 0.81, abs=2e-3 * a)
    assert est.high95 == pytest.approx(a * 1.19, abs=2e-3 * a)
    assert est.u_std == pytest.approx(a * 0.4 / np.sqrt(12), rel=0.02)
    assert est.budget["h_c"] == pytest.approx(1.0)


def test_probe_budget_replaces_absolute_accuracy():
    a_zone = radiometry.apparent_temperature(17.0, 0.9, 19.5) + 0.8  # camera reads 0.8 K high
    cal = Calibration(probe_surface_c=17.0, u_probe_k=0.1, probe_apparent_c=a_zone)
    raw = monte_carlo_u(_inputs(apparent_c=a_zone), n_draws=5000)
    est = monte_carlo_u(_inputs(apparent_c=a_zone, calibration=cal), n_draws=5000)
    assert est.calibrated and "probe" in est.calibration_note
    assert "camera_absolute" not in est.budget and "probe" in est.budget
    assert est.high95 - est.low95 < 0.7 * (raw.high95 - raw.low95)
    # the offset is removed: the surface temperature returns to the probe's 17 °C
    assert est.t_s_mean_c == pytest.approx(17.0, abs=0.05)
    assert raw.t_s_mean_c == pytest.approx(17.9, abs=0.1)


def test_tape_calibration_recovers_emissivity_on_a_cold_exterior():
    # Exterior wall at 2 °C facing a -10 °C reflected sky/ground mix: true emissivity 0.85,
    # stated 0.9 ± 0.05; the tape (0.95 ± 0.01) next to it pins the emissivity down.
    t_s, t_r = 2.0, -10.0
    cal = Calibration(
        tape_apparent_c=radiometry.apparent_temperature(t_s, 0.95, t_r),
        tape_emissivity=0.95,
        u_tape_emissivity=0.01,
        surface_next_to_tape_apparent_c=radiometry.apparent_temperature(t_s, 0.85, t_r),
    )
    kw = dict(
        side="exterior",
        apparent_c=radiometry.apparent_temperature(t_s, 0.85, t_r),
        reflected_c=t_r,
        emissivity=0.9,
        u_emissivity=0.05,
        wind_m_s=1.0,
        camera_relative_k=0.1,
    )
    est = monte_carlo_u(_inputs(calibration=cal, **kw), n_draws=5000)
    assert est.emissivity_mean == pytest.approx(0.85, abs=0.01)
    assert est.emissivity_std < 0.5 * 0.05
    assert "emissivity (tape)" in est.budget
    assert est.t_s_mean_c == pytest.approx(t_s, abs=0.2)


def test_tape_warns_when_poorly_conditioned():
    cal = Calibration(tape_apparent_c=18.0, surface_next_to_tape_apparent_c=18.1)
    with pytest.warns(EnvelopeWarning, match="tape"):
        monte_carlo_u(_inputs(calibration=cal), n_draws=500)


def test_exterior_and_model_mixture():
    inp = _inputs(
        side="exterior",
        apparent_c=radiometry.apparent_temperature(1.5, 0.9, -2.0),
        reflected_c=-2.0,
        wind_m_s=1.0,
        t_sky_c=-8.0,
    )
    est = monte_carlo_u(inp, n_draws=3000)
    assert {"wind", "t_sky"} <= set(est.budget)
    mix = monte_carlo_u(
        dataclasses.replace(_inputs(), h_c_alternatives=("churchill_chu",)), n_draws=3000
    )
    assert np.isfinite(mix.u_w_m2k)


def test_bad_inputs():
    with pytest.raises(ValueError, match="side"):
        monte_carlo_u(_inputs(side="roof"))
    with pytest.raises(ValueError, match="n_draws"):
        monte_carlo_u(_inputs(), n_draws=10)
    with pytest.raises(ValueError, match="u_emissivity"):
        monte_carlo_u(_inputs(u_emissivity=-1.0))
