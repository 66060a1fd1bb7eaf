"""The README's main command on example_house/, checked against the demo's truth.json.

truth.json is written by example_house/generate.py from the project's own forward model:
these checks show that the tool recovers what was planted, within the uncertainty the tool
itself reports (consistency, not an outside reference).
"""

from __future__ import annotations

import json

import pytest
from conftest import HOUSE

pytestmark = pytest.mark.slow  # runs whole surveys (quick loop: pytest -m 'not slow')

OUTPUTS = ("results.json", "elements.csv", "defects.csv", "measures.csv", "report.html",
           "check.html", "summary.html", "summary.pdf")


@pytest.fixture(scope="module")
def run(demo_run):
    return demo_run


def test_every_output_and_figure_written(run):
    out, r, _ = run
    for name in OUTPUTS:
        assert (out / name).stat().st_size > 0, name
    for t in r["thermograms"]:
        assert t["status"] in ("assessed", "paired"), t
        for fig in t["figures"].values():
            assert (out / fig).is_file(), fig
    assert r["failures"] == []


def test_true_u_inside_the_reported_interval(run):
    _, r, truth = run
    checked = 0
    for e in r["elements"]:
        tr = truth["elements"][e["name"]]
        if not e["u_valid"]:
            continue
        assert e["u_low95_w_m2k"] <= tr["u_true_w_m2k"] <= e["u_high95_w_m2k"], (e["name"], e)
        checked += 1
    assert checked >= 10


def test_night_sky_view_is_flagged_not_reported(run):
    _, r, _ = run
    garden = next(e for e in r["elements"] if e["name"] == "garden-room-east-wall")
    assert garden["u_valid"] is False and "night-sky" in garden["u_note"]
    assert any(c["name"] == "night_sky" and c["status"] == "fail" for c in garden["checks"])
    assert "garden-room-east-wall" not in {x["name"] for x in r["heat_loss"]["by_element"]}


def test_areas_match_the_truth(run):
    _, r, truth = run
    for e in r["elements"]:
        area = truth["elements"][e["name"]]["net_area_m2"]
        if area is not None:
            assert e["area_net_m2"] == pytest.approx(area, rel=5e-3), e["name"]


def _inside(c, bbox, pad=10.0):
    return bbox[0] - pad <= c[0] <= bbox[2] + pad and bbox[1] - pad <= c[1] <= bbox[3] + pad


def test_planted_defects_found_and_classed(run):
    _, r, truth = run
    found = r["defects"]
    right = 0
    for planted in truth["defects"]:
        tid = planted["thermogram"] if planted["class"] != "air leakage" else "dining-west"
        hits = [d for d in found if d["thermogram"] == tid and d["element"] == planted["element"]
                and _inside(d["centroid_px"], planted["bbox_px"])]
        assert hits, planted["id"]
        right += any(d["defect_class"] == planted["class"] for d in hits)
    assert right >= 4  # the issue asks for at least 4 of 5 classes right
    # the glossy splashback mirrors a radiator: not a wall defect, or "unexplained" with a note
    refl = truth["reflection"]
    for d in found:
        if d["thermogram"] == refl["thermogram"] and _inside(d["centroid_px"], refl["bbox_px"], 0):
            assert d["defect_class"] == "unexplained" and any("reflection" in n for n in d["notes"])


def test_junction_psi_within_its_uncertainty(run):
    _, r, truth = run
    planted = next(d for d in truth["defects"] if d["class"] == "linear thermal bridge")
    d = next(x for x in r["defects"] if x["defect_class"] == "linear thermal bridge"
             and x["element"] == planted["element"])
    psi_true = planted["psi_w_mk"]
    u_psi = d["psi_w_mk"] * d["extra_w_std"] / d["extra_w"]
    assert abs(d["psi_w_mk"] - psi_true) <= max(1.96 * u_psi, 0.05 * psi_true), (d, psi_true)


def test_series_against_the_average_method_truth(matched):
    a, truth = matched
    (s,) = a.series
    expected = truth["series"]["average_method_u_w_m2k"]
    # told the generator's convection; 3 % as for single views (surface–air about 1.5 K)
    assert s.u_w_m2k == pytest.approx(expected, rel=0.03)
    assert any(c.name.startswith("iso9869") and c.status == "fail" for c in s.checks)
    # the study wall's heat capacity is given: the outdoor air lagged by its response time
    # brings the average method towards the steady U (0.55), as the storage term should
    assert s.u_lag_corrected_w_m2k is not None
    assert abs(s.u_lag_corrected_w_m2k - 0.55) < abs(s.u_w_m2k - 0.55)


def test_builder_verdicts_and_retrofit_case(run):
    _, r, _ = run
    specified = [e for e in r["elements"] if e["u_specified_w_m2k"] is not None]
    assert specified and all(e["verdict"] in ("pass", "fail", "inconclusive") for e in specified)
    assert r["package"]["annual_kwh_saved"] > 0
    singles = sum(m["annual_kwh_saved"] for m in r["measures"])
    assert r["package"]["annual_kwh_saved"] <= singles * (1 + 1e-5)  # results keep 6 digits


def test_series_interval_holds_the_average_method_truth(run):
    _, r, truth = run
    (s,) = r["series"]
    assert s["u_low95_w_m2k"] <= truth["series"]["average_method_u_w_m2k"] <= s["u_high95_w_m2k"]


# ---- tight checks where the method is told the forward model's convection ---------------
# example_house/generate.py makes every interior surface with the Alamdari–Hammond
# correlations at its own surface–air difference (truth.json, conditions). Told the same model
# (and ISO 6946's 4 + 4v outside, as generated), the point U must land within 3 % of the
# planted U, and H within 2 % of the planted heat loss; with the default ensemble, the 95 %
# intervals must still hold the truth (above). Consistency with the generator, not an outside
# reference: the outside checks of the physics are in the module tests.

@pytest.fixture(scope="module")
def matched():
    import dataclasses

    import envelope

    s = envelope.load_survey(HOUSE)
    s = dataclasses.replace(s, analysis=dataclasses.replace(
        s.analysis, interior_convection="alamdari_hammond", monte_carlo_draws=2000))
    return envelope.assess_survey(s), json.loads((HOUSE / "truth.json").read_text())


def test_point_u_within_3_percent_when_the_method_matches_the_generator(matched):
    a, truth = matched
    checked = 0
    for e in a.elements:
        if not e.u_valid:
            continue
        u_true = truth["elements"][e.name]["u_true_w_m2k"]
        if e.name == truth["series"]["element"]:
            # the study wall lags the falling outdoor air: at the survey frame it passes the
            # heat of a steadier night (truth.json series: the frame's steady U)
            u_true = truth["series"]["survey_frame_steady_u_w_m2k"]
        surface_air = next(c for c in e.checks if c.name == "surface_air")
        # 3 % where the surface–air difference is at least 2 K; on the better insulated
        # surfaces (1.6–1.8 K here) the probe spot's own noise (0.05 K over 9 px, 0.017 K, so
        # about 0.03 K at 2 sigma in the offset) is alone 2 % of U: 5 % there
        tol = 0.03 if surface_air.value >= 2.0 else 0.05
        assert e.u_w_m2k == pytest.approx(u_true, rel=tol), (e.name, e.u_w_m2k, u_true)
        checked += 1
    assert checked >= 10


def test_h_within_2_percent_of_the_planted_fabric_heat_loss(matched):
    a, truth = matched
    dt = truth["conditions"]["delta_t_k"]
    used = {e.name: e for e in a.elements if e.u_valid}
    best = {}
    for e in used.values():
        best.setdefault(e.name, e)
    hl = a.energy.balance.heat_loss
    # the tool's fabric H: ΣU·A + each defect's part (a leak's conductive excess only: its
    # air is ventilation, not in the planted fabric truth)
    by_defect = dict(hl.by_defect)
    fabric = hl.h_elements_w_k + sum(
        d.extra_w / dt if d.defect_class == "air leakage" else by_defect.get(d.id, 0.0)
        for d in a.defects if d.defect_class != "unexplained")
    # the planted fabric: each used element as built (u_whole includes its defects) over the
    # area the tool used
    planted = sum(truth["elements"][n]["u_whole_w_m2k"] * e.area_net_m2 for n, e in best.items())
    assert fabric == pytest.approx(planted, rel=0.02)


def test_known_verdicts_of_the_demo(run):
    _, r, truth = run
    el = {e["name"]: e for e in r["elements"]}
    # the dining-room window claimed 1.6 is an older unit of 2.86: fails on any night
    assert el["dining-window"]["verdict"] == "fail"
    # the planted missing batt, loft gap and wall–floor junction are at risk at the design
    # convention (ISO 13788 / BRE IP 1/06: Rsi 0.25 m²K/W on opaque surfaces), which reads
    # lower than the factor measured on the open surface; at least two of them would pass on
    # the measured factor alone (the non-conservative judgement the convention corrects)
    limit = r["frsi_limit"]["mould"]["value"]
    planted = [d for d in r["defects"] if d["element"] in
               ("bedroom-east-wall", "landing-ceiling", "lounge-south-wall")
               and d["defect_class"] in ("missing insulation", "linear thermal bridge")]
    assert len(planted) == 3
    assert all(d["risk"] in ("mould", "condensation") for d in planted)
    assert all(d["frsi_p05"] > d["frsi_design_p05"] for d in planted)
    assert sum(d["frsi_p05"] > limit > d["frsi_design_p05"] for d in planted) >= 2
    # the lounge wall–floor junction measured against its specified 0.08 W/(m·K)
    (j,) = [d for d in r["defects"] if d["defect_class"] == "linear thermal bridge"]
    assert j["psi_design_w_mk"] == pytest.approx(0.08) and j["junction_verdict"] == "fail"
    # the blower-door result gives the leak its air
    (leak,) = [d for d in r["defects"] if d["defect_class"] == "air leakage"]
    assert leak["energy_lower_bound"] is False and leak["air_h_w_k"] > 0
