"""Tests of envelope.radiometry against Planck's law integrated by scipy and physical constants."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st
from scipy import constants as sc
from scipy import integrate, optimize

from envelope import atmosphere, materials
from envelope import radiometry as rad
from envelope.errors import EnvelopeWarning, SurveyError

# Planck's law built independently from scipy.constants (CODATA), integrated by scipy quad.
_C1 = 2 * sc.h * sc.c**2
_C2 = sc.h * sc.c / sc.k
BANDS = [(7.5, 14.0), (8.0, 14.0), (7.0, 13.0), (3.0, 5.0), (8.0, 9.0)]  # (8, 9): a user band


def quad_radiance(t_k, band_um):
    """Band radiance [W m-2 sr-1] by numerical quadrature of Planck's law (scipy quad)."""

    def planck(lam_m):
        return _C1 / lam_m**5 / np.expm1(_C2 / (lam_m * t_k))

    val, _ = integrate.quad(planck, band_um[0] * 1e-6, band_um[1] * 1e-6,
                            epsabs=0.0, epsrel=1e-12, limit=200)
    return val


def quad_temperature(radiance, band_um):
    """Blackbody temperature [K] of a band radiance by root finding on the quad integral."""
    return optimize.brentq(lambda t: quad_radiance(t, band_um) - radiance, 150.0, 700.0,
                           xtol=1e-10)


@pytest.mark.parametrize("band", BANDS + [(2.0, 20.0)])
@pytest.mark.parametrize("t_k", [213.15, 253.15, 293.15, 373.15, 473.15])
def test_band_radiance_matches_quad(band, t_k):
    # Reference: scipy.integrate.quad of Planck's law (scipy.constants); rel 1e-8 per the spec.
    assert rad.band_radiance(t_k, band) == pytest.approx(quad_radiance(t_k, band), rel=1e-8)


def test_band_radiance_vectorised_shape():
    t = np.array([[250.0, 300.0], [350.0, 400.0]])
    out = rad.band_radiance(t)
    assert out.shape == (2, 2)
    expected = [quad_radiance(v, rad.DEFAULT_BAND_UM) for v in t.ravel()]  # scipy quad
    np.testing.assert_allclose(out.ravel(), expected, rtol=1e-8)


@pytest.mark.parametrize("t_k", [200.0, 300.0, 1000.0, 5800.0])
def test_full_spectrum_is_stefan_boltzmann(t_k):
    # Reference: sigma T^4 / pi with scipy.constants.Stefan_Boltzmann (CODATA).
    expected = sc.Stefan_Boltzmann * t_k**4 / np.pi
    assert rad.band_radiance(t_k, (0.0, np.inf)) == pytest.approx(expected, rel=1e-12)
    # 0.1-1000 µm misses about 2e-6 of the total at 300 K (x^3/3 / (pi^4/15) at 1000 µm).
    assert rad.band_radiance(t_k, (0.1, 1000.0)) == pytest.approx(expected, rel=5e-5)


@pytest.mark.parametrize("t_k", [250.0, 300.0, 600.0])
def test_spectral_peak_is_wien(t_k):
    # Reference: Wien's displacement constant, scipy.constants.Wien = 2.897771955e-3 m K.
    res = optimize.minimize_scalar(lambda lam: -rad.spectral_radiance(lam, t_k),
                                   bounds=(1.0, 30.0), method="bounded",
                                   options={"xatol": 1e-9})
    assert res.x * 1e-6 * t_k == pytest.approx(sc.Wien, rel=1e-6)


def test_default_band():
    # Thermal cameras for buildings work in about 7-14 µm (common practice).
    assert rad.DEFAULT_BAND_UM == (7.5, 14.0)


@pytest.mark.parametrize("band", BANDS)
def test_band_temperature_inverts_exact_integral(band):
    # Spec: within 0.01 K of the exact integral over -40...+150 °C; achieved ~1e-5 K.
    t = np.linspace(-40.0, 150.0, 2001) + 273.15
    back = rad.band_temperature(rad.band_radiance(t, band), band)
    assert np.max(np.abs(back - t)) < 1e-3


@pytest.mark.parametrize("band", [(7.5, 14.0), (3.0, 5.0)])
@pytest.mark.parametrize("t_c", [-40.0, 0.0, 61.3, 150.0])
def test_band_temperature_against_quad(band, t_c):
    # Reference: scipy quad of Planck's law (independent of band_radiance); spec tol 0.01 K.
    t_k = t_c + 273.15
    assert rad.band_temperature(quad_radiance(t_k, band), band) == pytest.approx(t_k, abs=1e-3)


def test_band_temperature_float32_and_nonpositive():
    out = rad.band_temperature(np.array([0.0, -1.0, 40.0], dtype=np.float32))
    assert out.dtype == np.float32
    assert np.isnan(out[0]) and np.isnan(out[1]) and np.isfinite(out[2])


@settings(max_examples=60, deadline=None)
@given(t_obj=st.floats(-40, 150), eps=st.floats(0.6, 1.0), tau=st.floats(0.8, 1.0),
       t_refl=st.floats(-20, 40))
def test_forward_inverse_round_trip(t_obj, eps, tau, t_refl):
    # Consistency (spec: 0.01 K over -40...+150 °C, eps 0.6-1, tau 0.8-1, reflected -20...+40).
    app = rad.apparent_temperature(t_obj, eps, t_refl, tau)
    assert rad.object_temperature(app, eps, t_refl, tau) == pytest.approx(t_obj, abs=0.01)


def test_unit_settings_return_reading():
    # eps = 1 and tau = 1: the measurement equation reduces to W = L(T_obj) (identity).
    x = np.array([-30.0, 0.0, 21.5, 140.0])
    np.testing.assert_array_equal(rad.object_temperature(x, 1.0, 35.0, 1.0), x)
    np.testing.assert_allclose(rad.apparent_temperature(x, 1.0, 35.0, 1.0), x, atol=1e-6)


def test_hand_worked_measurement_equation():
    # Band 7.5-14 µm, object 10 °C, eps 0.9, reflected 20 °C, tau 0.95, air 5 °C.
    # Radiances by scipy quad of Planck's law [W m-2 sr-1]:
    #   L(283.15 K) = 44.91887, L(293.15 K) = 53.16068, L(278.15 K) = 41.12048
    # W = 0.95*0.9*44.91887 + 0.95*0.1*53.16068 + 0.05*41.12048
    #   = 38.40563 + 5.05026 + 2.05602 = 45.51192
    # Blackbody temperature of W (brentq on the quad integral): 283.90623 K = 10.75623 °C.
    l_obj, l_refl, l_atm = (quad_radiance(t, (7.5, 14.0)) for t in (283.15, 293.15, 278.15))
    assert l_obj == pytest.approx(44.91887, abs=1e-5)
    w = 0.95 * 0.9 * l_obj + 0.95 * 0.1 * l_refl + 0.05 * l_atm
    assert w == pytest.approx(45.51192, abs=1e-5)
    t_app = quad_temperature(w, (7.5, 14.0)) - 273.15
    assert t_app == pytest.approx(10.75623, abs=1e-5)
    assert rad.apparent_temperature(10.0, 0.9, 20.0, 0.95, 5.0) == pytest.approx(t_app, abs=1e-4)
    assert rad.object_temperature(t_app, 0.9, 20.0, 0.95, 5.0) == pytest.approx(10.0, abs=1e-4)


def test_image_path_matches_quad_solution():
    # A float32 image large enough for the tabulated scalar path, checked at a few pixels
    # against root finding on the quad integral (independent of the module).
    rng = np.random.default_rng(3)
    img = rng.uniform(-25.0, 60.0, size=(400, 400)).astype(np.float32)
    img[0, 0] = np.nan
    out = rad.object_temperature(img, 0.85, 12.0, 0.97, 4.0)
    assert out.dtype == np.float32 and np.isnan(out[0, 0])
    band = (7.5, 14.0)
    l_rest = 0.97 * 0.15 * quad_radiance(285.15, band) + 0.03 * quad_radiance(277.15, band)
    for r, c in [(5, 7), (100, 3), (399, 399), (250, 123)]:
        w = quad_radiance(float(img[r, c]) + 273.15, band)
        expected = quad_temperature((w - l_rest) / (0.97 * 0.85), band) - 273.15
        assert out[r, c] == pytest.approx(expected, abs=1e-3)


def test_image_table_path_with_nan_limit():
    # Low emissivity, warm reflected scene and cold readings: part of the image has no
    # solution (NaN), so the tabulated path is used; checked against quad root finding.
    rng = np.random.default_rng(5)
    img = rng.uniform(-40.0, 40.0, size=(400, 400)).astype(np.float32)
    out = rad.object_temperature(img, 0.6, 30.0)
    band = (7.5, 14.0)
    l_refl = 0.4 * quad_radiance(303.15, band)
    assert np.isnan(out).any() and np.isfinite(out).any()
    for r, c in [(0, 0), (17, 250), (399, 1), (200, 200), (321, 45)]:
        w = quad_radiance(float(img[r, c]) + 273.15, band) - l_refl
        if w <= quad_radiance(150.0, band):  # no solution, or below the fitted range
            continue
        expected = quad_temperature(w / 0.6, band) - 273.15
        assert out[r, c] == pytest.approx(expected, abs=1e-3)


def test_emissivity_map_and_export_undo_fast_paths_match_the_exact_path():
    # The pipeline's case: an emissivity map of a few elements and the camera's export
    # settings undone, on a frame large enough for the fast paths. Reference: the per-pixel
    # path of the same equations (float64), within 3e-5 K (our tolerance for the fast path).
    rng = np.random.default_rng(11)
    img = rng.uniform(-40.0, 60.0, size=(480, 640)).astype(np.float32)
    img[3, 4] = np.nan
    eps = np.full(img.shape, 0.93, np.float32)
    eps[:200, :300], eps[300:, 400:], eps[100:150, :] = 0.84, 0.95, 0.90
    out = rad.object_temperature(img, eps, 4.0, 0.98, 2.0)
    ref = rad._object_general(img.astype(float), eps.astype(float), 0.98, 4.0, 2.0,
                              (7.5, 14.0), float)
    assert out.dtype == np.float32 and np.isnan(out[3, 4])
    assert np.nanmax(np.abs(out - ref)) < 3e-5
    app = rad.blackbody_reading(img, 0.95, 20.0, 0.99, 5.0)
    ref = rad._apparent_general(img.astype(float), 0.95, 0.99, 20.0, 5.0, (7.5, 14.0))
    assert np.nanmax(np.abs(app - ref)) < 3e-5
    # and against quad at a few pixels (independent of the module), to the inversion accuracy
    _agrees_with_quad(out, img, eps, 0.98, 4.0, 2.0, [(5, 7), (250, 500), (400, 10)])


def _agrees_with_quad(out, img, eps, tau, refl_c, atm_c, pixels, band=(7.5, 14.0)):
    """Object temperatures at `pixels` equal the measurement equation inverted with scipy's
    quadrature of Planck's law (independent of the module), within 1 mK."""
    for r, c in pixels:
        e = float(eps[r, c])
        w = quad_radiance(float(img[r, c]) + 273.15, band)
        rest = (tau * (1 - e) * quad_radiance(refl_c + 273.15, band)
                + (1 - tau) * quad_radiance(atm_c + 273.15, band))
        expected = quad_temperature((w - rest) / (tau * e), band) - 273.15
        assert out[r, c] == pytest.approx(expected, abs=1e-3)


def test_emissivity_map_through_the_radiance_matches_the_exact_path():
    # The pipeline's case over a night's range of readings: the emissivity map goes through
    # the radiance (two polynomials and a division per pixel). Reference: the per-pixel path
    # of the same equations (float64), within 3e-5 K (our tolerance for the fast paths), for
    # a map of a few elements and for a smooth map.
    rng = np.random.default_rng(17)
    img = rng.uniform(-12.0, 28.0, size=(480, 640)).astype(np.float32)
    img[7, 9] = np.nan
    few = np.full(img.shape, 0.93, np.float32)
    few[:200, :300], few[300:, 400:], few[100:150, :], few[420:, :120] = 0.84, 0.95, 0.90, 0.88
    smooth = np.linspace(0.6, 1.0, img.size, dtype=np.float32).reshape(img.shape)
    for eps in (few, smooth):
        e_range = (float(eps.min()), float(eps.max()))
        assert rad._split_fit(0.97, 6.0, 1.0, (7.5, 14.0), -12.0, 28.0, *e_range) is not None
        out = rad.object_temperature(img, eps, 6.0, 0.97, 1.0)
        ref = rad._object_general(img.astype(float), eps.astype(float), 0.97, 6.0, 1.0,
                                  (7.5, 14.0), float)
        assert out.dtype == np.float32 and np.isnan(out[7, 9])
        assert np.nanmax(np.abs(out - ref)) < 3e-5
    # and against quad at a few pixels (independent of the module), to the inversion accuracy
    _agrees_with_quad(out, img, smooth, 0.97, 6.0, 1.0, [(5, 7), (250, 500), (470, 30)])


def test_emissivity_map_with_no_solution_in_range_falls_back():
    # Low emissivities before a warm reflected scene and cold readings: part of the range has
    # no solution, so the radiance path declines and the map is done element by element.
    rng = np.random.default_rng(19)
    img = rng.uniform(-40.0, 40.0, size=(400, 400)).astype(np.float32)
    eps = np.full(img.shape, 0.6, np.float32)
    eps[:, :150] = 0.7
    assert rad._split_fit(1.0, 30.0, 30.0, (7.5, 14.0), -40.0, 40.0, 0.6, 0.7) is None
    out = rad.object_temperature(img, eps, 30.0)
    ref = rad._object_general(img.astype(float), eps.astype(float), 1.0, 30.0, 30.0,
                              (7.5, 14.0), float)
    assert np.isnan(out[np.isnan(ref)]).all() and np.isnan(out).any()
    fair = ref > -60.0  # away from the NaN limit, where the tabulated path is interpolated
    assert np.max(np.abs(out[fair] - ref[fair])) < 3e-5


def test_impossible_radiance_is_nan():
    # A very cold reading in front of a warm reflected scene: the object term is negative.
    out = rad.object_temperature(np.array([-30.0, 15.0]), 0.6, 40.0)
    assert np.isnan(out[0]) and np.isfinite(out[1])


@pytest.mark.parametrize("eps, tau", [(0.0, 1.0), (1.2, 1.0), (0.9, 0.0), (0.9, 1.5)])
def test_bad_fractions_raise(eps, tau):
    with pytest.raises(ValueError):
        rad.object_temperature(10.0, eps, 20.0, tau)


def test_blackbody_reading_identity_and_round_trip():
    x = np.array([-10.0, 5.0, 22.0])
    # Export settings eps 1, tau 1: the camera exported the blackbody reading (identity).
    np.testing.assert_allclose(rad.blackbody_reading(x, 1.0, 20.0, 1.0), x, atol=1e-6)
    app = rad.blackbody_reading(x, 0.95, 18.0, 0.98, 3.0)
    np.testing.assert_allclose(rad.export_reading(app, 0.95, 18.0, 0.98, 3.0), x, atol=1e-4)
    # Sign check of the measurement equation: with eps < 1 the blackbody reading lies between
    # the object and the reflected (= path) temperature.
    app = rad.blackbody_reading(x, 0.9, 18.0, 0.98)
    assert np.all(np.sign(app - x) == np.sign(18.0 - x))


def test_transmittance_behaviour():
    d = np.array([0.0, 2.0, 10.0, 50.0, 200.0])
    tau = atmosphere.atmospheric_transmittance(d, 15.0, 0.7)
    assert tau[0] == pytest.approx(1.0)
    assert np.all(np.diff(tau) < 0)  # monotone in distance
    # Short path in dry air is essentially transparent (common practice: tau ~ 1 at a few m).
    assert atmosphere.atmospheric_transmittance(3.0, 10.0, 0.2) > 0.999
    wet = atmosphere.atmospheric_transmittance(30.0, 15.0, np.array([0.2, 0.5, 0.9]))
    assert np.all(np.diff(wet) < 0)  # monotone in humidity
    # Building distances (< 30 m): tau above 0.98 (common practice).
    assert atmosphere.atmospheric_transmittance(30.0, 25.0, 0.9) > 0.98
    assert atmosphere.atmospheric_transmittance(30.0, 25.0, 0.9, model="none") == 1.0
    with pytest.raises(ValueError, match="water-vapour-continuum"):
        atmosphere.atmospheric_transmittance(10.0, 10.0, 0.5, model="nope")
    with pytest.warns(EnvelopeWarning):
        atmosphere.atmospheric_transmittance(10.0, 10.0, 0.5, band_um=(3.0, 5.0))


def test_transmittance_vapour_density_matches_coolprop():
    # The vapour density inside the model uses Magnus (ISO 13788, the project's
    # condensation.saturation_vapour_pressure, imported by radiometry); CoolProp's saturation
    # pressure of water at 20 °C is 2339 Pa (IAPWS-95); Magnus agrees within 0.5 %.
    from CoolProp.CoolProp import PropsSI

    p_ref = PropsSI("P", "T", 293.15, "Q", 0, "Water")
    assert atmosphere.saturation_vapour_pressure(20.0) == pytest.approx(p_ref, rel=5e-3)


def test_materials_table():
    assert len(materials.MATERIALS) >= 15
    for key, mat in materials.MATERIALS.items():
        assert key == mat.name == key.lower() and " " not in key
        assert mat.source.strip()
        assert 0.0 < mat.emissivity <= 1.0
    # Incropera Table A.11 (from memory): water 0.96; bright aluminium foil is low (< 0.1).
    assert materials.emissivity_for("water") == pytest.approx(0.96)
    assert materials.emissivity_for("Foil-Faced-Insulation") < 0.1
    with pytest.raises(SurveyError, match="unobtainium.*brick"):
        materials.emissivity_for("unobtainium")
