"""Reports (edge: I/O): auditor report, builder sheet, homeowner summary (HTML and PDF).

`write_reports` reads the results dict (schema ``envelope-results`` version 1), draws the
energy charts, embeds every figure as a base64 data URI (the HTML files are self-contained,
no network) and writes ``report.html``, ``check.html``, ``summary.html`` and
``summary.pdf``. Every string that comes from the survey is escaped before it reaches HTML.
This module holds the pieces shared by the HTML (`envelope.report_html`) and PDF
(`envelope.report_pdf`) writers: escaping, number formatting, figure loading, tables and the
cautions.
"""

from __future__ import annotations

import base64
import html
import math
from collections.abc import Mapping
from pathlib import Path

import pandas as pd

MAX_FIGURE_BYTES = 20 * 1024 * 1024
"""Largest PNG embedded in a report [bytes]; larger files are listed, not embedded."""

PNG_MAGIC = b"\x89PNG\r\n\x1a\n"

CAUTIONS = (
    "Thermography indicates; it does not prove. Confirm what a thermal image suggests by "
    "opening up, inspecting or measuring the heat flux before paying for expensive work.",
    "A fan depressurisation test can pull flue gases back into the house from "
    "open-flue appliances such as gas fires, boilers or wood stoves. Such tests belong to "
    "trained people, with those appliances switched off and made safe first.",
    "Roofs and ladders, electrical equipment and gas equipment carry hazards of their own: "
    "leave them to people trained and equipped for them.",
    "Mould is a health matter, not only a building one: damp, mouldy rooms can harm "
    "breathing, above all for children, older people and anyone with asthma.",
    "Energy, cost and carbon figures are estimates from one survey night, invented or "
    "user-given prices and typical weather; your bills will differ.",
    "Local building codes and licensed practitioners have the last word on any work.",
)

STATUS_WORDS = {"pass": "PASS", "warn": "WARNING", "fail": "FAIL"}
STATUS_MARKS = {"pass": "\u2713", "warn": "!", "fail": "\u2717"}
VERDICT_WORDS = {"pass": "PASS", "fail": "FAIL", "inconclusive": "INCONCLUSIVE"}
RISK_WORDS = {
    "none": "no risk found",
    "mould": "mould risk",
    "condensation": "condensation risk (and mould)",
}


class Markup(str):
    """A string that is already safe HTML (built by this package, never from the survey)."""


def esc(value) -> Markup:
    """HTML-escape `value` (any type) unless it is already `Markup`."""
    if isinstance(value, Markup):
        return value
    return Markup(html.escape("" if value is None else str(value), quote=True))


def is_num(value) -> bool:
    """True for a finite real number (bools excluded)."""
    return (isinstance(value, int | float) and not isinstance(value, bool)
            and math.isfinite(value))


def fmt(value, digits: int = 2, unit: str = "", missing: str = "n/a") -> str:
    """Format a number with `digits` decimals and a unit; `missing` for None/NaN/text."""
    if not is_num(value):
        return value if isinstance(value, str) and value else missing
    text = f"{value:,.{digits}f}"
    return f"{text} {unit}".rstrip() if unit else text


def pct(share, digits: int = 0, missing: str = "n/a") -> str:
    """A fraction 0-1 as a percentage text."""
    return f"{100.0 * share:.{digits}f} %" if is_num(share) else missing


def nice_round(value: float) -> float:
    """Round to two significant figures (for plain-language ranges)."""
    if not is_num(value) or value == 0:
        return 0.0
    mag = 10 ** (math.floor(math.log10(abs(value))) - 1)
    return round(value / mag) * mag


def about_range(lo, hi, unit: str = "") -> str:
    """Plain range text, e.g. ``about 120 to 180 EUR``; negative low ends show as 0."""
    if not (is_num(lo) and is_num(hi)):
        return "not estimated"
    lo_r, hi_r = nice_round(max(lo, 0.0)), nice_round(max(hi, 0.0))
    unit = f" {unit}" if unit else ""
    if lo_r == hi_r:
        return f"about {lo_r:,.0f}{unit}"
    return f"about {lo_r:,.0f} to {hi_r:,.0f}{unit}"


def get(mapping, *keys, default=None):
    """Nested lookup that copes with missing keys and None at any level."""
    cur = mapping
    for key in keys:
        if not isinstance(cur, Mapping):
            return default
        cur = cur.get(key)
        if cur is None:
            return default
    return cur


# --------------------------------------------------------------------------------------
# figures
# --------------------------------------------------------------------------------------


def figure_file(rel: str | None, out_dir: Path, figures_dir: Path) -> Path | None:
    """Locate a figure named in the results (path relative to `out_dir`).

    Looks in `figures_dir` first (the figures may still sit in a build folder), then under
    `out_dir`. Absolute paths and paths leaving those folders are refused (None).
    """
    if not rel:
        return None
    rel_path = Path(str(rel))
    if rel_path.is_absolute() or ".." in rel_path.parts:
        return None
    parts = rel_path.parts[1:] if rel_path.parts[:1] == ("figures",) else rel_path.parts
    for base, sub in ((figures_dir, Path(*parts) if parts else None), (out_dir, rel_path)):
        if base is None or sub is None:
            continue
        cand = Path(base) / sub
        if cand.is_file():
            return cand
    return None


def png_data_uri(path: Path | None) -> str | None:
    """``data:image/png;base64,...`` for a PNG file, or None when missing/not PNG/too big."""
    if path is None or not path.is_file() or path.stat().st_size > MAX_FIGURE_BYTES:
        return None
    data = path.read_bytes()
    if not data.startswith(PNG_MAGIC):
        return None
    return "data:image/png;base64," + base64.b64encode(data).decode("ascii")


# --------------------------------------------------------------------------------------
# tables and selections shared by HTML and PDF
# --------------------------------------------------------------------------------------


def measures_table(results: Mapping) -> pd.DataFrame:
    """Measures and the package as a table with readable headers (units in the names)."""
    from .results import measures_table as table

    return table(results).rename(columns={
        "name": "measure", "annual_kwh_saved": "saved [kWh/yr]",
        "annual_kwh_saved_low95": "saved low [kWh/yr]", "annual_kwh_saved_high95": "saved high [kWh/yr]",
        "annual_money_saved": "money [/yr]", "annual_co2_saved_kg": "CO2 [kg/yr]",
        "payback_years": "payback [yr]"})


def elements_table(results: Mapping) -> pd.DataFrame:
    """Elements with U, interval, fRsi and verdict, readable headers (units in the names)."""
    from .results import elements_table as table

    return table(results).rename(columns={
        "name": "element", "area_net_m2": "area [m2]", "u_w_m2k": "U [W/m2K]",
        "u_low95_w_m2k": "U low95 [W/m2K]", "u_high95_w_m2k": "U high95 [W/m2K]",
        "frsi_min": "fRsi min [-]", "u_specified_w_m2k": "U specified [W/m2K]"})


def money_range(measure: Mapping) -> tuple[float | None, float | None]:
    """Yearly money range from the kWh range and the measure's price per kWh."""
    money, kwh = measure.get("annual_money_saved"), measure.get("annual_kwh_saved")
    lo, hi = measure.get("annual_money_saved_low95"), measure.get("annual_money_saved_high95")
    if is_num(lo) and is_num(hi):
        return lo, hi
    if not (is_num(money) and is_num(kwh)) or kwh == 0:
        return (money, money) if is_num(money) else (None, None)
    price = money / kwh
    k_lo, k_hi = measure.get("annual_kwh_saved_low95"), measure.get("annual_kwh_saved_high95")
    return (k_lo * price if is_num(k_lo) else money, k_hi * price if is_num(k_hi) else money)


def thermogram_of(results: Mapping, target: str) -> str | None:
    """Thermogram id that shows a measure's target (a defect id or an element name)."""
    for d in results.get("defects") or []:
        if str(d.get("id")) == str(target):
            return d.get("thermogram")
    for e in results.get("elements") or []:
        if str(e.get("name")) == str(target):
            return e.get("thermogram")
    return None


def top_fixes(results: Mapping, n: int = 3) -> list[dict]:
    """The `n` most valuable fixes for the homeowner.

    Order: measures that remove a mould or condensation risk first, then the best value for
    money (shortest simple payback), then the largest yearly saving. Each item:
    ``{"measure", "thermogram", "defects"}``. Without measures, the top-ranked defects stand
    in (``measure`` None).
    """
    defects = {str(d.get("id")): d for d in results.get("defects") or []}

    def key(m):
        targets = [str(t) for t in m.get("targets") or []]
        risky = any(defects.get(t, {}).get("risk") in ("mould", "condensation") for t in targets)
        pay = m.get("payback_years")
        money = m.get("annual_money_saved")
        return (not risky, pay if is_num(pay) else math.inf,
                -(money if is_num(money) else -math.inf))

    measures = sorted(results.get("measures") or [], key=key)
    out = []
    for m in measures[:n]:
        targets = [str(t) for t in m.get("targets") or []]
        tg = next((thermogram_of(results, t) for t in targets if thermogram_of(results, t)),
                  None)
        out.append({"measure": m, "thermogram": tg,
                    "defects": [defects[t] for t in targets if t in defects]})
    if not out:
        ranked = sorted(defects.values(), key=lambda d: d.get("rank") or math.inf)
        out = [{"measure": None, "thermogram": d.get("thermogram"), "defects": [d]}
               for d in ranked[:n]]
    return out


def thermogram_figure(results: Mapping, tg_id: str | None, kind: str) -> str | None:
    """Relative path of a thermogram's figure of `kind` ("defects", "overlay"...)."""
    for t in results.get("thermograms") or []:
        if tg_id is not None and str(t.get("id")) == str(tg_id):
            return get(t, "figures", kind)
    return None


def overall_verdict(results: Mapping) -> str | None:
    """Worst verdict over the elements with a specification (fail > inconclusive > pass)."""
    verdicts = [e.get("verdict") for e in results.get("elements") or []
                if e.get("u_specified_w_m2k") is not None and e.get("verdict")]
    for word in ("fail", "inconclusive", "pass"):
        if word in verdicts:
            return word
    return None


# --------------------------------------------------------------------------------------
# entry point
# --------------------------------------------------------------------------------------


def draw_charts(results: Mapping, figures_dir: Path) -> dict[str, Path]:
    """Draw the heat-loss and savings charts into `figures_dir` when data allow."""
    from envelope.plots.energy import heat_loss_chart, savings_chart

    out = {}
    heat = results.get("heat_loss")
    if isinstance(heat, Mapping) and heat.get("by_element"):
        out["heat_loss"] = heat_loss_chart(heat, results.get("heat_loss_after"),
                                           Path(figures_dir) / "heat-loss.png")
    measures = list(results.get("measures") or [])
    if measures:
        if results.get("package"):
            measures.append(results["package"])
        out["savings"] = savings_chart(measures, Path(figures_dir) / "savings.png",
                                       get(results, "survey", "currency", default=""))
    return out


def write_reports(results: Mapping, out_dir: Path, figures_dir: Path) -> dict[str, Path]:
    """Write the auditor report, builder sheet and homeowner summary.

    Parameters
    ----------
    results : mapping
        The results dict (schema ``envelope-results``, version 1). Missing or None keys are
        shown as "n/a" or their section is left out.
    out_dir : path
        Folder receiving ``report.html``, ``check.html``, ``summary.html``, ``summary.pdf``.
    figures_dir : path
        Folder holding the figure PNGs named in the results (``figures/<name>.png`` is
        looked up as ``figures_dir/<name>.png``); the energy charts are drawn into it.

    Returns
    -------
    dict of str to Path
        ``{"report", "check", "summary_html", "summary_pdf"}``.
    """
    from envelope import report_html, report_pdf

    out_dir, figures_dir = Path(out_dir), Path(figures_dir)
    out_dir.mkdir(parents=True, exist_ok=True)
    figures_dir.mkdir(parents=True, exist_ok=True)
    charts = draw_charts(results, figures_dir)

    def image(rel: str | None) -> str | None:
        return png_data_uri(figure_file(rel, out_dir, figures_dir))

    def image_path(rel: str | None) -> Path | None:
        return figure_file(rel, out_dir, figures_dir)

    chart_uris = {k: png_data_uri(p) for k, p in charts.items()}
    paths = {
        "report": out_dir / "report.html",
        "check": out_dir / "check.html",
        "summary_html": out_dir / "summary.html",
        "summary_pdf": out_dir / "summary.pdf",
    }
    paths["report"].write_text(report_html.auditor_html(results, image, chart_uris),
                               encoding="utf-8")
    paths["check"].write_text(report_html.builder_html(results, image), encoding="utf-8")
    paths["summary_html"].write_text(report_html.summary_html(results, image),
                                     encoding="utf-8")
    report_pdf.summary_pdf(results, paths["summary_pdf"], image_path)
    return paths
