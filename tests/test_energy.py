"""Tests of envelope.energy: heat loss coefficient, annual loss, ISO 6946 added layers.

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
    annual_heat_loss_kwh,
    defect_loss,
    heat_loss_coefficient,
    heat_loss_w,
    layer_added_u,
)


def _stack_u(layers, r_si=0.13, r_se=0.04):
    """U of homogeneous layers written out (ISO 6946:2017 6.7.1), for the checks below."""
    return 1.0 / (r_si + sum(d / lam for d, lam in layers) + r_se)

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


def test_layers_added_to_bare_surfaces_give_solid_brick():
    # 215 mm solid brick (lambda 0.77) + 13 mm dense plaster (0.57), R_si 0.13, R_se 0.04
    # (ISO 6946:2017 Table 7, horizontal flow): R = 0.13 + 0.2792 + 0.0228 + 0.04 = 0.4720
    # -> U = 2.119 W/m2K. Outside cross-check: RdSAP tables give 2.1 W/m2K for an
    # uninsulated solid brick wall (from memory); tolerance 0.05 for the table's rounding.
    u = layer_added_u(layer_added_u(1.0 / (0.13 + 0.04), 0.215, 0.77), 0.013, 0.57)
    assert u == pytest.approx(1.0 / (0.13 + 0.215 / 0.77 + 0.013 / 0.57 + 0.04), rel=1e-12)
    assert u == pytest.approx(2.1, abs=0.05)


@settings(max_examples=40, deadline=None)
@given(st.lists(st.tuples(st.floats(0.001, 0.5), st.floats(0.02, 2.0)), min_size=1,
                max_size=4),
       st.floats(0.0, 0.3), st.floats(0.02, 0.2))
def test_layer_added_matches_full_calculation(layers, d, lam):
    # round trip: adding a layer to the U of a stack equals the U of the longer stack
    u0 = _stack_u(layers)
    assert layer_added_u(u0, d, lam) == pytest.approx(_stack_u([*layers, (d, lam)]),
                                                      rel=1e-10)



def test_defect_loss():
    # linear: psi L = 0.25 * 4 = 1.0 W/K; leak: extra W / survey dT = 30 W / 15 K = 2 W/K
    lin = defect_loss("D1", "linear thermal bridge", 15.0, 3.0, 0.25, None, 4.0, "wall", 15.0)
    assert lin.h_w_k == pytest.approx(1.0) and lin.h_std_w_k == pytest.approx(0.2)
    leak = defect_loss("D2", "air leakage", 30.0, None, None, None, None, "wall", 15.0)
    assert leak.h_w_k == pytest.approx(2.0) and leak.kind == "leak"
