"""Reports: what each page says first, plain words for the homeowner, totals that add up,
one number convention, every caveat where its number is, escaping, CSP, linked or embedded
figures from the output folder only, and the PDF.

Fixtures are real pipeline runs (`small_run`, `survey20_results` in conftest) validated
against the results schema; keys that later pipeline versions add are planted in copies of
those results (and the copies still pass the schema).
"""

from __future__ import annotations

import copy
import html
import re
from pathlib import Path

import pypdf
import pytest

from envelope.report import write_reports
from envelope.report.facts import verdict_basis, view_state
from envelope.report.homeowner import CAUTIONS, homeowner_context
from envelope.report.numbers import (
    decimals_for,
    plain_money,
    plain_range,
    u_text,
    value_text,
)
from envelope.results import validate

EVIL = "<script>alert(1)</script>"
ID = re.compile(r"\bD\d+\b")


def visible_text(page: str) -> str:
    """The words a reader sees: tags, the style block and attribute values removed."""
    page = re.sub(r"<style.*?</style>", " ", page, flags=re.S)
    page = re.sub(r"<[^>]+>", " ", page)
    return " ".join(html.unescape(page).split())


def write(results, tmp_path: Path, small_out: Path, embed=False) -> dict:
    """Reports of `results` in a fresh folder holding the small run's figures."""
    import shutil

    out = tmp_path / "out"
    shutil.copytree(small_out / "figures", out / "figures")
    return write_reports(results, out, embed=embed)


@pytest.fixture(scope="module")
def pages(small_run):
    _, results, out = small_run
    return {k: (out / f).read_text(encoding="utf-8") for k, f in
            (("report", "report.html"), ("check", "check.html"), ("summary", "summary.html"))}


# -- numbers -----------------------------------------------------------------------------------
def test_numbers_one_convention():
    # rounding rule of the Particle Data Group (Review of Particle Physics, Introduction 5.3):
    # half-widths with leading digits 100-354 keep two significant digits, 355-999 one
    assert decimals_for(0.33) == 2 and decimals_for(0.45) == 1 and decimals_for(29.2) == 0
    # U never below zero: an interval reaching zero prints "≤ high", a value at zero "≈ 0"
    assert u_text(0.297, -0.035, 0.628).full == "0.30 (95 %: ≤ 0.63)"
    assert u_text(-0.02, -0.5, 0.3).value == "≈ 0.0"
    assert u_text(2.85, 2.41, 3.31).full == "2.9 (95 %: 2.4–3.3)"
    # from a standard uncertainty: value ± 1.96 std (JCGM 100:2008, normal distribution)
    h = value_text(111.3, std=14.88, unit="W/K", floor=0.0)
    assert h.full == "111 W/K (95 %: 82–140 W/K)" and h.from_std


def test_plain_ranges_never_say_zero_to():
    assert plain_range(186.0, 383.0, 808.0, "kWh") == "about 190 to 810 kWh"
    assert plain_range(1.8e-9, 189.0, 587.0, "kWh") == \
        "up to about 590 kWh (most likely about 190 kWh)"
    assert plain_money(2.2e-10, 22.7, 70.4, "€") == "up to about €70 (most likely about €23)"
    assert plain_money(0.1, 0.15, 0.2, "€") == "less than €1"
    for text in (plain_range(0.0, 1.0, 190.0), plain_money(0.0, 20.0, 190.0, "€")):
        assert "0 to" not in text


# -- auditor's report --------------------------------------------------------------------------
def test_auditor_report_puts_key_results_first_then_contents(pages):
    page = pages["report"]
    order = [page.index(s) for s in ('id="key"', 'class="toc"', 'id="elements"', 'id="defects"',
                                     'id="energy"', 'id="inputs"', 'id="methods"',
                                     'id="views"')]
    assert order == sorted(order)
    key = visible_text(page[page.index('id="key"'): page.index('class="toc"')])
    for words in ("H = ", "95 %", "Annual fabric loss", "Validity of the night",
                  "Worst risks", "Top measures", "Builder check"):
        assert words in key, words
    # per-view pictures last and collapsible
    assert page.index("<details>") > page.index('id="methods"')
    assert page.count("<img") == page[page.index('id="elements"'):].count("<img")


def test_auditor_inputs_and_numbered_citations(pages, small_run):
    page = visible_text(pages["report"])
    inputs = page[page.index("4. Inputs"): page.index("5. Methods")]
    for words in ("energy price", "0.100 EUR/kWh", "heating-system efficiency", "90 %",
                  "CO2 factor", "humidity class 3", "fRsi criterion", "iso13788",
                  "specified U 0.60", "emissivity 0.93", "reflected 20.0 °C",
                  "distance 3.0 m", "transmittance", "Monte Carlo draws / seed", "1000 /"):
        assert words in inputs, words
    methods = page[page.index("5. Methods"): page.index("6. Cautions")]
    cited = {int(n) for n in re.findall(r"\[(\d+)\]", methods)}
    listed = len(re.findall(r'<li id="ref-', pages["report"]))
    assert cited == set(range(1, listed + 1))  # every reference cited, numbered in order


def test_report_is_small_with_linked_figures_and_embeds_on_request(small_run, tmp_path):
    _, results, out = small_run
    page = (out / "report.html").read_text(encoding="utf-8")
    srcs = re.findall(r'<img src="([^"]+)"', page)
    assert srcs and all(s.startswith("figures/") and (out / s).is_file() for s in srcs)
    assert (out / "report.html").stat().st_size < 5 * 1024 * 1024
    paths = write(results, tmp_path, out, embed=True)
    for key in ("report", "check", "summary_html"):
        srcs = re.findall(r'<img src="([^"]+)"', paths[key].read_text(encoding="utf-8"))
        assert srcs and all(s.startswith("data:image/png;base64,") for s in srcs), key


def test_pages_carry_a_csp_without_scripts(pages):
    for key, page in pages.items():
        csp = re.search(r'http-equiv="Content-Security-Policy" content="([^"]+)"', page).group(1)
        assert "script-src 'none'" in html.unescape(csp) and "default-src 'none'" in html.unescape(csp)
        assert "<script" not in page.lower(), key
        assert "http://" not in page and "https://" not in page, key


def test_only_figures_inside_the_output_folder(small_run, tmp_path):
    _, results, out = small_run
    secret = tmp_path / "secret.png"
    secret.write_bytes(b"\x89PNG\r\n\x1a\n" + b"not yours")
    r = copy.deepcopy(results)
    figs = r["thermograms"][0]["figures"]
    figs["thermogram"] = "../secret.png"
    figs["frsi"] = str(secret)
    (tmp_path / "out" / "figures").mkdir(parents=True)
    paths = write(r, tmp_path / "x", out)
    page = paths["report"].read_text(encoding="utf-8")
    assert "secret" not in "".join(re.findall(r'<img src="([^"]+)"', page))
    assert "figure not available: ../secret.png" in page
    # a symlink inside figures/ that leads outside the output folder is refused too
    link = tmp_path / "x" / "out" / "figures" / "room-north-thermogram.png"
    link.unlink()
    link.symlink_to(secret)
    r2 = copy.deepcopy(results)
    paths = write_reports(r2, tmp_path / "x" / "out", embed=True)
    page = paths["report"].read_text(encoding="utf-8")
    assert "bm90IHlvdXJz" not in page  # base64 of the foreign bytes "not yours"


def test_strings_from_the_survey_are_escaped(small_run, tmp_path):
    _, results, out = small_run
    r = copy.deepcopy(results)
    r["elements"][0]["label"] = EVIL
    r["survey"]["site"]["name"] = EVIL
    r["survey"]["surveyor"] = '"><img src=x onerror=alert(2)>'
    r["measures"][0]["name"] = EVIL
    r["defects"][0]["reasons"].append(EVIL)
    r["notes"].append("cost $5 & 10 % <b>bold</b>")
    assert validate(r) == []
    paths = write(r, tmp_path, out)
    for key in ("report", "check", "summary_html"):
        page = paths[key].read_text(encoding="utf-8")
        assert EVIL not in page and "<img src=x" not in page, key
        assert "&lt;script&gt;alert(1)&lt;/script&gt;" in page, key
    assert "&lt;b&gt;bold&lt;/b&gt;" in paths["report"].read_text(encoding="utf-8")


def test_every_caveat_is_shown_where_its_number_is(small_run, tmp_path):
    _, results, out = small_run
    r = copy.deepcopy(results)
    wall = next(e for e in r["elements"] if e["name"] == "test-wall")
    wall["u_valid"] = False
    wall["u_note"] = "exterior surface colder than the outdoor air"
    wall["checks"].append({"name": "night_sky", "status": "fail", "value": -0.4, "unit": "K",
                           "rule": "exterior surface warmer than outdoor air", "scope": "view"})
    r["defects"][0]["energy_lower_bound"] = True
    r["series"] = [{"id": "night", "element": "test-wall", "thermogram": "room-north",
                    "u_w_m2k": 0.5, "u_std_w_m2k": 0.1, "u_low95_w_m2k": 0.3,
                    "u_high95_w_m2k": 0.7, "budget": [], "duration_h": 12.0, "n_frames": 24,
                    "converged": False, "times_h": [0.0, 1.0], "u_running_w_m2k": [0.5, 0.5],
                    "camera_offset_k": 0.0, "calibration_note": "", "checks": [],
                    "figure": "figures/series-night.png"}]
    assert validate(r) == []
    paths = write(r, tmp_path, out)
    page = visible_text(paths["report"].read_text(encoding="utf-8"))
    els = page[page.index("1. Elements"): page.index("2. Defects")]
    assert "not valid" in els and "exterior surface colder than the outdoor air" in els
    assert "night-sky cooling FAIL (-0.4 K)" in els
    assert "Not converged by the ISO 9869-1 criteria" in els
    defects = page[page.index("2. Defects"): page.index("3. Heat loss")]
    assert "at least" in defects and "energy is a lower bound" in defects
    views = page[page.index("7. Views"):]
    assert "assessed, a check FAILED" in views and "checks pass" not in views
    state = view_state(r, r["thermograms"][0])
    assert state["worst"] == "fail" and "night-sky cooling: fail" in state["problems"]


# -- builder's sheet ---------------------------------------------------------------------------
def test_builder_sheet_says_which_u_is_judged_and_what_to_do(pages, small_run):
    _, results, _ = small_run
    page = visible_text(pages["check"])
    wall = next(e for e in results["elements"] if e["name"] == "test-wall")
    assert "U as built" in page and "U undisturbed" in page
    # the pipeline judges the element as built (whole net area, defects included)
    # the pipeline judges the element as built (whole net area, defects included), on the
    # definition of the specified U (environmental temperatures, ISO 6946)
    assert "judged as built, environmental temperatures" in page
    assert verdict_basis(wall)["as_built"] is True
    # the planted patch: named on the sheet with what it costs, and what to do with it
    assert "D1 missing insulation" in page and "kWh/yr" in page
    assert "make good D1, then check again" in page
    if wall["verdict"] == "inconclusive":
        # the remedy is the results' largest contributor to the interval, with its share
        top = max(wall["narrowing"], key=lambda n: n["share"])
        assert f"Settle: (a), {round(100 * top['share'])} % of the variance" in page
        assert f"(a) To settle, narrow the interval where most of it comes from: {top['remedy']}" in page


def test_builder_sheet_uses_planned_keys_when_present(small_run, tmp_path):
    _, results, out = small_run
    r = copy.deepcopy(results)
    wall = next(e for e in r["elements"] if e["name"] == "test-wall")
    wall.update(label="North wall, ground floor", u_whole_env_w_m2k=0.46,
                u_whole_env_low95_w_m2k=0.21, u_whole_env_high95_w_m2k=0.71,
                verdict="inconclusive", u_specified_basis="environmental",
                verdict_basis="whole net area as built (defects included), U referred to "
                              "environmental temperatures (the ISO 6946 definition)",
                narrowing=[{"contributor": "probe", "share": 0.2,
                            "remedy": "probe: use a calibrated contact probe"},
                           {"contributor": "reflected", "share": 0.61,
                            "remedy": "reflected temperature: measure it at the wall"}])
    assert validate(r) == []
    page = visible_text(write(r, tmp_path, out)["check"].read_text(encoding="utf-8"))
    assert "North wall, ground floor" in page and "judged as built" in page
    assert "0.46 95 %: 0.21–0.71" in page  # the judged U: as built, environmental
    # the largest contributor first, whatever the list's order
    assert "Settle: (a), 61 % of the variance" in page
    assert "reflected temperature: measure it at the wall" in page
    assert "covers the undisturbed area only" not in page


def test_builder_sheet_of_20_elements_has_every_row(survey20_results, tmp_path):
    paths = write_reports(survey20_results, tmp_path)
    page = visible_text(paths["check"].read_text(encoding="utf-8"))
    assert page.count("living room wall (flat-") == 20
    verdicts = {e["verdict"] for e in survey20_results["elements"]}
    for v in verdicts:
        assert f"{v.upper()}" in page
    # one element's poorly conditioned U is its own caveat, not a failed night: the night
    # line names no view for it
    night = page[page.index("Night "): page.index("element (view)")]
    assert "view checks failed" not in night


# -- homeowner summary -------------------------------------------------------------------------
def test_no_homeowner_sentence_holds_an_element_id(pages, small_run):
    _, results, _ = small_run
    text = visible_text(pages["summary"])
    for e in results["elements"]:
        assert e["name"] not in text, e["name"]
    assert not ID.search(text), ID.search(text)
    for word in ("(s)", "batt", "n/a"):
        assert word not in text, word
    assert "Test wall" in text  # the readable label instead


def test_listed_fixes_add_up_to_the_total(small_run):
    from envelope.report.figures import Figures

    _, results, out = small_run
    c = homeowner_context(results, Figures(out, out / "figures"))
    assert len(c["fixes"]) == len(results["measures"]) == 2
    assert c["total"]["cost"] == sum(f["cost"] for f in c["fixes"])
    assert c["total"]["kwh"] == pytest.approx(sum(f["kwh"] for f in c["fixes"]), rel=0.01)
    assert c["total"]["text"].startswith("All 2 fixes together cost about")
    # each fix has its own picture, numbered like the fix, none shown twice
    rels = [f["picture"]["rel"] for f in c["fixes"] if f["picture"]]
    assert len(rels) == len(set(rels)) == 2
    assert [f["number"] for f in c["fixes"]] == [1, 2]


def test_largest_heat_loss_is_named_even_without_a_measure(small_run, tmp_path):
    _, results, out = small_run
    r = copy.deepcopy(results)
    r["measures"] = [m for m in r["measures"] if "test-wall" not in m["targets"]]
    r["package"] = None
    page = visible_text(write(r, tmp_path, out)["summary_html"].read_text(encoding="utf-8"))
    assert "Most of it goes through the test wall" in page
    assert "prices no fix for it" in page


def test_homeowner_cautions_hold_for_a_client_survey(pages):
    text = visible_text(pages["summary"])
    for caution in CAUTIONS:
        assert caution in text
    assert "invented" not in text.lower()


def test_summary_pdf_from_the_same_html(small_run):
    _, _, out = small_run
    reader = pypdf.PdfReader(out / "summary.pdf")
    assert 1 <= len(reader.pages) <= 4
    text = " ".join(" ".join(p.extract_text() for p in reader.pages).split())
    assert "Your home's heat survey" in text and "What to fix first" in text
    assert "Local building codes and licensed practitioners have the last word" in text
    images = sum(len(p.images) for p in reader.pages)
    assert images >= 2  # the fixes' pictures, embedded from the output folder


def test_reports_cope_with_sparse_results(tmp_path):
    results = {"schema": "envelope-results", "schema_version": 2, "survey": {},
               "elements": None, "defects": [], "heat_loss": None, "measures": None}
    paths = write_reports(results, tmp_path)
    assert "No element has a specified U" in paths["check"].read_text(encoding="utf-8")
    assert "No heat-loss figures" in paths["report"].read_text(encoding="utf-8")
    assert len(pypdf.PdfReader(paths["summary_pdf"]).pages) >= 1


# -- what the merged pipeline writes, where a reader needs it ----------------------------------
def _section(page: str, start: str, end: str) -> str:
    return page[page.index(start): page.index(end)]


def test_both_temperature_factors_explained_and_risk_judged_at_design(small_run, tmp_path):
    _, results, out = small_run
    r = copy.deepcopy(results)
    wall = next(e for e in r["elements"] if e["name"] == "test-wall")
    # a wall whose factor passes on the night but not at the design convention (the case of
    # issue 15): the key results judge it on the design factor and name both
    wall.update(frsi_min=0.74, frsi_p05=0.75, frsi_design_min=0.61, frsi_design_p05=0.62,
                frsi_limit_mould=0.71, risk="mould", risk_judged_on="design convention")
    for d in r["defects"]:  # the wall's own factor, not a defect's, carries the risk here
        d["risk"] = "none"
    assert validate(r) == []
    page = visible_text(write(r, tmp_path, out)["report"].read_text(encoding="utf-8"))
    els = _section(page, "1. Elements", "2. Defects")
    for words in ("Two temperature factors", "On the night", "At the design convention",
                  "Rsi 0.25 m²·K/W on opaque elements", "0.13 on glazing",
                  "risk is judged on it", "p05 0.62 · Rsi 0.25"):
        assert words in els, words
    key = _section(page, "Key results", "Contents")
    assert ("mould: fRsi 0.61 at the design convention (0.74 measured on the night) "
            "< limit 0.71") in key
    methods = _section(page, "5. Methods", "6. Cautions")
    assert "Rsi 0.25" in methods and "ISO 13788" in methods


def test_junction_checks_as_a_table_with_the_design_psi_and_its_source(small_run, tmp_path):
    _, results, out = small_run
    r = copy.deepcopy(results)
    d = r["defects"][0]
    d.update(junction="wall–floor", psi_w_mk=0.157, psi_std_w_mk=0.028,
             psi_design_w_mk=0.08, psi_design_source="specified", psi_dimensions="internal",
             junction_verdict="fail", elements=["test-wall", "test-window"],
             junction_verdict_reason="measured 95 % interval 0.103 to 0.212 W/(m·K) lies "
                                     "wholly above the design psi 0.080 W/(m·K).")
    assert validate(r) == []
    page = visible_text(write(r, tmp_path, out)["report"].read_text(encoding="utf-8"))
    table = _section(page, "Junctions against design", "3. Heat loss")
    # psi 0.157 ± 1.96 × 0.028 (JCGM 100:2008, normal): 0.10–0.21, two digits on the
    # half-width (Particle Data Group rounding)
    for words in ("wall–floor", "internal dimensions", d["id"], "Test wall, Test window",
                  "0.16 95 %: 0.10–0.21", "0.080 specified", "✗ FAIL", "wholly above"):
        assert words in table, words


def test_tape_note_is_shown_where_the_emissivity_and_u_are(small_run, tmp_path):
    _, results, out = small_run
    r = copy.deepcopy(results)
    wall = next(e for e in r["elements"] if e["name"] == "test-wall")
    note = ("tape refused: its contrast with the reflected temperature, 1.14 K, is below 10 x "
            "its uncertainty (0.59 K); declared 0.93 ± 0.02 kept")
    wall["emissivity_source"] = note
    wall["calibration_note"] = f"survey offset removed; {note}"
    assert validate(r) == []
    paths = write(r, tmp_path, out)
    page = visible_text(paths["report"].read_text(encoding="utf-8"))
    els = _section(page, "1. Elements", "What the U intervals rest on")
    assert f"emissivity tape in view {wall['thermogram']}: {note}" in els
    budget = _section(page, "What the U intervals rest on", "2. Defects")
    assert f"Emissivity 0.93 ({note})" in budget
    assert budget.count("tape refused") == 1  # not repeated in the calibration line
    check = visible_text(paths["check"].read_text(encoding="utf-8"))
    assert "tape: tape refused: its contrast with the reflected temperature" in check


def test_a_lower_bound_energy_says_at_least_wherever_it_appears(small_run, tmp_path):
    from envelope.terminal import summary_lines

    _, results, out = small_run
    r = copy.deepcopy(results)
    d = r["defects"][0]
    d["energy_lower_bound"] = True
    r["notes"] = ["no blower-door result ([airtightness]): a leak's energy is only the "
                  "conductive surface excess, a lower bound"]
    m = next(m for m in r["measures"] if d["id"] in m["targets"] or d["element"] in m["targets"])
    m["targets"] = [d["id"]]
    assert validate(r) == []
    paths = write(r, tmp_path, out)
    kwh = f"{d['annual_kwh']:,.0f}"
    report = visible_text(paths["report"].read_text(encoding="utf-8"))
    assert f"at least {kwh}" in _section(report, "2. Defects", "3. Heat loss")
    assert "H and the energy are lower bounds" in _section(report, "Key results", "Contents")
    assert r["notes"][0] in _section(report, "Key results", "Contents")
    measures = _section(report, "Measures", "4. Inputs")
    assert "at least" in measures and "at most" in measures  # saving at least, payback at most
    check = visible_text(paths["check"].read_text(encoding="utf-8"))
    assert f"at least {kwh} kWh/yr" in check
    summary = visible_text(paths["summary_html"].read_text(encoding="utf-8"))
    assert "lets out at least" in summary and "at least that" in summary
    lines = summary_lines(r, out)
    assert any(row[4].startswith("at least") for row in lines["defects"])
    assert lines["notes"] == [f"Note: {r['notes'][0]}"]


def test_heat_loss_joint_interval_and_series_methods_shown(small_run, tmp_path):
    _, results, out = small_run
    r = copy.deepcopy(results)
    h = r["heat_loss"]
    h.update(h_w_k=117.065, h_low95_w_k=86.3, h_high95_w_k=151.6, h_std_independent_w_k=15.1)
    r["series"] = [{"id": "night", "element": "test-wall", "thermogram": "room-north",
                    "u_w_m2k": 0.565, "u_std_w_m2k": 0.18, "u_low95_w_m2k": 0.21,
                    "u_high95_w_m2k": 0.93, "u_dynamic_w_m2k": 0.5887,
                    "u_dynamic_low95_w_m2k": 0.5865, "u_dynamic_high95_w_m2k": 0.5909,
                    "u_lag_corrected_w_m2k": 0.5882, "budget": [], "duration_h": 12.0,
                    "n_frames": 24, "converged": False, "times_h": [0.0, 1.0],
                    "u_running_w_m2k": [0.56, 0.565], "camera_offset_k": 0.0,
                    "calibration_note": "", "figure": "figures/series-night.png",
                    "notes": ["1 contact-probe spot(s) give the camera offset +0.82 K"],
                    "checks": [{"name": "iso9869_period", "status": "fail", "value": 0.5,
                                "unit": "d", "rule": "whole days", "scope": "time_series"}]}]
    assert validate(r) == []
    page = visible_text(write(r, tmp_path, out)["report"].read_text(encoding="utf-8"))
    energy = _section(page, "3. Heat loss", "4. Inputs")
    # 117 W/K with 95 % 86–152 (two digits on the half-width 33, PDG rounding)
    assert "117 W/K (95 %: 86–152 W/K)" in energy and "joint Monte Carlo" in energy
    # independent: 117.1 ± 1.96 × 15.1 = 87–147 (JCGM 100:2008, normal distribution)
    assert "if the elements were independent 87–147 W/K" in energy
    series = _section(page, "Night series", "2. Defects")
    assert "Dynamic method: U 0.59 W/(m²·K) (95 % interval of the regression alone" in series
    assert "storage lag corrected: 0.59" in series
    assert "whole days for a heavy element (ISO 9869-1) failed" in series
    assert "1 contact-probe spot gives the camera offset" in series


def test_results_reference_names_every_key_a_run_writes(small_run, demo_run):
    """docs/results.md names every key of real runs' results (the small survey and the demo),
    so the reference the reports are read against stays current."""
    doc = (Path(__file__).resolve().parents[1] / "docs" / "results.md").read_text(encoding="utf-8")
    named = set(re.findall(r"`([a-z0-9_]+)(?:\[\])?`", doc))
    for _, results in ((None, small_run[1]), (None, demo_run[1])):
        keys = set(results)
        for part in ("elements", "defects", "thermograms", "measures", "series"):
            for item in results.get(part) or []:
                keys |= set(item)
        for part in ("heat_loss", "package"):
            keys |= set(results.get(part) or {})
        missing = sorted(keys - named)
        assert missing == [], missing
