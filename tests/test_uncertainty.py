"""Tests of envelope.uncertainty: correlated Monte Carlo (JCGM 101), spots, series, H.

True scenes are made here by the interior heat balance (Newton solve in
`envelope.synth.surface_temperature_for_u`, the balance of Fokaides & Kalogirou 2011) and
the measurement equation; numbers are checked against closed forms where one exists
(rectangular quantiles, GUM sums) and otherwise for the behaviour the physics requires.
"""

import math

import numpy as np
import pytest

from envelope import budget, convection, radiometry, synth, transmittance
from envelope.calibration import FluxSpot, ProbeSpot, TapeSpot
from envelope.uncertainty import (
    Camera,
    SeriesInputs,
    ViewInputs,
    ZoneInputs,
    estimate_series_u,
    estimate_u,
    heat_loss_from_draws,
    keyed_normal,
)

T_AI, T_AE, T_R, EPS = 21.0, 1.0, 19.6, 0.93
N = 4000


def _scene(u=0.5, h_c=1.8, offset=1.2, eps=EPS, t_r=T_R, tau=1.0, atm=T_AI, band=(7.5, 14.0)):
    t_si = float(synth.surface_temperature_for_u(u, T_AI, T_AE, t_r, eps, h_c))
    a = float(radiometry.apparent_temperature(t_si, eps, t_r, tau, atm, band_um=band)) + offset
    return t_si, a


def _view(**kw):
    base = dict(view_id="v", t_ai_c=T_AI, t_ae_c=T_AE, reflected_c=T_R,
                camera=Camera(accuracy_k=2.0, relative_k=0.2))
    base.update(kw)
    return ViewInputs(**base)


def test_reproducible_seed_dependent_and_budget():
    _, a = _scene()
    z = ZoneInputs("wall", a, EPS, 0.02)
    r1, r2, r3 = (estimate_u(_view(), z, n_draws=N, seed=s) for s in (3, 3, 4))
    assert r1.u_high95_w_m2k == r2.u_high95_w_m2k and r1.budget == r2.budget
    assert r1.u_high95_w_m2k != r3.u_high95_w_m2k
    assert r1.n_draws == r1.n_valid == N and not r1.calibrated
    assert sum(r1.budget.values()) == pytest.approx(1.0)
    # without a probe the camera's ±2 K dominates, and the advice says what removes it
    assert next(iter(r1.budget)) == "camera_offset"
    assert r1.advice[0].contributor == "camera_offset" and "probe" in r1.advice[0].remedy
    assert r1.u_low95_w_m2k < r1.u_best_w_m2k < r1.u_high95_w_m2k


def test_rectangular_h_c_alone_gives_analytic_quantiles():
    # Only the convection factor uncertain (one fixed member, rectangular 1 ± 0.2): U = A f + B
    # is rectangular, quantiles A (0.8 + 0.4 {0.025, 0.975}) + B, sd A 0.4/sqrt(12)
    # (JCGM 101 §6.4.2). T_r = T_si, eps = 1: B = 0. Tolerance: MC quantile scatter at 20000.
    ens = convection.interior_ensemble("wall", model="iso6946", band=0.2)
    view = _view(t_ai_std_k=0.0, t_ae_std_k=0.0, reflected_std_k=0.0, reflected_c=17.0,
                 camera=Camera(accuracy_k=0.0, relative_k=0.0, noise_k=0.0))
    r = estimate_u(view, ZoneInputs("wall", 17.0, 1.0, 0.0, convection=ens), n_draws=20000)
    a = 2.5 * (T_AI - 17.0) / (T_AI - T_AE)
    assert r.u_low95_w_m2k == pytest.approx(a * 0.81, abs=2e-3 * a)
    assert r.u_high95_w_m2k == pytest.approx(a * 1.19, abs=2e-3 * a)
    assert r.u_std_w_m2k == pytest.approx(a * 0.4 / math.sqrt(12), rel=0.02)
    assert r.budget == {"h_c": pytest.approx(1.0)}


def test_one_correction_path_with_the_image():
    # The Monte Carlo's best estimate uses the declared transmittance, atmosphere and band
    # exactly as the image path does (radiometry.object_temperature): no camera error drawn,
    # the surface temperature and U must equal the image path's to 1e-9.
    band, tau, atm = (8.0, 14.0), 0.97, 21.0
    t_si, a = _scene(u=0.2, offset=0.0, tau=tau, atm=atm, band=band)
    view = _view(transmittance=tau, atmosphere_c=atm, camera=Camera(band_um=band))
    ens = convection.interior_ensemble("wall", model="churchill_chu")
    r = estimate_u(view, ZoneInputs("wall", a, EPS, 0.02, convection=ens), n_draws=N,
                   budget=False)
    t_img = radiometry.object_temperature(a, EPS, T_R, tau, atm, band_um=band)
    assert t_img == pytest.approx(t_si, abs=1e-4)
    h = convection.interior_coefficient("churchill_chu", t_img, T_AI)
    u_img = transmittance.u_interior(t_img, T_AI, T_AE, T_R, EPS, h)
    assert r.u_best_w_m2k == pytest.approx(u_img, rel=1e-9)


def test_same_camera_reflector_cancels_the_offset_in_the_radiative_part():
    # The camera reads 1.2 K warm on the wall and on the reflector alike. Drawn independently
    # the reflected temperature and the offset give a wide interval; drawn as one offset the
    # radiative term's offset cancels and the interval narrows (issue 14, finding 2). Both
    # hold the true U.
    _, a = _scene(offset=1.2)
    z = ZoneInputs("wall", a, EPS, 0.02)
    ind = estimate_u(_view(reflected_std_k=0.5), z, n_draws=N)
    cor = estimate_u(_view(reflected_c=T_R + 1.2, reflected_std_k=0.2, reflected_by_camera=True),
                     z, n_draws=N)
    # (the independent interval reaches below zero, where its lower end is raised to 0: its
    # standard uncertainty compares the spreads)
    assert cor.u_std_w_m2k < 0.5 * ind.u_std_w_m2k and ind.u_low95_w_m2k == 0.0
    assert cor.u_low95_w_m2k <= 0.5 <= cor.u_high95_w_m2k
    assert ind.u_low95_w_m2k <= 0.5 <= ind.u_high95_w_m2k


def test_probe_gives_the_offset_for_every_reading():
    t_si, a = _scene(offset=1.2)
    probe = ProbeSpot(a, t_si, 0.1, EPS, 0.02, element="wall")
    view = _view(reflected_c=T_R + 1.2, reflected_std_k=0.2, reflected_by_camera=True,
                 probes=(probe,))
    r = estimate_u(view, ZoneInputs("wall", a, EPS, 0.02), n_draws=N)
    assert r.calibrated and r.camera_offset_k == pytest.approx(1.2, abs=0.01)
    assert r.t_si_c == pytest.approx(t_si, abs=0.02)
    assert "camera_offset" not in r.budget or r.budget["camera_offset"] < 1e-3
    assert r.u_low95_w_m2k <= 0.5 <= r.u_high95_w_m2k


def test_tape_combined_or_refused():
    # Exterior view at 12 K contrast: the tape is combined by inverse variance and the
    # surface's true emissivity 0.85 (declared 0.90 ± 0.05) is recovered.
    t_s, t_r = 2.0, -10.0
    tape = TapeSpot(radiometry.apparent_temperature(t_s, 0.95, t_r, 1.0, 1.0),
                    radiometry.apparent_temperature(t_s, 0.85, t_r, 1.0, 1.0), 0.95, 0.01)
    # (reflected temperature read off a reflector with the same camera: the ±2 K offset then
    # leaves the contrast alone; with a declared one the tape would need ~13 K, see
    # calibration.TAPE_CONTRAST_RATIO)
    view = _view(side="exterior", reflected_c=t_r, reflected_std_k=0.3, reflected_by_camera=True,
                 t_ae_c=1.0, atmosphere_c=1.0, tape=tape,
                 camera=Camera(accuracy_k=2.0, relative_k=0.1), wind_m_s=1.0)
    a = radiometry.apparent_temperature(t_s, 0.85, t_r, 1.0, 1.0)
    r = estimate_u(view, ZoneInputs("wall", a, 0.90, 0.05), n_draws=N)
    assert r.emissivity == pytest.approx(0.85, abs=0.01) and r.emissivity_std < 0.025
    assert any("tape weight" in n for n in r.notes) and "tape" in r.budget
    # Interior kitchen case: 0.9 K of contrast -> refused with a note, prior kept
    t_si, a = _scene()
    tape2 = TapeSpot(radiometry.apparent_temperature(t_si, 0.95, T_R, 1.0, T_AI),
                     radiometry.apparent_temperature(t_si, EPS, T_R, 1.0, T_AI))
    r2 = estimate_u(_view(tape=tape2), ZoneInputs("wall", a, EPS, 0.02), n_draws=N)
    assert any("tape refused" in n for n in r2.notes)
    assert r2.emissivity == pytest.approx(EPS, abs=1e-3) and "tape" not in r2.budget


def test_flux_spot_replaces_the_ensemble():
    # Heat-flux meter in the zone (q = U dT = 10 W/m2, ±3 %) with its own surface
    # thermocouple given as a probe: h_tot = q / (T_ai - T_si) replaces the convection
    # ensemble, whose share vanishes; U returns to q / dT.
    t_si, a = _scene(offset=1.2)
    probe = ProbeSpot(a, t_si, 0.1, EPS, 0.02, element="wall")
    flux = FluxSpot(10.0, 0.3, apparent_c=a)
    base = dict(reflected_c=T_R + 1.2, reflected_std_k=0.2, reflected_by_camera=True,
                probes=(probe,))
    z = ZoneInputs("wall", a, EPS, 0.02)
    r_ens = estimate_u(_view(**base), z, n_draws=N)
    r_hfm = estimate_u(_view(flux=flux, **base), z, n_draws=N)
    assert "h_c" not in r_hfm.budget and "flux" in r_hfm.budget
    assert r_hfm.u_w_m2k == pytest.approx(0.5, rel=0.01)
    w = r_hfm.u_high95_w_m2k - r_hfm.u_low95_w_m2k
    assert w < 0.5 * (r_ens.u_high95_w_m2k - r_ens.u_low95_w_m2k)
    assert any("heat-flux" in n for n in r_hfm.notes)


def test_series_averages_random_inputs_only():
    # 24 frames; per-frame air-temperature noise of 0.5 K and a small zone (10 px of 0.3 K
    # noise) are random and average down over the series; the systematic inputs do not.
    t_si, a = _scene(offset=0.0)
    z = ZoneInputs("wall", a, EPS, 0.0, n_pixels=10,
                   convection=convection.interior_ensemble("wall", model="iso6946", band=0.0))
    quiet = dict(camera=Camera(accuracy_k=0.0, relative_k=0.0, noise_k=0.3),
                 t_ai_std_k=0.0, t_ae_std_k=0.0, reflected_std_k=0.0)
    n = 24
    ser = SeriesInputs(np.arange(n) * 0.5, np.full(n, a), np.full(n, T_AI), np.full(n, T_AE))
    view = _view(air_noise_std_k=0.5, **quiet)
    one = estimate_u(view, z, n_draws=N, budget=False)
    many = estimate_series_u(view, z, ser, n_draws=N, budget=False)
    # random parts: width shrinks about as 1/sqrt(24) (between 1/3 and 1/6 here)
    ratio = many.u_std_w_m2k / one.u_std_w_m2k
    assert 1 / 6 < ratio < 1 / 3
    # systematic parts only (thermometer bias 0.3 K): no narrowing
    sys_view = _view(**{**quiet, "t_ai_std_k": 0.3,
                        "camera": Camera(accuracy_k=0.0, relative_k=0.0, noise_k=0.0)})
    one_s = estimate_u(sys_view, z, n_draws=N, budget=False)
    many_s = estimate_series_u(sys_view, z, ser, n_draws=N, budget=False)
    assert many_s.u_std_w_m2k == pytest.approx(one_s.u_std_w_m2k, rel=0.02)


def test_joint_heat_loss_over_shared_draws():
    # Two walls and a window seen with one camera, one pair of thermometers and the wall
    # ensemble: per-trial U share their inputs, so H = sum A U summed trial by trial; its
    # spread exceeds the independent sum's (positive correlation through t_ai, t_ae, camera).
    _, a1 = _scene(u=0.5)
    _, a2 = _scene(u=0.3)
    _, a3 = _scene(u=2.8, h_c=2.6, eps=0.84)
    view = _view()
    kw = dict(n_draws=N, seed=7, keep_draws=True, budget=False)
    r1 = estimate_u(view, ZoneInputs("wall-a", a1, EPS, 0.02), **kw)
    r2 = estimate_u(view, ZoneInputs("wall-b", a2, EPS, 0.02), **kw)
    r3 = estimate_u(view, ZoneInputs("win", a3, 0.84, 0.02,
                                     convection=convection.interior_ensemble("window")), **kw)
    h = heat_loss_from_draws([(10.0, r1.draws), (8.0, r2.draws), (2.0, r3.draws)])
    direct = 10.0 * r1.draws + 8.0 * r2.draws + 2.0 * r3.draws
    assert h.h_w_k == pytest.approx(np.nanmean(direct), rel=1e-12)
    assert h.h_std_w_k > 1.2 * h.h_std_independent_w_k
    # same key, seed and n: the same variates in every call
    np.testing.assert_array_equal(keyed_normal("air:indoor", 7, 10), keyed_normal("air:indoor", 7, 10))
    with pytest.raises(ValueError, match="same length"):
        heat_loss_from_draws([(1.0, np.ones(3)), (1.0, np.ones(4))])


def test_interval_lower_end_raised_to_zero_where_draws_go_negative():
    # An uncalibrated camera (±2 K) on a well-insulated wall with a 10 K air difference: the
    # surface-air difference (about 0.6 K) is smaller than the offset, so draws of U go below
    # zero. U and H cannot: the lower end is 0 and a note says the survey does not resolve U
    # from zero. The 0.975 quantile and the mean are the draws' own, untouched.
    t_ae = T_AI - 10.0
    t_si = float(synth.surface_temperature_for_u(0.3, T_AI, t_ae, T_R, EPS, 1.8))
    a = float(radiometry.apparent_temperature(t_si, EPS, T_R, 1.0, T_AI)) + 1.2
    r = estimate_u(_view(t_ae_c=t_ae), ZoneInputs("wall", a, EPS, 0.02), n_draws=N, seed=5,
                   keep_draws=True, budget=False)
    d = r.draws[np.isfinite(r.draws)]
    assert np.quantile(d, 0.025) < 0 and (d < 0).mean() > 0.025
    assert r.u_low95_w_m2k == 0.0
    assert r.u_high95_w_m2k == pytest.approx(np.quantile(d, 0.975), rel=1e-12)
    assert r.u_w_m2k == pytest.approx(np.mean(d), rel=1e-12)
    assert any("does not resolve" in n for n in r.notes)
    h = heat_loss_from_draws([(10.0, r.draws)])
    assert h.h_low95_w_k == 0.0 and h.low_raised_to_zero
    # a resolved value keeps its plain quantiles
    ok = heat_loss_from_draws([(10.0, np.linspace(0.2, 0.4, 1001))])
    assert not ok.low_raised_to_zero and ok.h_low95_w_k == pytest.approx(2.05)


def test_environmental_definition():
    # Radiant temperature equal to the air inside and an overcast night outside: the two
    # definitions coincide; with colder surroundings inside, U_env > U_air (ISO 6946 design
    # values are referred to environmental temperatures).
    _, a = _scene(t_r=T_AI, offset=0.0)
    z = ZoneInputs("wall", a, EPS, 0.02)
    same = estimate_u(_view(reflected_c=T_AI, reflected_std_k=0.0, t_ai_std_k=0.0, t_sky_std_k=0.0), z,
                      n_draws=N, budget=False)
    assert same.u_env_w_m2k == pytest.approx(same.u_w_m2k, rel=1e-3)
    _, a = _scene(t_r=18.5, offset=0.0)
    cold = estimate_u(_view(reflected_c=18.5), ZoneInputs("wall", a, EPS, 0.02), n_draws=N,
                      budget=False)
    assert cold.u_env_w_m2k > cold.u_w_m2k


def test_advice_and_defect_uncertainty():
    adv = budget.narrowing_advice({"reflected": 0.6, "h_c": 0.3, "emissivity": 0.01},
                                  delta_t_k=20.0)
    assert [x.contributor for x in adv] == ["reflected", "h_c"]
    assert "reflector" in adv[0].remedy and "heat-flux" in adv[1].remedy
    cold = budget.narrowing_advice({"camera_offset": 1.0}, delta_t_k=9.0)
    assert "colder night" in cold[0].remedy
    # sqrt((0.2/sqrt3)^2 + (sqrt2 * 0.2/sqrt3 / 2)^2) by hand
    expect = math.sqrt((0.2 / math.sqrt(3)) ** 2 + (math.sqrt(2) * 0.2 / math.sqrt(3) / 2) ** 2)
    assert budget.defect_relative_uncertainty(2.0, 0.2) == pytest.approx(expect)
    assert budget.defect_relative_uncertainty(0.1, 0.2) == budget.defect_relative_uncertainty(0.5, 0.2)


def test_bad_inputs():
    z = ZoneInputs("wall", 18.0, EPS, 0.02)
    with pytest.raises(ValueError, match="side"):
        estimate_u(_view(side="roof"), z)
    with pytest.raises(ValueError, match="n_draws"):
        estimate_u(_view(), z, n_draws=10)
    with pytest.raises(ValueError, match="emissivity_std"):
        estimate_u(_view(), ZoneInputs("wall", 18.0, EPS, -0.1))
    with pytest.raises(ValueError, match="emissivity"):
        estimate_u(_view(), ZoneInputs("wall", 18.0, 1.5, 0.02))
    ser = SeriesInputs([0.0, 0.0], [18.0, 18.0], [21.0, 21.0], [1.0, 1.0])
    with pytest.raises(ValueError, match="increasing"):
        estimate_series_u(_view(), z, ser)
