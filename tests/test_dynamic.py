"""Tests of envelope.dynamic against an independent 1-D finite-volume wall model.

The reference here is a Crank-Nicolson finite-volume solution of transient conduction
through layered walls (`tests/conduction1d.py`, not the project's forward model), whose steady
state is the series-resistance U of ISO 6946 (U = 1 / (Rsi + sum d/lambda + Rse)), known
exactly. Material data are typical handbook values (CIBSE Guide A Table 3.x, from memory);
their exact values do not matter, only that the answer is known for them.
"""

import numpy as np
import pytest

from envelope import dynamic, validity
from envelope import transmittance as tr
from tests.conduction1d import wall_fd

# (thickness m, conductivity W/mK, density kg/m3, specific heat J/kgK), inside -> outside
INSULATED = [(0.013, 0.57, 1300, 1000), (0.05, 0.035, 30, 1030), (0.2, 1.35, 2300, 880)]
SOLID_BRICK = [(0.013, 0.57, 1300, 1000), (0.215, 0.77, 1700, 800)]
SANDWICH = [(0.1, 0.77, 1700, 800), (0.1, 0.035, 30, 1030), (0.1, 0.77, 1700, 800)]


def _t_ai(t):
    return 20.0 + 0.5 * np.sin(2 * np.pi * np.asarray(t) / 24 + 1)


def _t_ae(t):
    t = np.asarray(t)
    return 5 + 4 * np.sin(2 * np.pi * t / 24) - 2 * t / 24 + 1.5 * np.sin(2 * np.pi * t / 37)


@pytest.mark.parametrize("layers", [INSULATED, SOLID_BRICK, SANDWICH])
def test_dynamic_method_recovers_u_where_the_average_method_drifts(layers):
    # Three days of hourly data, outdoor air falling 2 K a day with a daily swing and a
    # 37 h wave: the average method (ISO 9869-1 §7.2) is off by 5-8 %; the dynamic method
    # (Annex B) recovers the exact U within 2 % (the FD model's own error is < 0.1 %).
    times, q, _, u = wall_fd(layers, _t_ai, _t_ae, 72.0)
    th, qh = times[::30], q[::30]
    avg = tr.average_method(th, qh, _t_ai(th), _t_ae(th))
    dyn = dynamic.dynamic_method(th, qh, _t_ai(th), _t_ae(th))
    assert abs(avg.u_w_m2k / u - 1) > 0.04
    assert dyn.u_w_m2k == pytest.approx(u, rel=0.02)
    assert dyn.n_equations == 36 and len(dyn.tau_h) == 2
    assert dyn.checks[0].name == "dynamic_interval" and "from memory" in dyn.checks[0].rule
    assert "not ISO 9869-1" in dyn.checks[1].rule


def test_dynamic_method_steady_state_is_exact():
    # Constant temperatures: every rate vanishes and q = U dT exactly.
    t = np.arange(48.0)
    res = dynamic.dynamic_method(t, np.full(48, 0.4 * 19.0), 20.0, 1.0)
    assert res.u_w_m2k == pytest.approx(0.4, rel=1e-9)
    with pytest.raises(ValueError, match="evenly"):
        dynamic.dynamic_method([0, 1, 3, 4, 5, 6, 7, 8], np.ones(8), 20.0, 1.0)
    with pytest.raises(ValueError, match="n_tau"):
        dynamic.dynamic_method(t, np.ones(48), 20.0, 1.0, n_tau=4)


@pytest.mark.parametrize("layers", [INSULATED, SOLID_BRICK, SANDWICH])
def test_response_time_is_the_mean_delay_of_the_fd_step_response(layers):
    # The interior flux after a 1 K step of the outdoor air: its mean delay
    # int (1 - dq/dq_inf) dt from the FD model equals B_1 / R_tot of the first-order
    # transmission matrices (ISO 13786 form), within the FD discretisation (1 %).
    times, q, _, _ = wall_fd(layers, lambda t: 20.0, lambda t: 0.0 if t <= 0 else -1.0, 200.0,
                          dt_s=300.0)
    frac = (q - q[0]) / (q[-1] - q[0])
    delay = np.trapezoid(1 - frac, times)
    tau = dynamic.response_time_h([dynamic.Layer(*lay) for lay in layers])
    assert tau == pytest.approx(delay, rel=0.01)


def test_response_time_closed_form_and_fallback():
    # One homogeneous layer without films: RC/6 (first moment of the slab's response).
    r, c = 0.2 / 0.8, 2000 * 900 * 0.2
    tau = dynamic.response_time_h([dynamic.Layer(0.2, 0.8, 2000, 900)], r_si=0.0, r_se=0.0)
    assert tau == pytest.approx(r * c / 6 / 3600, rel=1e-12)
    # from U and areal heat capacity: the same single layer
    u = 1.0 / (0.13 + r + 0.04)
    assert dynamic.response_time_h(u_w_m2k=u, heat_capacity_kj_m2k=c / 1e3) == pytest.approx(
        dynamic.response_time_h([dynamic.Layer(0.2, 0.8, 2000, 900)]), rel=1e-12)
    with pytest.raises(ValueError, match="layers"):
        dynamic.response_time_h()


def test_lagged_temperature_exact_for_a_ramp():
    # y' = (x - y)/tau, x = a t from steady 0: y = a (t - tau (1 - e^(-t/tau))) (by hand).
    t = np.linspace(0.0, 10.0, 11)
    y = dynamic.lagged_temperature(t, -0.5 * t, 3.0)
    np.testing.assert_allclose(y, -0.5 * (t - 3.0 * (1 - np.exp(-t / 3.0))), atol=1e-12)
    with pytest.raises(ValueError, match="tau_h"):
        dynamic.lagged_temperature(t, t, 0.0)


@pytest.mark.parametrize("layers", [INSULATED, SOLID_BRICK, SANDWICH])
def test_lag_correction_after_a_night_fall(layers):
    # Outdoor air falls 2 K over 4 h (the demo's night); 6 h in, a steady U referred to the
    # current outdoor air is 7-9 % low; referred to the lagged outdoor air (tau from the
    # layers) it is within 2.5 %, and the storage check flags the steady one.
    def t_ae(t):
        return 3.0 - 2.0 * min(max(t, 0.0), 4.0) / 4.0

    times, q, _, u = wall_fd(layers, lambda t: 21.0, t_ae, 6.0, dt_s=60.0)
    th = np.arange(0.0, 6.01, 0.5)
    te = np.array([t_ae(x) for x in th])
    tau = dynamic.response_time_h([dynamic.Layer(*lay) for lay in layers])
    lag = dynamic.lagged_temperature(th, te, tau)
    steady, corrected = q[-1] / (21.0 - te[-1]), q[-1] / (21.0 - lag[-1])
    assert steady / u - 1 < -0.06
    assert corrected == pytest.approx(u, rel=0.025)
    chk = validity.check_storage(21.0, te[-1], lag[-1], history_span_h=6.0, tau_h=tau)
    assert chk.status == "warn" and chk.value > 0.05
