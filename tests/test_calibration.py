"""Tests of envelope.calibration: probe offset, tape emissivity, heat-flux-meter spot."""

import math

import pytest

from envelope import calibration as cal
from envelope import radiometry


def test_probe_offset_round_trip():
    # Round trip through the measurement equation: a camera reading 0.8 K warm at a spot of
    # known temperature gives an offset of 0.8 K (to the inversion's 1e-4 K).
    a = radiometry.apparent_temperature(18.7, 0.93, 19.6, 0.98, 21.0) + 0.8
    assert cal.probe_offset(a, 18.7, 0.93, 19.6, 0.98, 21.0) == pytest.approx(0.8, abs=1e-4)


def test_offset_with_a_reflector_read_by_the_same_camera():
    # True scene: surface 18.7 °C, surroundings 19.6 °C; the camera reads 1.5 K warm on every
    # reading, so the reflector reads 21.1 and the probe spot reads A(18.7) + 1.5. The fixed
    # point recovers both the offset and the reflected temperature (to 1e-3 K).
    true_refl, off = 19.6, 1.5
    probe = cal.ProbeSpot(radiometry.apparent_temperature(18.7, 0.93, true_refl) + off, 18.7,
                          0.1, 0.93)
    offset, std, refl = cal.camera_offset_from_probes([probe], true_refl + off,
                                                      reflected_by_camera=True,
                                                      relative_accuracy_k=0.2, noise_k=0.05)
    assert offset == pytest.approx(off, abs=1e-3)
    assert refl == pytest.approx(true_refl, abs=1e-3)
    # GUM sum of the probe (0.1), relative accuracy (0.2/sqrt 3) and 3x3 noise (0.05/3)
    assert std == pytest.approx(math.sqrt(0.1**2 + 0.2**2 / 3 + (0.05 / 3) ** 2), rel=1e-12)
    with pytest.raises(ValueError, match="at least one"):
        cal.camera_offset_from_probes([], 19.6)


def test_combine_emissivity_by_hand():
    # Inverse variance: 0.93 ± 0.02 and 0.90 ± 0.02 -> 0.915 ± 0.02/sqrt(2), weight 0.5.
    value, std, w = cal.combine_emissivity(0.93, 0.02, 0.90, 0.02)
    assert value == pytest.approx(0.915)
    assert std == pytest.approx(0.02 / math.sqrt(2))
    assert w == pytest.approx(0.5)


def test_tape_accepted_on_a_cold_exterior_and_recovers_emissivity():
    # Exterior wall at 2 °C facing a -10 °C sky/ground mix, true emissivity 0.85, declared
    # 0.90 ± 0.05: the tape (0.95 ± 0.01) at 12 K contrast is accepted and pulls the
    # emissivity to the truth within its own uncertainty.
    t_s, t_r = 2.0, -10.0
    tape = cal.TapeSpot(radiometry.apparent_temperature(t_s, 0.95, t_r),
                        radiometry.apparent_temperature(t_s, 0.85, t_r), 0.95, 0.01)
    res = cal.tape_emissivity(tape, t_r, 0.90, 0.05, reflected_std_k=0.5,
                              relative_accuracy_k=0.1)
    assert res.accepted and res.weight > 0.8
    assert res.tape_emissivity == pytest.approx(0.85, abs=1e-3)
    assert abs(res.emissivity - 0.85) < 2 * res.emissivity_std
    assert res.emissivity_std < 0.05 and "combined" in res.note
    assert res.contrast_k == pytest.approx(12.0, abs=0.01)


def test_tape_refused_below_the_contrast_threshold():
    # The demo kitchen case: surface 18.7 °C, reflected 19.6 ± 0.5 °C: 0.9 K of contrast,
    # far below TAPE_CONTRAST_RATIO x 0.5 K; the tape's emissivity has sd ~0.2 (issue 14).
    tape = cal.TapeSpot(radiometry.apparent_temperature(18.7, 0.95, 19.6),
                        radiometry.apparent_temperature(18.7, 0.93, 19.6))
    res = cal.tape_emissivity(tape, 19.6, 0.93, 0.02, reflected_std_k=0.5)
    assert not res.accepted and res.weight == 0.0
    assert (res.emissivity, res.emissivity_std) == (0.93, 0.02)
    assert "refused" in res.note and res.tape_emissivity_std > 0.1
    # the same readings with a same-camera reflector known to 0.05 K: contrast 0.9 K is
    # still below 10 x its (now smaller) uncertainty -> refused, for the right reason
    res2 = cal.tape_emissivity(tape, 19.6, 0.93, 0.02, reflected_std_k=0.05,
                               reflected_by_camera=True, offset_std_k=1.0)
    assert not res2.accepted and res2.contrast_std_k < 0.2


def test_flux_spot():
    # h_tot = q / (T_ai - T_si): 15.4 / 2 = 7.7 W/m2K (ISO 6946 1/Rsi for a wall, by hand).
    assert cal.total_coefficient_from_flux(15.4, 21.0, 19.0) == pytest.approx(7.7)
    with pytest.raises(ValueError, match="apparent_c or surface_c"):
        cal.FluxSpot(10.0, 0.5)
