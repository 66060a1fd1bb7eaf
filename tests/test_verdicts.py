"""Tests of envelope.verdicts: the builder's pass / fail / inconclusive boundaries."""

from __future__ import annotations

import pytest

from envelope.verdicts import builder_verdict

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
