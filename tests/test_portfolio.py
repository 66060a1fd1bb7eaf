"""`envelope portfolio`: many surveys on Dask, the portfolio table and pages.

The surveys are the small synthetic survey of conftest (forward model, consistency only)
with few Monte Carlo draws; the cluster runs are a local cluster of 2 worker processes with
1 thread each, as the command starts it, and an existing `LocalCluster` reached by address.
"""

from __future__ import annotations

import json
import math
import re
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from conftest import SURVEY_TOML, readings, write_survey
from typer.testing import CliRunner

from envelope.cli import app
from envelope.defects import CLASSES
from envelope.errors import SurveyError
from envelope.portfolio import TABLE_FOLDER, collect_entries, rank_houses, write_table
from envelope.portfolio_house import (
    DEFECT_CLASSES,
    HouseOutcome,
    house_row,
    inputs_record,
    worst_risk,
)
from envelope.portfolio_page import DEFECT_COLUMNS, TABLE_COLUMNS

FEW_DRAWS = SURVEY_TOML.replace("monte_carlo_draws = 2000", "monte_carlo_draws = 100")
HOUSES = ("house-a", "house-b", "house-c")
BROKEN = "house-d"


def _invoke(args):
    return CliRunner().invoke(app, ["portfolio", *args], catch_exceptions=False)


@pytest.fixture(scope="module")
def portfolio_dirs(tmp_path_factory):
    """Four surveys under one parent folder: three good (different noise), one broken."""
    base = tmp_path_factory.mktemp("portfolio")
    parent = base / "surveys"
    for seed, name in enumerate(HOUSES, start=1):
        write_survey(parent / name, FEW_DRAWS, pixels=readings(seed))
    write_survey(parent / BROKEN, FEW_DRAWS.replace("indoor_air_c = 21.0", "indoor_air_c = 210.0"))
    return parent, base / "out"


@pytest.fixture(scope="module")
def first_run(portfolio_dirs):
    """The command with no cluster options but --workers 2: a local cluster it starts."""
    parent, out = portfolio_dirs
    res = _invoke([str(parent), "--out", str(out), "--workers", "2", "--json"])
    return res, json.loads(res.stdout)


def test_one_broken_survey_of_four(first_run, portfolio_dirs):
    res, summary = first_run
    parent, out = portfolio_dirs
    assert res.exit_code == 3, res.output
    assert (summary["assessed"], summary["up_to_date"], summary["houses"]) == (3, 0, 4)
    assert [f["house_id"] for f in summary["failed"]] == [BROKEN]
    assert "survey.toml" in summary["failed"][0]["error"]
    assert "conditions.indoor_air_c" in summary["failed"][0]["error"]
    for h in HOUSES:  # outputs as `assess` writes them, plus the inputs record
        names = {p.name for p in (out / h).iterdir()}
        assert {"results.json", "elements.csv", "report.html", "summary.pdf", "manifest.json",
                "inputs.json", "figures"} <= names
        manifest = json.loads((out / h / "manifest.json").read_text(encoding="utf-8"))
        assert manifest["command"] == "portfolio" and "inputs.json" in manifest["files"]
    assert not (out / BROKEN).exists()
    assert not list(out.glob(".*partial*"))  # no staging folder left
    table = out / TABLE_FOLDER
    assert {"portfolio.parquet", "portfolio.csv", "index.html", "manifest.json"} <= {
        p.name for p in table.iterdir()}
    # inputs untouched: nothing but the written survey files in each survey folder
    assert sorted(p.name for p in (parent / "house-a").rglob("*")) == [
        "outlines", "room-north.geojson", "room-north.npy", "survey.toml", "thermograms"]


def _best(measures):
    return max(measures, key=lambda m: m["annual_kwh_saved"])


def test_table_numbers_equal_each_results_json(first_run, portfolio_dirs):
    _, out = portfolio_dirs
    table = pd.read_parquet(out / TABLE_FOLDER / "portfolio.parquet")
    assert list(table.columns) == list(TABLE_COLUMNS)
    assert len(table) == 4
    by_id = table.set_index("house_id")
    for h in HOUSES:
        r = json.loads((out / h / "results.json").read_text(encoding="utf-8"))
        row = by_id.loc[h]
        hl = r["heat_loss"]
        # equal, not close: the table carries the results' numbers unchanged
        assert row["h_w_k"] == hl["h_w_k"]
        assert row["h_low95_w_k"] == hl["h_low95_w_k"]
        assert row["h_high95_w_k"] == hl["h_high95_w_k"]
        assert row["annual_kwh"] == hl["annual_kwh"]
        # one thermogram per survey: each element once, so the envelope is their net area
        names = {b["name"] for b in hl["by_element"]}
        area = sum(e["area_net_m2"] for e in r["elements"] if e["name"] in names)
        assert row["envelope_area_m2"] == pytest.approx(area, rel=1e-12)
        assert row["h_per_envelope_m2_w_m2k"] == pytest.approx(hl["h_w_k"] / area, rel=1e-12)
        for cls in CLASSES:
            n = sum(d["defect_class"] == cls for d in r["defects"])
            assert row[f"defects_{cls.replace(' ', '_')}"] == n
        best = _best(r["measures"])
        assert row["best_measure"] == best["name"]
        assert row["best_measure_annual_kwh_saved"] == best["annual_kwh_saved"]
        assert row["best_measure_payback_years"] == best["payback_years"]
        assert row["worst_risk"] == worst_risk(r)
        assert row["night_validity"] == "pass"  # conftest's night: 20 K, 1 m/s, dry, steady
        assert row["state"] == "assessed"
    assert by_id.loc[BROKEN, "state"] == "failed" and pd.isna(by_id.loc[BROKEN, "rank"])
    assert sorted(table["rank"].dropna().tolist()) == [1, 2, 3]
    csv = pd.read_csv(out / TABLE_FOLDER / "portfolio.csv")
    assert csv["house_id"].tolist() == table["house_id"].tolist()
    # CSV numbers keep 6 significant digits (float_format %.6g)
    np.testing.assert_allclose(csv["h_w_k"].to_numpy(float), table["h_w_k"].to_numpy(float),
                               rtol=5e-6)


@pytest.fixture(scope="module")
def existing_cluster():
    from distributed import LocalCluster

    with LocalCluster(n_workers=2, threads_per_worker=1, processes=True,
                      dashboard_address=None, silence_logs=50) as cluster:
        yield cluster.scheduler_address


def test_rerun_on_a_cluster_skips_the_assessed(first_run, portfolio_dirs, existing_cluster):
    parent, out = portfolio_dirs
    stamps = {h: (out / h / "results.json").stat().st_mtime_ns for h in HOUSES}
    res = _invoke([str(parent), "--out", str(out), "--scheduler", existing_cluster, "--json"])
    assert res.exit_code == 3, res.output
    summary = json.loads(res.stdout)
    assert (summary["assessed"], summary["up_to_date"]) == (0, 3)
    assert [f["house_id"] for f in summary["failed"]] == [BROKEN]
    assert summary["cluster"].startswith("2 workers at ")
    assert {h: (out / h / "results.json").stat().st_mtime_ns for h in HOUSES} == stamps
    table = pd.read_parquet(out / TABLE_FOLDER / "portfolio.parquet")
    assert set(table.loc[table["state"] == "up to date", "house_id"]) == set(HOUSES)


def test_inputs_record_follows_every_named_file(portfolio_dirs, tmp_path):
    from envelope.survey import load_survey

    src = tmp_path / "s"
    write_survey(src, FEW_DRAWS)
    before = inputs_record(load_survey(src))
    assert set(before["files"]) == {"survey.toml", "thermograms/room-north.npy",
                                    "outlines/room-north.geojson"}
    assert inputs_record(load_survey(src)) == before  # same inputs, same record
    np.save(src / "thermograms" / "room-north.npy", readings(9))
    after = inputs_record(load_survey(src))
    assert after["inputs_sha256"] != before["inputs_sha256"]
    assert after["files"]["survey.toml"] == before["files"]["survey.toml"]
    assert inputs_record(load_survey(src), draws=500)["options"]["draws"] == 500


# --------------------------------------------------------------------------------------
# which houses
# --------------------------------------------------------------------------------------


def test_entries_from_folders_and_a_list(portfolio_dirs, tmp_path):
    parent, _ = portfolio_dirs
    assert [e.house_id for e in collect_entries([parent])] == [*HOUSES, BROKEN]
    one = collect_entries([parent / "house-b"])
    assert [(e.house_id, e.survey) for e in one] == [("house-b", (parent / "house-b").resolve())]
    lst = tmp_path / "houses.csv"
    rel = Path("..") / parent.relative_to(tmp_path.parent) / "house-a"
    lst.write_text(f"\ufeffhouse_id,survey,note\nH-0001,{rel},first\n\n"
                   f"H-0002,{parent / 'house-c'},\n", encoding="utf-8")
    got = collect_entries([], lst)
    assert [(e.house_id, e.survey) for e in got] == [
        ("H-0001", (parent / "house-a").resolve()), ("H-0002", (parent / "house-c").resolve())]


@pytest.mark.parametrize(("text", "field", "words"), [
    ("house_id,folder\nh1,x\n", "header", "survey"),
    ("house_id,survey\nbad/id,{s}\n", "row 2: house_id", "not allowed"),
    ("house_id,survey\n.hidden,{s}\n", "row 2: house_id", "not starting with '.'"),
    ("house_id,survey\nPortfolio,{s}\n", "row 2: house_id", "reserved"),
    ("house_id,survey\nh1,{s}\nH1,{s}\n", "house id", "used twice"),
    ("house_id,survey\nh1,does-not-exist\n", "row 2: survey", "not found"),
    ("house_id,survey\n", "--list", "lists no house"),
])
def test_bad_lists_name_the_row(portfolio_dirs, tmp_path, text, field, words):
    parent, _ = portfolio_dirs
    lst = tmp_path / "houses.csv"
    lst.write_text(text.format(s=parent / "house-a"), encoding="utf-8")
    with pytest.raises(SurveyError) as info:
        collect_entries([], lst)
    assert info.value.field == field and words in str(info.value)


def test_out_inside_a_survey_is_refused_before_any_work(portfolio_dirs):
    parent, _ = portfolio_dirs
    out = parent / "house-a" / "out"
    res = _invoke([str(parent), "--out", str(out), "--quiet"])
    assert res.exit_code == 2
    assert "inputs are never written to" in res.stderr
    assert not out.exists()


def test_bad_draws_exit_2(portfolio_dirs, tmp_path):
    parent, _ = portfolio_dirs
    res = _invoke([str(parent), "--out", str(tmp_path / "o"), "--draws", "5"])
    assert res.exit_code == 2 and "--draws" in res.stderr
    assert not (tmp_path / "o").exists()


# --------------------------------------------------------------------------------------
# ranking and the written table (no cluster)
# --------------------------------------------------------------------------------------


def _results(risks, h, saved, payback, defects=()):
    return {"tool_version": "x", "survey": {"site": {"name": "S", "town": "T"}, "date": "d",
                                            "currency": "EUR"},
            "checks": [{"name": "wind", "status": "warn"}, {"name": "rain", "status": "pass"}],
            "heat_loss": {"h_w_k": h, "h_low95_w_k": 0.8 * h, "h_high95_w_k": 1.2 * h,
                          "annual_kwh": 50.0 * h, "annual_kwh_std": 5.0 * h,
                          "by_element": [{"name": "w", "h_w_k": h}]},
            "elements": [{"name": "w", "u_w_m2k": h / 100.0, "area_net_m2": 100.0, "risk": r}
                         for r in risks],
            "defects": [{"defect_class": c, "risk": "none"} for c in defects],
            "measures": [{"name": "m", "annual_kwh_saved": saved, "payback_years": payback}],
            "failures": []}


def _outcome(hid, results, state="assessed"):
    return HouseOutcome(hid, f"/s/{hid}", state, row=house_row(hid, f"/s/{hid}", results))


def test_ranking_risk_first_then_savings():
    outcomes = [
        _outcome("a-none-big", _results(["none"], 200.0, 900.0, 10.0)),
        _outcome("b-mould", _results(["none", "mould"], 100.0, 10.0, 50.0)),
        HouseOutcome("c-failed", "/s/c", "failed", error="broken"),
        _outcome("d-cond", _results(["condensation"], 90.0, 5.0, 80.0)),
        _outcome("e-none-small", _results(["none"], 300.0, 100.0, 5.0)),
        _outcome("f-unknown", _results(["not assessed"], 150.0, 1.0, 99.0)),
    ]
    t = rank_houses(outcomes)
    assert t["house_id"].tolist() == ["d-cond", "b-mould", "f-unknown", "a-none-big",
                                      "e-none-small", "c-failed"]
    assert t["rank"].tolist()[:5] == [1, 2, 3, 4, 5] and pd.isna(t["rank"].iloc[5])
    row = t.set_index("house_id").loc["b-mould"]
    assert row["worst_risk"] == "mould" and row["night_validity"] == "warn"
    assert row["night_checks_not_passed"] == "wind warn"
    assert row["h_per_envelope_m2_w_m2k"] == pytest.approx(1.0, rel=1e-12)  # 100 W/K / 100 m²


def test_written_table_and_pages_are_safe(tmp_path):
    evil = _results(["mould"], 120.0, 300.0, 12.0, defects=["air leakage", "air leakage"])
    evil["survey"]["site"]["name"] = '=HYPERLINK("x")<script>alert(1)</script>'
    outcomes = [_outcome("h1", evil), _outcome("h2", _results(["none"], 80.0, 50.0, 30.0)),
                HouseOutcome("h3", "/s/h3", "failed", error="<b>bad</b> survey.toml")]
    table = rank_houses(outcomes)
    write_table(table, tmp_path / "portfolio")
    folder = tmp_path / "portfolio"
    csv_text = (folder / "portfolio.csv").read_text(encoding="utf-8")
    assert "'=HYPERLINK" in csv_text  # formula cell neutralised (OWASP CSV injection)
    back = pd.read_parquet(folder / "portfolio.parquet")
    assert back.loc[0, "defects_air_leakage"] == 2 and back.loc[0, "house_id"] == "h1"
    for page in folder.glob("*.html"):
        html = page.read_text(encoding="utf-8")
        assert "<script" not in html and "&lt;script&gt;" in html
        assert "&lt;b&gt;bad&lt;/b&gt;" in html
        assert "–––" not in html  # an interval with no ends is left out, not drawn as dashes
    assert (folder / "charts" / "risk.png").read_bytes()[:4] == b"\x89PNG"
    write_table(table, folder)  # a second run replaces the portfolio's own table folder
    assert list(DEFECT_COLUMNS) == [f"defects_{c.replace(' ', '_')}" for c in CLASSES]
    assert DEFECT_CLASSES == CLASSES


# --------------------------------------------------------------------------------------
# the page in a browser
# --------------------------------------------------------------------------------------

FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
         "--disable-background-networking", "--disable-component-update", "--disable-sync"]
"""Headless Chromium flags of tests/test_browser.py."""


def find_chromium() -> str | None:
    import shutil

    for cand in (shutil.which("chromium"), "/usr/bin/chromium", shutil.which("chromium-browser")):
        if cand and Path(cand).is_file():
            return cand
    return None


PROBE = """<script>
window.addEventListener("load", function () {
  var imgs = Array.prototype.slice.call(document.images);
  var ok = imgs.length > 0 && imgs.every(function (i) { return i.complete && i.naturalWidth > 0; });
  document.body.dataset.imagesOk = ok ? "yes" : "no";
  document.body.dataset.overflowPx = String(document.documentElement.scrollWidth - window.innerWidth);
});
</script>"""


@pytest.mark.parametrize("width", [1280, 390])
def test_page_in_chromium(first_run, portfolio_dirs, tmp_path, width):
    import subprocess

    exe = find_chromium()
    if exe is None:
        import os

        if os.environ.get("CI"):
            pytest.fail("chromium not found, but CI is set: the CI script must install it")
        pytest.skip("chromium not installed")
    _, out = portfolio_dirs
    page = out / TABLE_FOLDER / "index.html"

    def chrome(*args):
        return subprocess.run([exe, *FLAGS, f"--user-data-dir={tmp_path / 'profile'}",
                               f"--window-size={width},1600", *args], capture_output=True,
                              text=True, timeout=120, check=False)

    html = page.read_text(encoding="utf-8")
    assert "<script" not in html  # the shipped page runs nothing
    # a copy with a probe script: images load, no sideways scroll; the page's own CSP plus
    # script-src, so a refused image or style shows on the console as it would without it
    csp = re.search(r'http-equiv="Content-Security-Policy" content="([^"]*)"', html).group(1)
    assert "script-src" not in csp
    probed = tmp_path / "probed.html"
    probed.write_text(html.replace(csp, csp + "; script-src &#39;unsafe-inline&#39;")
                      .replace("</body>", PROBE + "</body>"), encoding="utf-8")
    dom = chrome("--enable-logging=stderr", "--v=0", "--dump-dom", probed.as_uri())
    console = [ln for ln in dom.stderr.splitlines() if ":CONSOLE" in ln or "Uncaught" in ln]
    assert console == [], console
    assert "<table" in dom.stdout and "house-a" in dom.stdout
    body = re.search(r"<body[^>]*>", dom.stdout).group(0)
    assert 'data-images-ok="yes"' in body, body
    overflow = int(re.search(r'data-overflow-px="(-?\d+)"', body).group(1))
    assert overflow <= 0, f"page scrolls sideways by {overflow} px at {width} px"


def test_no_house_row_numbers_invented():
    row = house_row("x", "/s/x", {"survey": {}, "heat_loss": None, "elements": [],
                                  "defects": [], "measures": [], "checks": [], "failures": []})
    assert row["h_w_k"] is None and row["h_per_envelope_m2_w_m2k"] is None
    assert row["worst_risk"] == "not assessed" and row["best_measure"] is None
    assert not any(isinstance(v, float) and math.isnan(v) for v in row.values())


def test_a_folder_the_portfolio_did_not_write_is_left_alone(tmp_path):
    from envelope.folders import staged_folder
    from envelope.portfolio_house import HouseTask, run_house

    src = write_survey(tmp_path / "s", FEW_DRAWS)
    by_assess = tmp_path / "out" / "h1"
    with staged_folder(by_assess, command="assess") as tmp:  # as `envelope assess` leaves it
        (tmp / "results.json").write_text("{}", encoding="utf-8")
    foreign = tmp_path / "out" / "h2"
    foreign.mkdir()
    (foreign / "notes.txt").write_text("mine", encoding="utf-8")
    for hid, folder, replace, words in (("h1", by_assess, False, "--replace"),
                                        ("h2", foreign, False, "--replace"),
                                        ("h2", foreign, True, "not written by envelope")):
        before = sorted((p.name, p.stat().st_mtime_ns) for p in folder.iterdir())
        o = run_house(HouseTask(hid, str(src), str(folder), draws=100, replace=replace))
        assert o.state == "failed" and words in o.error, o.error
        assert sorted((p.name, p.stat().st_mtime_ns) for p in folder.iterdir()) == before
