"""Tests of envelope.retrofit: measures on their own and as a package (hand-worked)."""

from __future__ import annotations

import pytest

from envelope.energy import DefectLoss
from envelope.retrofit import (
    DEFAULT_LEAK_FRACTION_REMOVED,
    EnergyPrices,
    Measure,
    apply_measures,
    evaluate_measures,
    package_result,
)

# ---- retrofit ---------------------------------------------------------------------------
# wall U = 1.5 (u = 0.1), A = 40 m2; HDD 2200 K day; boiler efficiency 0.85;
# price 0.25 per kWh; CO2 0.20 kg/kWh; external insulation 0.1 m at 0.035 W/mK, cost 12000.
WALL = [("wall", 1.5, 0.1, 40.0)]
PRICES = EnergyPrices(price_per_kwh=0.25, heating_efficiency=0.85, co2_kg_per_kwh=0.20,
                      currency="EUR")
EWI = Measure("external insulation", "add_layer", elements=("wall",), thickness_m=0.1,
              conductivity_w_mk=0.035, cost=12000.0)


def test_measure_payback_and_co2_hand_worked():
    (r,) = evaluate_measures([EWI], WALL, [], PRICES, 2200.0)
    # U' = 0.283784; dH = 40 * (1.5 - 0.283784) = 48.6486 W/K
    assert r.h_saved_w_k == pytest.approx(48.648649, rel=1e-6)
    # fabric: 48.6486 * 2200 * 24 / 1000 = 2568.649 kWh; delivered: / 0.85 = 3021.940 kWh
    assert r.annual_kwh_saved == pytest.approx(3021.9396, rel=1e-6)
    # money: 3021.940 * 0.25 = 755.485; CO2: 3021.940 * 0.20 = 604.388 kg
    assert r.annual_money_saved == pytest.approx(755.4849, rel=1e-6)
    assert r.annual_co2_saved_kg == pytest.approx(604.3879, rel=1e-6)
    # simple payback: 12000 / 755.485 = 15.884 years
    assert r.payback_years == pytest.approx(15.883838, rel=1e-6)
    # low end of the range: U at 1.5 - 1.96 * 0.1 = 1.304004 ->
    #   dH = 40 * (1.304004 - 1/(1/1.304004 + 2.857143)) = 41.1227 W/K
    assert r.annual_kwh_saved_low95 == pytest.approx(41.122653 * 52.8 / 0.85, rel=1e-6)
    assert r.annual_kwh_saved_low95 < r.annual_kwh_saved < r.annual_kwh_saved_high95
    assert r.annual_money_saved_low95 == pytest.approx(r.annual_kwh_saved_low95 * 0.25)
    assert r.annual_co2_saved_kg_high95 == pytest.approx(r.annual_kwh_saved_high95 * 0.20)


def test_no_saving_has_no_payback():
    worse = Measure("worse glazing", "replace_glazing", elements=("wall",), new_u_w_m2k=2.0,
                    cost=100.0)
    (r,) = evaluate_measures([worse], WALL, [], PRICES, 2200.0)
    assert r.annual_kwh_saved < 0 and r.payback_years is None


def test_package_no_double_counting_two_layers_on_one_wall():
    thin = Measure("internal lining", "add_layer", elements=("wall",), thickness_m=0.05,
                   conductivity_w_mk=0.035, cost=3000.0)
    singles = evaluate_measures([EWI, thin], WALL, [], PRICES, 2200.0)
    pkg = package_result([EWI, thin], WALL, [], PRICES, 2200.0)
    # alone: 48.6486 and 40 * (1.5 - 1/(0.6667 + 1.4286)) = 40.9091 W/K; sum 89.56 W/K
    assert singles[1].h_saved_w_k == pytest.approx(40.909091, rel=1e-6)
    # together: R adds in series, U'' = 1/(0.6667 + 2.8571 + 1.4286) = 0.201923
    #   dH = 40 * (1.5 - 0.201923) = 51.9231 W/K  (not 89.56: no double counting)
    assert pkg.h_saved_w_k == pytest.approx(51.923077, rel=1e-6)
    assert pkg.h_saved_w_k < sum(s.h_saved_w_k for s in singles)
    assert pkg.cost == 15000.0 and pkg.name == "all measures together"
    assert pkg.h_after_w_k == pytest.approx(40 * 0.201923077, rel=1e-6)


def test_seal_leak_default_fraction_and_overlap():
    leak = [DefectLoss("L1", 5.0, 1.0, "leak")]
    seal = Measure("seal loft hatch", "seal_leak", defects=("L1",), cost=150.0)
    assert seal.leak_fraction_removed == DEFAULT_LEAK_FRACTION_REMOVED == 0.8
    (r,) = evaluate_measures([seal], WALL, leak, PRICES, 2200.0)
    assert r.h_saved_w_k == pytest.approx(4.0)  # 0.8 * 5 W/K
    # sealing twice leaves 0.2 * 0.2 = 4 %: saving 4.8 W/K, not 8 W/K
    pkg = package_result([seal, seal], WALL, leak, PRICES, 2200.0)
    assert pkg.h_saved_w_k == pytest.approx(4.8)


def test_fix_bridge_with_new_psi_and_after_state():
    bridge = [DefectLoss("B1", 0.4 * 6.0, 0.1, "linear", length_m=6.0)]
    fix = Measure("insulate lintel", "fix_bridge", defects=("B1",), new_psi_w_mk=0.1,
                  cost=400.0)
    (r,) = evaluate_measures([fix], WALL, bridge, PRICES, 2200.0)
    assert r.h_saved_w_k == pytest.approx((0.4 - 0.1) * 6.0)  # (psi - psi') L = 1.8 W/K
    els, dfs = apply_measures([EWI, fix], WALL, bridge)
    assert els[0].u_w_m2k == pytest.approx(0.283784, rel=1e-5)
    # u(U') = u(U) (U'/U)^2: derivative of 1/(1/U + R)
    assert els[0].u_std_w_m2k == pytest.approx(0.1 * (0.283784 / 1.5) ** 2, rel=1e-4)
    assert dfs[0].h_w_k == pytest.approx(0.6)


def test_bad_measures_name_the_field():
    with pytest.raises(ValueError, match="add_layer"):
        evaluate_measures([Measure("x", "paint_it")], WALL, [], PRICES, 2200.0)
    with pytest.raises(ValueError, match=r"measures\[0\]\.elements"):
        evaluate_measures([Measure("x", "add_layer", elements=("roof",), thickness_m=0.1,
                                   conductivity_w_mk=0.04)], WALL, [], PRICES, 2200.0)


