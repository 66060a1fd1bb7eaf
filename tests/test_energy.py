"""Tests of envelope.energy: heat loss, ISO 6946 layers, retrofit measures, builder verdict.

Check values are hand-worked from the defining equations (written out beside each check) or
taken from the named outside source.
"""

from __future__ import annotations

import math

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from envelope.energy import (
    DEFAULT_LEAK_FRACTION_REMOVED,
    DefectLoss,
    EnergyPrices,
    Measure,
    annual_heat_loss_kwh,
    apply_measures,
    builder_verdict,
    defect_loss_from_result,
    evaluate_measures,
    heat_loss_coefficient,
    heat_loss_w,
    insulation_coverage,
    layer_added_u,
    layers_u,
    measures_from_config,
    package_result,
)
from envelope.errors import SurveyError

# ---- a hand-worked two-element house ---------------------------------------------------
# wall:   U = 0.35 W/m2K (u = 0.03), A = 40 m2  -> U A = 14.0 W/K, (A u)^2 = 1.2^2 = 1.44
# window: U = 1.40 W/m2K (u = 0),    A =  8 m2  -> U A = 11.2 W/K
# linear bridge: psi = 0.10 W/mK (u = 0.02), L = 10 m -> 1.0 W/K, (L u)^2 = 0.2^2 = 0.04
# point bridge:  chi = 0.50 W/K (u = 0.10)           -> 0.5 W/K, u^2 = 0.01
# H = 14.0 + 11.2 + 1.0 + 0.5 = 26.7 W/K;  u(H) = sqrt(1.44 + 0.04 + 0.01) = sqrt(1.49)
ELEMENTS = [("wall", 0.35, 0.03, 40.0), ("window", 1.40, 0.0, 8.0)]
BRIDGES = [("B1", 0.10, 0.02, 10.0), ("P1", 0.50, 0.10)]


def test_heat_loss_coefficient_hand_worked():
    hl = heat_loss_coefficient(ELEMENTS, BRIDGES)
    # definitions: H = sum U A + sum psi L + sum chi (ISO 13789 H_T; SPEC §3)
    assert hl.h_w_k == pytest.approx(26.7, rel=1e-12)
    assert hl.h_elements_w_k == pytest.approx(25.2, rel=1e-12)
    assert hl.h_defects_w_k == pytest.approx(1.5, rel=1e-12)
    assert dict(hl.by_element) == pytest.approx({"wall": 14.0, "window": 11.2})
    # JCGM 100 Eq. (10), independent inputs, areas and lengths exact
    assert hl.h_std_w_k == pytest.approx(math.sqrt(1.49), rel=1e-12)
    assert hl.to_dict()["by_element"][0] == {"name": "wall", "h_w_k": pytest.approx(14.0)}


def test_heat_flow_and_annual_loss_hand_worked():
    # Q = H dT = 26.7 W/K * (20 - (-3)) K = 614.1 W
    assert heat_loss_w(26.7, 20.0, -3.0) == pytest.approx(614.1, rel=1e-12)
    # degree-day method (CIBSE TM41): Q = H * HDD * 24 h / 1000 = 26.7 * 2200 * 0.024
    #   = 26.7 * 52.8 = 1409.76 kWh/yr
    assert annual_heat_loss_kwh(26.7, 2200.0) == pytest.approx(1409.76, rel=1e-12)
    # vectorised over HDD
    np.testing.assert_allclose(annual_heat_loss_kwh(10.0, np.array([1000.0, 2000.0])),
                               [240.0, 480.0])


def test_bad_element_rejected():
    with pytest.raises(ValueError, match="wall"):
        heat_loss_coefficient([("wall", -0.3, 0.0, 10.0)])
    with pytest.raises(ValueError, match="expected"):
        heat_loss_coefficient([], [("X", 1.0)])


# ---- ISO 6946 series resistances --------------------------------------------------------


def test_layer_added_u_hand_worked():
    # ISO 6946:2017 6.7.1: R_T = R_si + sum d/lambda + R_se; adding a layer adds d/lambda.
    # U = 1.5, 0.1 m at 0.035 W/mK: 1/(1/1.5 + 0.1/0.035) = 1/(0.6667 + 2.8571) = 0.28378
    assert layer_added_u(1.5, 0.1, 0.035) == pytest.approx(0.283783783, rel=1e-8)
    # zero thickness changes nothing
    assert layer_added_u(0.8, 0.0, 0.04) == pytest.approx(0.8)
    with pytest.raises(ValueError):
        layer_added_u(1.0, 0.1, 0.0)


def test_layers_u_solid_brick():
    # 215 mm solid brick (lambda 0.77) + 13 mm dense plaster (0.57), R_si 0.13, R_se 0.04
    # (ISO 6946:2017 Table 7, horizontal flow): R = 0.13 + 0.2792 + 0.0228 + 0.04 = 0.4720
    # -> U = 2.119 W/m2K. Outside cross-check: RdSAP tables give 2.1 W/m2K for an
    # uninsulated solid brick wall (from memory); tolerance 0.05 for the table's rounding.
    u = layers_u([(0.215, 0.77), (0.013, 0.57)])
    assert u == pytest.approx(1.0 / (0.13 + 0.215 / 0.77 + 0.013 / 0.57 + 0.04), rel=1e-12)
    assert u == pytest.approx(2.1, abs=0.05)
    # a tabulated resistance (unventilated 25 mm air layer ~0.18 m2K/W, ISO 6946 Table 8,
    # from memory) enters as a plain float
    assert layers_u([0.18], r_si=0.13, r_se=0.04) == pytest.approx(1 / 0.35)


@settings(max_examples=40, deadline=None)
@given(st.lists(st.tuples(st.floats(0.001, 0.5), st.floats(0.02, 2.0)), min_size=1,
                max_size=4),
       st.floats(0.0, 0.3), st.floats(0.02, 0.2))
def test_layer_added_matches_full_calculation(layers, d, lam):
    # round trip: adding a layer to the U of a stack equals the U of the longer stack
    u0 = layers_u(layers)
    assert layer_added_u(u0, d, lam) == pytest.approx(layers_u([*layers, (d, lam)]),
                                                      rel=1e-10)


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
    assert r.kwh_saved_per_year == pytest.approx(3021.9396, rel=1e-6)
    # money: 3021.940 * 0.25 = 755.485; CO2: 3021.940 * 0.20 = 604.388 kg
    assert r.money_per_year == pytest.approx(755.4849, rel=1e-6)
    assert r.co2_kg_per_year == pytest.approx(604.3879, rel=1e-6)
    # simple payback: 12000 / 755.485 = 15.884 years
    assert r.payback_years == pytest.approx(15.883838, rel=1e-6)
    # low end of the range: U at 1.5 - 1.96 * 0.1 = 1.304004 ->
    #   dH = 40 * (1.304004 - 1/(1/1.304004 + 2.857143)) = 41.1227 W/K
    assert r.kwh_saved_low == pytest.approx(41.122653 * 52.8 / 0.85, rel=1e-6)
    assert r.kwh_saved_low < r.kwh_saved_per_year < r.kwh_saved_high
    assert r.ranges["money"][0] == pytest.approx(r.kwh_saved_low * 0.25)


def test_no_saving_has_no_payback():
    worse = Measure("worse glazing", "replace_glazing", elements=("wall",), new_u_w_m2k=2.0,
                    cost=100.0)
    (r,) = evaluate_measures([worse], WALL, [], PRICES, 2200.0)
    assert r.kwh_saved_per_year < 0 and r.payback_years is None


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
    with pytest.raises(SurveyError) as err:
        evaluate_measures([Measure("x", "add_layer", elements=("roof",), thickness_m=0.1,
                                   conductivity_w_mk=0.04)], WALL, [], PRICES, 2200.0)
    assert err.value.field == "measures[0].elements"
    with pytest.raises(SurveyError):
        measures_from_config([{"name": "x", "kind": "add_layer", "colour": "red"}])
    (m,) = measures_from_config([{"name": "x", "kind": "seal_leak", "defects": "L1"}])
    assert m.defects == ("L1",)


def test_defect_loss_from_result():
    # linear: psi L = 0.25 * 4 = 1.0 W/K; leak: extra W / survey dT = 30 W / 15 K = 2 W/K
    lin = defect_loss_from_result({"id": "D1", "class": "linear_bridge", "psi_w_mk": 0.25,
                                   "length_m": 4.0, "extra_w": 15.0, "extra_w_std": 3.0}, 15.0)
    assert lin.h_w_k == pytest.approx(1.0) and lin.h_std_w_k == pytest.approx(0.2)
    leak = defect_loss_from_result({"id": "D2", "class": "air_leakage", "psi_w_mk": None,
                                    "extra_w": 30.0, "extra_w_std": None}, 15.0)
    assert leak.h_w_k == pytest.approx(2.0) and leak.kind == "leak"


# ---- builder's verdict --------------------------------------------------------------------


def test_verdict_boundaries():
    spec, tol = 0.30, 0.02
    limit = spec + tol
    # exactly at spec + tol: the whole interval is <= the limit -> pass (documented)
    assert builder_verdict(0.25, limit, spec, tol)[0] == "pass"
    # lower end exactly at the limit: not wholly above -> inconclusive (documented)
    assert builder_verdict(limit, 0.40, spec, tol)[0] == "inconclusive"
    # straddling: inconclusive, and the reason says what would resolve it
    verdict, reason = builder_verdict(0.25, 0.40, spec, tol)
    assert verdict == "inconclusive"
    assert "contact-probe" in reason and "temperature difference" in reason
    assert "time series" in reason
    # wholly above: fail
    assert builder_verdict(0.33, 0.40, spec, tol)[0] == "fail"


def test_failed_check_downgrades_pass():
    verdict, reason = builder_verdict(0.20, 0.25, 0.30, checks_ok=False)
    assert verdict == "inconclusive" and "validity check failed" in reason
    # a fail stays a fail, with the caveat in its reason
    verdict, reason = builder_verdict(0.40, 0.50, 0.30, checks_ok=False)
    assert verdict == "fail" and "validity check failed" in reason
    assert builder_verdict(float("nan"), 0.3, 0.3)[0] == "inconclusive"
    with pytest.raises(ValueError):
        builder_verdict(0.4, 0.3, 0.3)


def test_insulation_coverage_text():
    assert insulation_coverage(0.934) == "93 % of the net area looks properly insulated"
    assert insulation_coverage(None) == "coverage not measured"
    with pytest.raises(ValueError):
        insulation_coverage(1.2)
