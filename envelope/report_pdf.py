"""Homeowner summary as a PDF (matplotlib `PdfPages`, A4 portrait, 2-4 pages).

Text is laid out with ``fig.text`` (wrapped with `textwrap`, math parsing off so survey
strings print as typed) and pictures with ``fig.add_axes().imshow``. TrueType fonts are
embedded (``pdf.fonttype`` 42) so the text can be searched and extracted; the creation date
is left out so that reruns give the same bytes.
"""

from __future__ import annotations

import textwrap
from collections.abc import Callable, Mapping
from pathlib import Path

import matplotlib
import matplotlib.image as mpimg
from matplotlib.backends.backend_pdf import PdfPages
from matplotlib.figure import Figure

from envelope.report import CAUTIONS, about_range, fmt, get, money_range, top_fixes
from envelope.report_html import MOULD_TEXT, fix_text, found_lines

PAGE_W_IN, PAGE_H_IN = 8.27, 11.69  # A4 portrait [in]
MARGIN_IN = 0.75
MAX_PAGES = 4


class _Layout:
    """A top-to-bottom cursor over A4 pages of a `PdfPages` file."""

    def __init__(self, pdf: PdfPages, footer: str):
        self.pdf, self.footer = pdf, footer
        self.fig = None
        self.pages = 0
        self.y = 0.0
        self.new_page()

    @property
    def width_in(self) -> float:
        return PAGE_W_IN - 2 * MARGIN_IN

    def new_page(self):
        self.flush()
        self.fig = Figure(figsize=(PAGE_W_IN, PAGE_H_IN))
        self.pages += 1
        self.y = PAGE_H_IN - MARGIN_IN
        self.fig.text(0.5, 0.4 / PAGE_H_IN, f"{self.footer} - page {self.pages}",
                      ha="center", fontsize=8, color="#555555", parse_math=False)

    def flush(self):
        if self.fig is not None:
            self.pdf.savefig(self.fig)
            self.fig = None

    def room(self, height_in: float):
        if self.y - height_in < MARGIN_IN:
            self.new_page()

    def text(self, txt: str, size: float = 10.0, bold: bool = False, gap_in: float = 0.08,
             indent_in: float = 0.0, bullet: str = ""):
        chars = max(20, int((self.width_in - indent_in) * 72 / (size * 0.55)))
        lines = textwrap.wrap(str(txt), chars) or [""]
        line_h = size * 1.38 / 72
        self.room(min(len(lines), 3) * line_h)
        for k, line in enumerate(lines):
            self.room(line_h)
            x = MARGIN_IN + indent_in
            if bullet and k == 0:
                self.fig.text((x - 0.18) / PAGE_W_IN, self.y / PAGE_H_IN, bullet,
                              fontsize=size, va="top", parse_math=False)
            self.fig.text(x / PAGE_W_IN, self.y / PAGE_H_IN, line, fontsize=size, va="top",
                          fontweight="bold" if bold else "normal", parse_math=False)
            self.y -= line_h
        self.y -= gap_in

    def heading(self, txt: str, size: float = 13.0):
        self.room(0.9)
        self.y -= 0.1
        self.text(txt, size=size, bold=True, gap_in=0.06)

    def image(self, path: Path | None, max_h_in: float = 2.7):
        if path is None:
            self.text("(picture not available)", size=9)
            return
        img = mpimg.imread(str(path))
        h_px, w_px = img.shape[:2]
        h = min(max_h_in, self.width_in * h_px / w_px)
        w = h * w_px / h_px
        self.room(h + 0.1)
        ax = self.fig.add_axes((MARGIN_IN / PAGE_W_IN, (self.y - h) / PAGE_H_IN,
                                w / PAGE_W_IN, h / PAGE_H_IN))
        ax.imshow(img, interpolation="antialiased")
        ax.set_axis_off()
        self.y -= h + 0.15


def summary_pdf(results: Mapping, path: Path,
                image_path: Callable[[str | None], Path | None]) -> Path:
    """Write the homeowner summary PDF (A4, 2-4 pages) to `path`.

    Parameters
    ----------
    results : mapping
        The results dict (schema version 1).
    path : path
        PDF to write.
    image_path : callable
        Maps a figure path of the results to a PNG file (or None when missing).
    """
    s = results.get("survey") or {}
    site = s.get("site") or {}
    cur = s.get("currency") or ""
    name = site.get("name") or "your home"
    meta = {"Title": f"Heat survey summary: {name}", "Creator": "envelope",
            "Producer": "envelope", "CreationDate": None}
    with matplotlib.rc_context({"pdf.fonttype": 42, "font.family": "DejaVu Sans"}), \
            PdfPages(path, metadata=meta) as pdf:
        doc = _Layout(pdf, f"Heat survey summary: {name}")
        doc.text("Your home's heat survey", size=20, bold=True, gap_in=0.1)
        place = ", ".join(str(x) for x in (name, site.get("address"), site.get("town")) if x)
        doc.text(place, size=11)
        doc.text(f"Surveyed on {s.get('date') or 'n/a'} by {s.get('surveyor') or 'n/a'}.",
                 size=10, gap_in=0.2)
        doc.heading("What we found")
        for line in found_lines(results)[:10]:
            doc.text(line, size=10, indent_in=0.25, bullet="-")
        doc.heading("The fixes worth most")
        doc.text("Each picture is a thermal image: the marked outlines are the problem "
                 "spots, numbered by rank.", size=9)
        for i, item in enumerate(top_fixes(results), 1):
            t = fix_text(item, cur)
            doc.room(3.6)
            doc.text(f"{i}. {t['title']}", size=11.5, bold=True, gap_in=0.04)
            doc.text(t["body"], size=10)
            tid = item.get("thermogram")
            rel = None
            for tg in results.get("thermograms") or []:
                if tid is not None and str(tg.get("id")) == str(tid):
                    rel = get(tg, "figures", "defects")
            doc.image(image_path(rel))
        pkg = results.get("package")
        if pkg:
            lo, hi = money_range(pkg)
            doc.text(f"All fixes together: {about_range(lo, hi, cur)} a year for about "
                     f"{fmt(pkg.get('cost'), 0, cur)}.", size=10.5, bold=True, gap_in=0.15)
        doc.heading("What mould risk means for you")
        doc.text(MOULD_TEXT, size=10)
        doc.heading("Please read")
        for line in CAUTIONS:
            doc.text(line, size=10, indent_in=0.25, bullet="-")
        if doc.pages < 2:
            doc.new_page()
            doc.text("This page is left for your notes.", size=9)
        doc.flush()
    return Path(path)
