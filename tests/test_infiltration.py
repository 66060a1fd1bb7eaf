"""Tests of envelope.infiltration and of the leaks' air in find_defects.

References beside each value:
- EN ISO 9972:2015 §3: n50 = V̇50 / V, q50 = V̇50 / A_E; the power law V̇ = C Δp^n.
- Sherman (1987), Energy and Buildings 10, 81: n = n50 / N, N = C × height × shielding
  (height 1.0 / 0.9 / 0.8 / 0.7 for 1 / 1.5 / 2 / 3 storeys; shielding 1.2 / 1.0 / 0.9;
  the "n50 / 20" rule; from memory).
- EN 12831:2003 §7.2.2 and Annex D: n = n50 e ε (from memory).
- ISO 13789:2017 §9: H_V = ρ_a c_a V̇ with ρ_a c_a = 1200 J/(m³ K) (from memory).
Every expected number is worked by hand in the comment beside it.
"""

from __future__ import annotations

import numpy as np
import pytest

from envelope.defects import DepressurisedPair, find_defects
from envelope.infiltration import (
    LOWER_BOUND_NOTE,
    Airtightness,
    infiltration_heat_loss,
    leak_shares,
    leakage_flow_at,
    n50_from_q50,
    natural_air_change_rate,
    view_share,
)
from tests.test_defects import HDD, PX_M, T_AE, T_AI, H, W, _hit, scene


def test_n50_from_q50_by_definition():
    # EN ISO 9972 §3: n50 = q50 A_E / V = 5 * 360 / 300 = 6 /h
    assert n50_from_q50(5.0, 360.0, 300.0) == pytest.approx(6.0)
    at = Airtightness(300.0, q50_m3_h_m2=5.0, envelope_area_m2=360.0)
    assert at.n50 == pytest.approx(6.0)


@pytest.mark.parametrize(("storeys", "shielding", "n_factor"), [
    (1, "normal", 20.0),  # C 20 x 1.0 x 1.0
    (1.5, "normal", 18.0),  # x 0.9
    (2, "normal", 16.0),  # x 0.8
    (3, "normal", 14.0),  # x 0.7
    (2, "well-shielded", 19.2),  # 20 x 0.8 x 1.2
    (2, "exposed", 14.4),  # 20 x 0.8 x 0.9
])
def test_sherman_lbl_correlation_factor(storeys, shielding, n_factor):
    at = Airtightness(300.0, n50_per_h=8.0, storeys=storeys, shielding=shielding)
    n, how = natural_air_change_rate(at)
    assert n == pytest.approx(8.0 / n_factor, rel=1e-12)
    assert "Sherman (1987)" in how


def test_blower_door_to_heat_loss_by_hand():
    # n50 = 8 /h, V = 300 m³, 2 storeys, normal shielding, C = 20: N = 16, n = 0.5 /h,
    # V̇ = 150 m³/h, H = 1200 * 150 / 3600 = 50 W/K; over 2500 K day: 50 * 2500 * 24 / 1000
    # = 3000 kWh.
    at = Airtightness(300.0, n50_per_h=8.0, storeys=2)
    h, _ = infiltration_heat_loss(at)
    assert h == pytest.approx(50.0, rel=1e-12)
    assert h * 2500.0 * 24.0 / 1000.0 == pytest.approx(3000.0)
    # EN 12831 whole building: n = 8 * 0.02 * 1.0 = 0.16 /h; H = 1200 * 0.16 * 300 / 3600 = 16
    h12831, how = infiltration_heat_loss(Airtightness(300.0, n50_per_h=8.0, storeys=2,
                                                      model="en12831"))
    assert h12831 == pytest.approx(16.0, rel=1e-12) and "EN 12831" in how


def test_leakage_flow_follows_the_power_law():
    at = Airtightness(300.0, n50_per_h=8.0)
    assert leakage_flow_at(at, 50.0) == pytest.approx(2400.0)  # n50 V
    # (25/50)^0.65 = 0.63728; 2400 * 0.63728 = 1529.5 m³/h
    assert leakage_flow_at(at, 25.0) == pytest.approx(1529.5, abs=0.1)


def test_view_share_and_leak_shares():
    # leakage spread by envelope area: 9 m² of 360 m² carries 50 * 9 / 360 = 1.25 W/K
    h, how = view_share(50.0, 9.0, 360.0)
    assert h == pytest.approx(1.25) and "2.5 %" in how
    h, how = view_share(50.0, None, None)
    assert h == 50.0 and "upper bound" in how
    # in proportion to the signal: 1 : 3 -> 25 % and 75 %; no signal -> equal
    np.testing.assert_allclose(leak_shares(2.0, [1.0, 3.0]), [0.5, 1.5])
    np.testing.assert_allclose(leak_shares(2.0, [0.0, 0.0]), [1.0, 1.0])
    assert leak_shares(2.0, []).size == 0


def test_bad_blower_door_input():
    with pytest.raises(ValueError, match="exactly one"):
        Airtightness(300.0)
    with pytest.raises(ValueError, match="exactly one"):
        Airtightness(300.0, n50_per_h=5.0, q50_m3_h_m2=4.0, envelope_area_m2=300.0)
    with pytest.raises(ValueError, match="envelope_area_m2"):
        Airtightness(300.0, q50_m3_h_m2=4.0)
    with pytest.raises(ValueError, match="shielding"):
        Airtightness(300.0, n50_per_h=5.0, shielding="sheltered")
    with pytest.raises(ValueError, match="unknown infiltration model"):
        Airtightness(300.0, n50_per_h=5.0, model="guess")
    with pytest.raises(ValueError, match="volume_m3"):
        Airtightness(-1.0, n50_per_h=5.0)
    with pytest.raises(ValueError, match="flow_exponent"):
        Airtightness(300.0, n50_per_h=5.0, flow_exponent=1.5)


@pytest.fixture(scope="module")
def leak_scene():
    (t, f, q), (t_dep, _, _), regions = scene(seed=1)
    return t, f, q, t_dep, regions


def _leak(found):
    return _hit(found, slice(90, 150), slice(90, 125))[0]


def test_leak_energy_with_a_blower_door_result(leak_scene):
    t, f, q, t_dep, regions = leak_scene
    area = np.full((H, W), PX_M**2)
    at = Airtightness(300.0, n50_per_h=8.0, storeys=2, envelope_area_m2=360.0)
    h_inf, _ = infiltration_heat_loss(at)  # 50 W/K (hand calculation above)
    h_view, _ = view_share(h_inf, 9.0, at.envelope_area_m2)  # 1.25 W/K
    found = find_defects(t, f, q, area, regions, "interior", T_AI - T_AE, HDD,
                         pair=DepressurisedPair(t_dep, 50.0), leak_air_w_k=h_view)
    d = _leak(found)
    assert d.defect_class == "air leakage" and not d.energy_lower_bound
    # the only leak in view takes the whole 1.25 W/K; its surface excess is smaller, so
    # h = 1.25 W/K and 1.25 * 2500 K day * 24 / 1000 = 75 kWh/yr (hand calculation)
    assert d.extra_w / (T_AI - T_AE) < 1.25
    assert d.air_h_w_k == pytest.approx(1.25) and d.h_w_k == pytest.approx(1.25)
    assert d.annual_kwh == pytest.approx(75.0, rel=1e-9)
    assert d.annual_kwh_air == pytest.approx(75.0, rel=1e-9)
    # without the blower-door result: the surface excess only, flagged as a lower bound
    lb = _leak(find_defects(t, f, q, area, regions, "interior", T_AI - T_AE, HDD,
                            pair=DepressurisedPair(t_dep, 50.0)))
    assert lb.energy_lower_bound and LOWER_BOUND_NOTE in lb.notes
    assert lb.annual_kwh == pytest.approx(lb.extra_w / (T_AI - T_AE) * HDD * 24 / 1000)
    assert lb.annual_kwh < d.annual_kwh
    # the same from the blower-door result itself: flows by hand, 1.25 W/K of air is
    # 1.25 * 3600 / 1200 = 3.75 m³/h under natural conditions; at the pair's 50 Pa the
    # building passes n50 V = 2400 m³/h, of which the leak's share 1.25 / 50: 60 m³/h
    d2 = _leak(find_defects(t, f, q, area, regions, "interior", T_AI - T_AE, HDD,
                            pair=DepressurisedPair(t_dep, 50.0), airtightness=at,
                            viewed_area_m2=9.0))
    assert d2.annual_kwh == pytest.approx(75.0, rel=1e-9)
    assert d2.leak_flow_natural_m3_h == pytest.approx(3.75, rel=1e-9)
    assert d2.leak_flow_test_m3_h == pytest.approx(60.0, rel=1e-9)
    assert any("Sherman (1987)" in n for n in d2.notes)
    with pytest.raises(ValueError, match="not both"):
        find_defects(t, f, q, area, regions, "interior", T_AI - T_AE, HDD,
                     pair=DepressurisedPair(t_dep, 50.0), airtightness=at, leak_air_w_k=1.0)
    # other defects are untouched by the leak's air
    others = [x for x in found if x.defect_class != "air leakage"]
    assert all(not x.energy_lower_bound and x.air_h_w_k is None for x in others)
