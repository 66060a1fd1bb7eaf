"""The three pages in headless Chromium: at 1280 and 390 CSS px without console or network
errors, every image loaded, no sideways scrolling, no script; the builder's sheet printed
to one A4 page for the demo and for a 20-element survey. Screenshots of the demo's pages are
written to ``tests/artifacts/`` (regenerated on every run, for a person to look at).

Chromium is driven over its DevTools pipe (`tests/chromium.py`): the page state is read by
the protocol, since the pages themselves allow no script. Skipped when no Chromium is
installed, except under CI (environment variable ``CI`` set), where a missing browser is a
failure: the CI script installs it.
"""

from __future__ import annotations

import os
from pathlib import Path

import pypdf
import pytest
from chromium import Browser, find_chromium

from envelope.report import write_reports

HOUSE = Path(__file__).resolve().parents[1] / "example_house"
ARTIFACTS = Path(__file__).parent / "artifacts"
PAGES = ("report", "check", "summary")
WIDTHS = (1280, 390)
# ISO 216 A4: 210 mm x 297 mm = 595.3 pt x 841.9 pt (1 pt = 25.4/72 mm); Chromium rounds the
# page to whole device pixels, hence 1 pt tolerance
A4_PT = (595.3, 841.9)


@pytest.fixture(scope="module")
def browser(tmp_path_factory):
    exe = find_chromium()
    if exe is None:
        if os.environ.get("CI"):
            pytest.fail("chromium not found, but CI is set: the CI script must install it")
        pytest.skip("chromium not installed")
    b = Browser(exe, tmp_path_factory.mktemp("chromium-profile"))
    yield b
    b.close()


@pytest.fixture(scope="module")
def demo(tmp_path_factory):
    """The demo survey assessed and written out (fewer Monte Carlo draws: layout only)."""
    import dataclasses

    from envelope.assess import assess_survey
    from envelope.outputs import write_outputs
    from envelope.survey import load_survey

    survey = load_survey(HOUSE)
    survey = dataclasses.replace(survey, analysis=dataclasses.replace(
        survey.analysis, monte_carlo_draws=1000))
    out = tmp_path_factory.mktemp("demo-pages")
    write_outputs(assess_survey(survey), out)
    return out


def _page_ok(state, where):
    assert state["errors"] == [], (where, state["errors"])
    broken = [src for src, ok in state["images"] if not ok]
    assert broken == [], (where, broken)
    assert state["scripts"] == 0, where
    assert "script-src 'none'" in state["csp"], where
    assert state["scrollWidth"] <= state["innerWidth"], (where, state["scrollWidth"])


@pytest.mark.slow
@pytest.mark.parametrize("page", PAGES)
def test_demo_pages_render_at_desktop_and_phone_width(browser, demo, page):
    ARTIFACTS.mkdir(exist_ok=True)
    url = (demo / f"{page}.html").resolve().as_uri()
    for width in WIDTHS:
        state = browser.open(url, width)
        _page_ok(state, (page, width))
        assert len(state["images"]) >= (1 if page == "report" else 2)
        shot = ARTIFACTS / f"{page}-{width}.png"
        browser.screenshot(shot)
        assert shot.stat().st_size > 10_000


def _printed_pages(browser, html: Path, pdf: Path) -> pypdf.PdfReader:
    browser.open(html.resolve().as_uri(), 1280)
    browser.pdf(pdf)
    return pypdf.PdfReader(pdf)


@pytest.mark.slow
def test_demo_builder_sheet_prints_on_one_a4_page(browser, demo, tmp_path):
    reader = _printed_pages(browser, demo / "check.html", tmp_path / "check.pdf")
    assert len(reader.pages) == 1
    box = reader.pages[0].mediabox
    assert float(box.width) == pytest.approx(A4_PT[0], abs=1.0)
    assert float(box.height) == pytest.approx(A4_PT[1], abs=1.0)
    assert "Insulation check, as built" in reader.pages[0].extract_text()


def test_builder_sheet_of_20_elements_prints_on_one_a4_page(browser, survey20_results,
                                                           tmp_path):
    paths = write_reports(survey20_results, tmp_path / "out")
    state = browser.open(paths["check"].resolve().as_uri(), 390)
    _page_ok(state, "check 390, 20 elements")
    reader = _printed_pages(browser, paths["check"], tmp_path / "check.pdf")
    assert len(reader.pages) == 1
    import re
    import unicodedata

    text = unicodedata.normalize("NFKC", reader.pages[0].extract_text())  # "ﬂ" ligature → "fl"
    assert len(set(re.findall(r"\(flat-(\d\d)\)", text))) == 20


def test_small_survey_pages_render(browser, small_run):
    _, _, out = small_run
    for page in PAGES:
        for width in WIDTHS:
            _page_ok(browser.open((out / f"{page}.html").resolve().as_uri(), width),
                     (page, width))


@pytest.mark.slow
def test_demo_summary_pdf_has_at_most_four_pages(demo):
    reader = pypdf.PdfReader(demo / "summary.pdf")
    assert 1 <= len(reader.pages) <= 4
