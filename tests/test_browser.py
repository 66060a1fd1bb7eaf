"""Render the reports in headless Chromium: screenshot not blank, all images loaded, no
console errors.

Skipped when no Chromium is installed, except under CI (environment variable ``CI`` set),
where a missing browser is a failure: the CI script installs it.
"""

from __future__ import annotations

import json
import os
import re
import shutil
import subprocess
from pathlib import Path

import matplotlib.image as mpimg
import matplotlib.pyplot as plt
import numpy as np
import pytest

from envelope.report import write_reports

DATA = Path(__file__).parent / "data" / "results_small.json"
ARTIFACTS = Path(__file__).parent / "artifacts"
FLAGS = ["--headless", "--no-sandbox", "--disable-gpu", "--disable-quic", "--no-first-run",
         "--disable-background-networking", "--disable-component-update", "--disable-sync"]


def find_chromium() -> str | None:
    for cand in (shutil.which("chromium"), "/usr/bin/chromium",
                 shutil.which("chromium-browser")):
        if cand and Path(cand).is_file():
            return cand
    return None


@pytest.fixture(scope="module")
def chromium():
    exe = find_chromium()
    if exe is None:
        if os.environ.get("CI"):
            pytest.fail("chromium not found, but CI is set: the CI script must install it")
        pytest.skip("chromium not installed")
    return exe


@pytest.fixture(scope="module")
def reports(tmp_path_factory):
    out = tmp_path_factory.mktemp("browser")
    results = json.loads(DATA.read_text(encoding="utf-8"))
    rng = np.random.default_rng(2)
    (out / "figures").mkdir()
    for t in results["thermograms"]:
        for rel in (t.get("figures") or {}).values():
            plt.imsave(out / "figures" / Path(rel).name, rng.random((40, 60)), cmap="inferno")
    return write_reports(results, out, out / "figures")


def run(exe: str, profile: Path, *args: str) -> subprocess.CompletedProcess:
    return subprocess.run([exe, *FLAGS, f"--user-data-dir={profile}", *args],
                          capture_output=True, text=True, timeout=120, check=False)


@pytest.mark.parametrize("key", ["report", "summary_html"])
def test_report_renders(chromium, reports, key, tmp_path):
    page = reports[key]
    url = page.resolve().as_uri()
    ARTIFACTS.mkdir(exist_ok=True)
    shot = ARTIFACTS / f"{page.stem}.png"
    shot.unlink(missing_ok=True)
    run(chromium, tmp_path / "p1", f"--screenshot={shot}", "--window-size=1200,2000", url)
    assert shot.is_file(), "no screenshot written"
    img = mpimg.imread(shot)[..., :3]
    # non-blank: not one flat colour, and a fair share of non-white (text, tables, figures)
    assert float(img.std()) > 0.05
    assert float((img.min(axis=2) < 0.9).mean()) > 0.02

    dom = run(chromium, tmp_path / "p2", "--enable-logging=stderr", "--v=0", "--dump-dom", url)
    body = re.search(r"<body[^>]*>", dom.stdout)
    assert body, "no DOM dumped"
    assert 'data-images-ok="yes"' in body.group(0), body.group(0)
    count = int(re.search(r'data-images-count="(\d+)"', body.group(0)).group(1))
    assert count >= 3
    console = [ln for ln in dom.stderr.splitlines() if ":CONSOLE" in ln or "Uncaught" in ln]
    assert console == [], console


def test_builder_sheet_prints_on_one_a4_page(chromium, reports, tmp_path):
    import pypdf

    pdf = tmp_path / "check.pdf"
    run(chromium, tmp_path / "p3", "--no-pdf-header-footer", f"--print-to-pdf={pdf}",
        reports["check"].resolve().as_uri())
    reader = pypdf.PdfReader(pdf)
    assert len(reader.pages) == 1
    # ISO 216 A4: 210 mm x 297 mm = 595.3 pt x 841.9 pt (1 pt = 25.4/72 mm); Chromium
    # rounds to whole device pixels, hence 1 pt tolerance
    box = reader.pages[0].mediabox
    assert float(box.width) == pytest.approx(595.3, abs=1.0)
    assert float(box.height) == pytest.approx(841.9, abs=1.0)
