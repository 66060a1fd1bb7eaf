"""Tests of the reports: self-contained, escaped, complete, PDF of 2-4 pages.

The fixture is `tests/data/results_small.json`: an invented survey in the results-schema
shape (version 1); figures are small PNGs drawn here.
"""

from __future__ import annotations

import base64
import copy
import json
import re
from pathlib import Path

import matplotlib.pyplot as plt
import numpy as np
import pypdf
import pytest

from envelope.report import (
    CAUTIONS,
    about_range,
    esc,
    measures_table,
    top_fixes,
    write_reports,
)

DATA = Path(__file__).parent / "data" / "results_small.json"
EVIL = "<script>alert(1)</script>"


def load_results() -> dict:
    return json.loads(DATA.read_text(encoding="utf-8"))


def make_figures(results: dict, figures_dir: Path) -> None:
    rng = np.random.default_rng(1)
    figures_dir.mkdir(parents=True, exist_ok=True)
    for t in results["thermograms"]:
        for rel in (t.get("figures") or {}).values():
            plt.imsave(figures_dir / Path(rel).name, rng.random((24, 32)), cmap="inferno")


@pytest.fixture(scope="module")
def written(tmp_path_factory):
    out = tmp_path_factory.mktemp("out")
    results = load_results()
    make_figures(results, out / "figures")
    paths = write_reports(results, out, out / "figures")
    return results, out, paths


def text_of(path: Path) -> str:
    return path.read_text(encoding="utf-8")


def test_all_four_files_and_charts(written):
    _, out, paths = written
    for key in ("report", "check", "summary_html", "summary_pdf"):
        assert paths[key].is_file() and paths[key].stat().st_size > 1000
    assert (out / "figures" / "savings.png").is_file()
    assert (out / "figures" / "heat-loss.png").is_file()


def test_self_contained_images_are_data_uris(written):
    results, out, paths = written
    for key in ("report", "check", "summary_html"):
        page = text_of(paths[key])
        srcs = re.findall(r'src="([^"]*)"', page)
        assert srcs, key
        assert all(s.startswith("data:image/png;base64,") for s in srcs), key
        assert "http://" not in page and "https://" not in page
        assert "<link" not in page
    # the embedded bytes are the figure file's bytes (base64 of RFC 4648, stdlib)
    page = text_of(paths["report"])
    first = re.search(r'src="data:image/png;base64,([^"]*)"', page).group(1)
    t1 = out / "figures" / "T1-outlines.png"
    assert base64.b64decode(first) == t1.read_bytes()


def test_auditor_sections_units_and_words(written):
    _, _, paths = written
    page = text_of(paths["report"])
    for heading in ("Survey night", "Validity of the night", "Thermograms",
                    "Elements and U-values", "Defects, ranked", "Heat loss", "Retrofit case",
                    "Uncertainty budget", "Method and references", "Cautions"):
        assert f"<h2>{heading}</h2>" in page
    # status in words, not colours alone
    assert "PASS" in page and "WARNING" in page and "FAILED" in page
    # failed thermogram listed with its error
    assert "row 14 has 319 values" in page
    for ref in ("Sakuma", "ISO 6946", "Churchill", "ISO 9869-1", "ISO 13788", "O&#x27;Grady",
                "Asdrubali", "JCGM 101", "Fokaides", "Albatici"):
        assert ref in page, ref
    assert "W/(m²·K)" in page and "kWh/yr" in page and "W/K" in page
    assert "elongated (aspect 9.1)" in page  # defect reasons shown
    assert "@media print" in page


def test_builder_sheet(written):
    _, _, paths = written
    page = text_of(paths["check"])
    assert "@page{size:A4 portrait" in page
    assert "INCONCLUSIVE" in page and "PASS" in page
    assert "north wall" in page and "extension wall" in page
    # only elements with a specified U are checked: the window has none
    assert "kitchen window" not in page.split("<table>")[1].split("</table>")[0]
    # overall line: worst of pass / inconclusive -> inconclusive
    overall = re.search(r"<b>Overall:</b>(.*?)</p>", page).group(1)
    assert "INCONCLUSIVE" in overall
    assert "86 %" in page  # coverage share 0.86


def test_homeowner_summary_plain_words_and_ranges(written):
    results, _, paths = written
    page = text_of(paths["summary_html"])
    # fixture: fixes that remove a risk first (seal window frame: condensation, payback
    # 8.4 yr; floor junction: mould, 53.1 yr), then best value (extension patch 22.5 yr
    # before the north wall 40 yr)
    order = [f["measure"]["name"] for f in top_fixes(results)]
    assert order == ["seal window frame", "insulate floor junction", "top up extension patch"]
    assert page.index("seal window frame") < page.index("insulate floor junction")
    # ranges: seal kWh 30..84 -> 2 significant figures "30 to 84"; price 0.25 EUR/kWh
    # (47.5/190 in the fixture) -> money 7.5..21, shown as whole units: "8 to 21"
    assert "about 30 to 84 kWh" in page
    assert "about 8 to 21 EUR" in page
    assert "U-value (heat lost through each square metre" in page
    assert "What mould risk means for you" in page
    for caution in CAUTIONS:
        assert esc(caution) in page
    fixes = page.split("The fixes worth most")[1].split("What mould risk")[0]
    assert fixes.count("<img ") == 3


def test_pdf_pages_and_cautions(written):
    _, _, paths = written
    reader = pypdf.PdfReader(paths["summary_pdf"])
    assert 2 <= len(reader.pages) <= 4
    text = " ".join(" ".join(p.extract_text() for p in reader.pages).split())
    assert "Thermography indicates; it does not prove." in text
    assert "made safe" in text and "Mould is a health matter" in text
    assert "licensed practitioners have the last word" in text
    assert "about 30 to 84 kWh" in text


def test_pdf_rerun_is_byte_identical(tmp_path, written):
    results, out, paths = written
    again = tmp_path / "again"
    make_figures(results, again / "figures")
    write_reports(results, again, again / "figures")
    assert (again / "summary.pdf").read_bytes() == paths["summary_pdf"].read_bytes()


def test_survey_strings_are_escaped(tmp_path):
    results = load_results()
    results["elements"][0]["name"] = EVIL
    results["defects"][0]["element"] = EVIL
    results["defects"][0]["reasons"].append(EVIL)
    results["survey"]["site"]["name"] = EVIL
    results["survey"]["surveyor"] = '"><img src=x onerror=alert(2)>'
    results["checks"][0]["rule"] = EVIL
    results["measures"][0]["name"] = EVIL
    results["notes"].append("cost $5 & 10 % <b>bold</b>")
    make_figures(results, tmp_path / "figures")
    paths = write_reports(results, tmp_path, tmp_path / "figures")
    for key in ("report", "check", "summary_html"):
        page = text_of(paths[key])
        assert EVIL not in page, key
        assert "<img src=x" not in page, key
        assert "&lt;script&gt;alert(1)&lt;/script&gt;" in page, key
        # the only script is the page's own image check
        assert page.count("<script>") == 1, key
    assert "&lt;b&gt;bold&lt;/b&gt;" in text_of(paths["report"])
    # the PDF prints the name as typed (no markup there), and still builds
    assert 2 <= len(pypdf.PdfReader(paths["summary_pdf"]).pages) <= 4


def test_reports_cope_with_a_sparse_survey(tmp_path):
    results = {"schema": "envelope-results", "schema_version": 2, "survey": {},
               "elements": None, "defects": [], "heat_loss": None, "measures": None}
    paths = write_reports(results, tmp_path, tmp_path / "figures")
    assert "No element has a specified U" in text_of(paths["check"])
    assert "n/a" in text_of(paths["report"])
    assert 2 <= len(pypdf.PdfReader(paths["summary_pdf"]).pages) <= 4


def test_missing_figure_is_listed_not_fatal(tmp_path):
    results = load_results()
    paths = write_reports(results, tmp_path, tmp_path / "figures")  # no PNGs drawn
    assert "figure not available: figures/T1-defects.png" in text_of(paths["report"])
    # a figure path that leaves the output folder is refused
    results = copy.deepcopy(results)
    results["thermograms"][0]["figures"]["overlay"] = "../../etc/passwd"
    page = text_of(write_reports(results, tmp_path, tmp_path / "figures")["report"])
    assert "root:" not in page


def test_measures_table_and_about_range():
    frame = measures_table(load_results())
    assert len(frame) == 5 and frame["measure"].iloc[-1] == "all measures together"
    assert about_range(123.0, 178.0, "EUR") == "about 120 to 180 EUR"
    assert about_range(-5.0, 40.0) == "about 0 to 40"


def test_charts_accept_energy_dataclasses(tmp_path):
    from envelope.energy import heat_loss_coefficient
    from envelope.plots.energy import heat_loss_chart, savings_chart
    from envelope.retrofit import EnergyPrices, Measure, evaluate_measures

    walls = [("wall", 1.5, 0.1, 40.0), ("roof", 0.6, 0.05, 30.0)]
    ms = [Measure("lining", "add_layer", elements=("wall",), thickness_m=0.05,
                  conductivity_w_mk=0.035, cost=3000.0)]
    res = evaluate_measures(ms, walls, [], EnergyPrices(0.25, 0.9, 0.2, "EUR"), 2200.0)
    p1 = savings_chart(res, tmp_path / "s.png", "EUR")
    p2 = heat_loss_chart(heat_loss_coefficient(walls), None, tmp_path / "h.png")
    for p in (p1, p2):
        assert p.read_bytes().startswith(b"\x89PNG\r\n\x1a\n")  # PNG signature, RFC 2083
