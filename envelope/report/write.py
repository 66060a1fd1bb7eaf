"""Render the three pages from Jinja2 templates (autoescaped) and the homeowner PDF from the
same HTML with WeasyPrint (edge: writes files).

Every page carries a Content-Security-Policy that allows no scripts and loads images only
from the page's own folder or data URIs; the PDF renderer fetches only PNGs of the output
folder (`Figures.fetcher`).
"""

from __future__ import annotations

import functools
from collections.abc import Mapping
from pathlib import Path

from envelope.report.auditor import auditor_context
from envelope.report.builder import builder_context
from envelope.report.figures import Figures, draw_charts
from envelope.report.homeowner import CAUTIONS, homeowner_context

__all__ = ["CSP", "environment", "render_pages", "write_reports", "write_pdf"]

CSP = ("default-src 'none'; img-src 'self' data:; style-src 'unsafe-inline'; "
       "script-src 'none'; base-uri 'none'; form-action 'none'")
"""Content-Security-Policy of every page: no scripts, no network, images from the folder."""


@functools.cache
def environment():
    """The Jinja2 environment of the package's templates (HTML autoescaped, strict)."""
    import jinja2

    return jinja2.Environment(
        loader=jinja2.PackageLoader("envelope.report", "templates"),
        autoescape=jinja2.select_autoescape(["html"]),
        undefined=jinja2.StrictUndefined, trim_blocks=True, lstrip_blocks=True)


def _survey_head(results: Mapping) -> dict:
    s = results.get("survey") or {}
    site = s.get("site") or {}
    return {"site": site.get("name") or "unnamed site",
            "place": ", ".join(str(x) for x in (site.get("address"), site.get("town")) if x),
            "date": s.get("date") or "", "surveyor": s.get("surveyor") or "",
            "client": s.get("client") or ""}


def render_pages(results: Mapping, figs: Figures, charts: Mapping[str, str]) -> dict[str, str]:
    """The three pages as HTML text: ``{"report", "check", "summary"}``."""
    env = environment()
    common = {"csp": CSP, "version": results.get("tool_version") or "",
              "schema": f"{results.get('schema', 'envelope-results')} "
                        f"v{results.get('schema_version', '?')}",
              "s": _survey_head(results), "cautions": CAUTIONS}
    site = common["s"]["site"]
    return {
        "report": env.get_template("report.html").render(
            title=f"Fabric survey: {site}", c=auditor_context(results, figs, charts), **common),
        "check": env.get_template("check.html").render(
            title=f"Insulation check, as built: {site}", c=builder_context(results, figs),
            **common),
        "summary": env.get_template("summary.html").render(
            title=f"Your home's heat survey: {site}", c=homeowner_context(results, figs),
            **common),
    }


def write_pdf(html: str, base: Path, figs: Figures, path: Path) -> Path:
    """Render `html` to a PDF with WeasyPrint; only the output folder's PNGs are fetched.

    WeasyPrint's warnings about the screen-only CSS it does not read (media features,
    scrolling) are silenced for the call: they are expected and would reach the terminal.
    """
    import logging

    from weasyprint import HTML

    log = logging.getLogger("weasyprint")
    level = log.level
    log.setLevel(logging.ERROR)
    try:
        doc = HTML(string=html, base_url=str(Path(base).resolve()) + "/",
                   url_fetcher=figs.fetcher())
        doc.write_pdf(path)
    finally:
        log.setLevel(level)
    return Path(path)


def write_reports(results: Mapping, out_dir: Path, figures_dir: Path | None = None, *,
                  embed: bool = False) -> dict[str, Path]:
    """Write the auditor report, builder sheet and homeowner summary (HTML and PDF).

    Parameters
    ----------
    results : mapping
        The results dict (schema ``envelope-results`` v2). Missing keys are shown as
        "n/a" or their part is left out; keys of later versions are shown when present.
    out_dir : path
        Folder receiving ``report.html``, ``check.html``, ``summary.html`` and
        ``summary.pdf``.
    figures_dir : path, optional
        Folder of the figures named ``figures/<name>`` in the results; default
        ``out_dir/figures``. The energy charts are drawn into it.
    embed : bool
        Put the figures into the pages as data URIs (single self-contained files) instead
        of linking them.

    Returns
    -------
    dict of str to Path
        ``{"report", "check", "summary_html", "summary_pdf"}``.
    """
    out_dir = Path(out_dir)
    figures_dir = Path(figures_dir) if figures_dir is not None else out_dir / "figures"
    out_dir.mkdir(parents=True, exist_ok=True)
    figures_dir.mkdir(parents=True, exist_ok=True)
    charts = draw_charts(results, figures_dir)
    figs = Figures(out_dir, figures_dir, embed=embed)
    pages = render_pages(results, figs, charts)
    paths = {"report": out_dir / "report.html", "check": out_dir / "check.html",
             "summary_html": out_dir / "summary.html", "summary_pdf": out_dir / "summary.pdf"}
    paths["report"].write_text(pages["report"], encoding="utf-8")
    paths["check"].write_text(pages["check"], encoding="utf-8")
    paths["summary_html"].write_text(pages["summary"], encoding="utf-8")
    write_pdf(pages["summary"], out_dir, figs, paths["summary_pdf"])
    return paths
