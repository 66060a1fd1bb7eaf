"""Tests of envelope.validity: thresholds at their boundaries, downgrade."""

import math

import pytest

from envelope import validity as v


@pytest.mark.parametrize(
    "t_i, t_e, status",
    # common practice: >= 10 K pass, 5-10 K warn, < 5 K fail
    [(20, 10, "pass"), (20, 10.01, "warn"), (20, 15, "warn"), (20, 15.01, "fail"), (0, 20, "pass")],
)
def test_delta_t_boundaries(t_i, t_e, status):
    c = v.check_delta_t(t_i, t_e)
    assert c.status == status
    assert c.unit == "K" and "common practice" in c.rule


@pytest.mark.parametrize(
    "hours, side, status",
    # common practice: 12 h without sun before an exterior survey, 8 h interior; half warns
    [
        (12, "exterior", "pass"),
        (11.9, "exterior", "warn"),
        (6, "exterior", "warn"),
        (5.9, "exterior", "fail"),
        (8, "interior", "pass"),
        (3.9, "interior", "fail"),
        (math.inf, "exterior", "pass"),
    ],
)
def test_sun_boundaries(hours, side, status):
    assert v.check_sun(hours, side).status == status


def test_sun_bad_side():
    with pytest.raises(ValueError, match="side"):
        v.check_sun(10, "roof")


@pytest.mark.parametrize(
    "wind, status",
    [(0, "pass"), (3, "pass"), (3.01, "warn"), (5, "warn"), (5.01, "fail"), (float("nan"), "fail")],
)
def test_wind_boundaries(wind, status):
    assert v.check_wind(wind).status == status


@pytest.mark.parametrize(
    "rain, hours, status",
    [
        (True, None, "fail"),
        (False, None, "pass"),
        (False, 6, "pass"),
        (False, 5.9, "warn"),
        (False, 2, "warn"),
        (False, 1.9, "fail"),
    ],
)
def test_rain_boundaries(rain, hours, status):
    assert v.check_rain(rain, hours).status == status


def test_drift_boundaries():
    assert v.check_drift([5, 6, 7, 8], 1.0).status == "pass"  # range 3 K over 3 h
    assert v.check_drift([5, 6, 7, 8.01], 1.0).status == "warn"
    assert v.check_drift([5, 10, 7, 8], 1.0).status == "warn"  # range 5 K
    assert v.check_drift([5, 10.01, 7, 8], 1.0).status == "fail"
    short = v.check_drift([5, 5.1], 1.0)  # stable but only 1 h of history
    assert short.status == "warn" and short.value == pytest.approx(0.1)
    assert v.check_drift([5], 1.0).status == "fail"
    with pytest.raises(ValueError, match="interval_h"):
        v.check_drift([1, 2], 0)


@pytest.mark.parametrize(
    "angle, status",
    [(0, "pass"), (60, "pass"), (60.1, "warn"), (75, "warn"), (75.1, "fail"), (-30, "pass")],
)
def test_view_angle_boundaries(angle, status):
    assert v.check_view_angle(angle).status == status


def test_night_sky():
    fail = v.check_night_sky(-0.5, 0.0, "exterior")
    assert fail.status == "fail" and "negative U" in fail.rule
    assert fail.value == pytest.approx(-0.5)
    assert v.check_night_sky(0.0, 0.0).status == "fail"
    assert v.check_night_sky(0.3, 0.0).status == "pass"
    assert v.check_night_sky(-3.0, 0.0, "interior").status == "pass"


def test_downgrade_keeps_numbers_and_only_demotes_pass():
    ok = v.check_wind(1.0)
    warn = v.check_wind(4.0)
    bad = v.check_wind(8.0)
    assert v.downgrade("pass", [ok, warn]) == "pass"
    assert v.downgrade("pass", [ok, bad]) == "inconclusive"
    assert v.downgrade("fail", [bad]) == "fail"
    assert bad.value == 8.0  # the number stays on the check
    assert v.worst([ok, warn]) == "warn" and v.worst([]) == "pass"


def test_check_rejects_bad_status():
    with pytest.raises(ValueError, match="status"):
        v.Check("x", "maybe", 1.0, "K", "rule")


def test_series_period_rules():
    # ISO 9869-1 §6.3 (from memory): >= 72 h; whole days for elements above 20 kJ/(m2 K).
    night = v.check_series_period(11.5, heat_capacity_kj_m2k=300.0, interval_h=0.5)
    assert night.status == "fail" and night.name == "iso9869_period"
    assert v.check_series_period(96.0, 300.0).status == "pass"
    assert v.check_series_period(84.0, 300.0).status == "fail"  # 3.5 days, heavy
    assert v.check_series_period(84.0, 12.0).status == "pass"  # light: any 72 h+
    assert v.check_series_period(96.0).status == "warn"  # capacity unknown
    assert v.check_series_period(96.0).value == pytest.approx(4.0)


def test_storage_check_grades():
    # value = |T_lag - T_ae| / |T_ai - T_lag|: 0.4/19.6 pass, 1.6/20.0 warn, 4/20 fail.
    assert v.check_storage(21.0, 1.0, 1.4).status == "pass"
    assert v.check_storage(21.0, 1.0, 1.4, history_span_h=6, tau_h=8).status == "warn"
    assert v.check_storage(21.0, -0.6, 1.0).status == "warn"
    assert v.check_storage(21.0, -3.0, 1.0).status == "fail"
