"""Tests of envelope.synth: energy balances, ISO 6946 resistance network, pinhole geometry."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy.constants import Stefan_Boltzmann as SIGMA  # CODATA, via scipy

from envelope import synth


@settings(max_examples=40, deadline=None)
@given(u=st.floats(0.1, 3.0), t_ai=st.floats(15, 25), t_ae=st.floats(-15, 5),
       t_r=st.floats(12, 25), eps=st.floats(0.8, 0.98), h_c=st.floats(1.0, 4.0))
def test_interior_balance(u, t_ai, t_ae, t_r, eps, h_c):
    # The interior surface heat balance written out with scipy's sigma; to 1e-9 W/m2.
    t_si = synth.surface_temperature_for_u(u, t_ai, t_ae, t_r, eps, h_c)
    gain = h_c * (t_ai - t_si) + eps * SIGMA * ((t_r + 273.15) ** 4 - (t_si + 273.15) ** 4)
    assert gain == pytest.approx(u * (t_ai - t_ae), abs=1e-9)


def test_interior_balance_array():
    u = np.array([[0.2, 0.6], [1.4, 2.8]])
    t_si = synth.surface_temperature_for_u(u, 20.0, 0.0, 19.0, 0.9, 2.5)
    gain = 2.5 * (20.0 - t_si) + 0.9 * SIGMA * (292.15**4 - (t_si + 273.15) ** 4)
    np.testing.assert_allclose(gain, u * 20.0, atol=1e-9)
    assert np.all(np.diff(t_si.ravel()) < 0)  # higher U, colder surface


def test_interior_matches_iso6946_network():
    # ISO 6946:2017 Table 7 / Annex C (from memory): R_si = 0.13 m2K/W stands for
    # h_c = 2.5 plus h_r = 4 eps sigma T^3 ~ 5.1 W/m2K (eps 0.9, ~20 °C), 1/7.6 = 0.13.
    # With T_r = T_ai the exact balance and the linear network agree to a few 0.01 K.
    t_lin, _ = synth.steady_surface_temperatures(1.0, 20.0, 0.0)
    t_exact = synth.surface_temperature_for_u(1.0, 20.0, 0.0, 20.0, 0.9, 2.5)
    assert t_exact == pytest.approx(t_lin, abs=0.05)


def test_exterior_balance():
    u = np.array([0.3, 1.0, 2.5])
    t_se = synth.exterior_surface_temperature_for_u(u, 20.0, 2.0, -25.0, 3.0, 0.5, 0.9, 12.0)
    t = t_se + 273.15
    loss = 12.0 * (t_se - 2.0) + 0.9 * SIGMA * (0.5 * (t**4 - 248.15**4)
                                                 + 0.5 * (t**4 - 276.15**4))
    np.testing.assert_allclose(loss, u * 18.0, atol=1e-9)
    # Clear-sky radiation pulls a well-insulated wall below the air (common practice).
    assert t_se[0] < 2.0


def test_steady_surface_temperatures_iso6946():
    # ISO 6946:2017 1-D resistance network: q = U (t_i - t_e) = 0.35 * 25 = 8.75 W/m2,
    # t_si = 20 - 8.75 * 0.13 = 18.8625 °C, t_se = -5 + 8.75 * 0.04 = -4.65 °C.
    t_si, t_se = synth.steady_surface_temperatures(0.35, 20.0, -5.0)
    assert t_si == pytest.approx(18.8625, abs=1e-12)
    assert t_se == pytest.approx(-4.65, abs=1e-12)
    with pytest.raises(ValueError):
        synth.steady_surface_temperatures(7.0, 20.0, 0.0)  # above 1/(Rsi + Rse)


def test_render_apparent():
    obj = np.full((60, 60), 12.0)
    out = synth.render_apparent(obj, 1.0, 20.0)
    assert out.dtype == np.float32
    np.testing.assert_allclose(out, 12.0, atol=1e-5)  # eps = tau = 1: identity
    noisy = synth.render_apparent(obj, 1.0, 20.0, noise_k=0.05, offset_k=0.3, rng=7)
    assert float(np.mean(noisy)) == pytest.approx(12.3, abs=0.005)  # 3600 px: SE 0.001 K
    assert float(np.std(noisy)) == pytest.approx(0.05, rel=0.05)
    # eps < 1 with a warmer reflected scene raises the reading (measurement equation).
    assert synth.render_apparent(obj, 0.9, 20.0)[0, 0] > 12.0


def test_project_constant_facade():
    h = synth.camera_homography(6.0, 4.0, (90, 120), yaw_deg=25.0, pitch_deg=-8.0)
    img = synth.project_facade(np.full((8, 12), 3.5), 0.5, h, (90, 120), fill=-1.0)
    inside = img != -1.0
    assert inside.any() and (~inside).any()
    np.testing.assert_allclose(img[inside], 3.5, atol=1e-12)


def test_project_axis_convention():
    # Façade row 0 is at the bottom (Y up), so it appears at the bottom of a square-on image.
    vals = np.zeros((4, 4))
    vals[0, :] = 1.0
    h = synth.camera_homography(4.0, 4.0, (100, 100))
    img = synth.project_facade(vals, 1.0, h, (100, 100))
    col = img[:, 50]
    rows = np.flatnonzero(col == 1.0)
    assert rows.min() > 50


def test_camera_homography_round_trip_and_scale():
    shape = (240, 320)
    h = synth.camera_homography(8.0, 5.0, shape, distance_m=10.0, focal_px=400.0)
    # Pinhole similar triangles: square-on, one pixel covers distance / focal = 0.025 m.
    corners = synth.facade_rectangle_pixels(h, 0.0, 0.0, 8.0, 5.0)
    assert corners[1, 0] - corners[0, 0] == pytest.approx(8.0 / 0.025)
    assert corners[0, 1] - corners[3, 1] == pytest.approx(5.0 / 0.025)  # y down
    # Principal point at the centre: the façade centre maps to (160, 120).
    centre = synth.facade_rectangle_pixels(h, 4.0, 2.5, 4.0, 2.5)[0]
    np.testing.assert_allclose(centre, [160.0, 120.0], atol=1e-9)
    # Oblique view: pixel corners map back to the façade corners through h.
    ho = synth.camera_homography(8.0, 5.0, shape, yaw_deg=35.0, pitch_deg=12.0)
    pix = synth.facade_rectangle_pixels(ho, 1.0, 0.5, 3.0, 2.0)
    back = np.c_[pix, np.ones(4)] @ ho.T
    np.testing.assert_allclose(back[:, :2] / back[:, 2:], [[1, 0.5], [3, 0.5], [3, 2], [1, 2]],
                               atol=1e-9)


def test_oblique_foreshortening():
    # A camera turned by yaw sees the façade width shortened by about cos(yaw) near the
    # centre (pinhole geometry, small target).
    h0 = synth.camera_homography(8.0, 5.0, (240, 320), distance_m=30.0, focal_px=400.0)
    h1 = synth.camera_homography(8.0, 5.0, (240, 320), yaw_deg=40.0, distance_m=30.0,
                                 focal_px=400.0)
    w0 = np.ptp(synth.facade_rectangle_pixels(h0, 3.9, 2.5, 4.1, 2.5)[:2, 0])
    w1 = np.ptp(synth.facade_rectangle_pixels(h1, 3.9, 2.5, 4.1, 2.5)[:2, 0])
    assert w1 / w0 == pytest.approx(np.cos(np.radians(40.0)), rel=1e-3)
