"""The portfolio pages and charts (edge: writes HTML and PNG).

The pages hold no script: the Content-Security-Policy allows none. The table is sorted on the
server: ``index.html`` in the portfolio ranking (risk first, then savings) and one page per
other ordering, each column heading linking to its page; the whole table is offered as CSV
and Parquet beside the pages. Charts are PNG (matplotlib, drawn without pyplot), written to
``charts/`` and embedded as data URIs so that each page is self-contained. Every value from
the surveys reaches the page through Jinja2's autoescaping.
"""

from __future__ import annotations

import base64
import math
from pathlib import Path

__all__ = ["ORDERINGS", "TABLE_COLUMNS", "fmt", "interval", "render_page", "write_charts",
           "write_pages"]

DEFECT_COLUMNS = (
    "defects_linear_thermal_bridge", "defects_repeating_thermal_bridge",
    "defects_missing_insulation", "defects_air_leakage", "defects_unexplained",
)
"""One column per class of `envelope.defects.CLASSES` (spaces as ``_``)."""

TABLE_COLUMNS = (
    "rank", "house_id", "state", "site", "town", "date", "worst_risk",
    "h_w_k", "h_low95_w_k", "h_high95_w_k", "envelope_area_m2",
    "h_per_envelope_m2_w_m2k", "h_per_envelope_m2_low95_w_m2k",
    "h_per_envelope_m2_high95_w_m2k", "annual_kwh", "annual_kwh_std", *DEFECT_COLUMNS,
    "best_measure", "best_measure_annual_kwh_saved", "best_measure_annual_kwh_saved_low95",
    "best_measure_annual_kwh_saved_high95", "best_measure_annual_money_saved",
    "best_measure_cost", "best_measure_payback_years", "currency", "night_validity",
    "night_checks_not_passed", "failed_views", "tool_version", "survey", "error", "warnings",
)
"""Columns of ``portfolio.parquet`` / ``portfolio.csv``, in order (units in the names)."""

ORDERINGS = {
    # key: (file, column, largest first, heading)
    "rank": ("index.html", "rank", False, "ranking (risk, then savings)"),
    "house": ("by-house.html", "house_id", False, "house id"),
    "h_per_m2": ("by-h-per-m2.html", "h_per_envelope_m2_w_m2k", True,
                 "H per m² of envelope, largest first"),
    "annual_kwh": ("by-annual-kwh.html", "annual_kwh", True, "annual energy, largest first"),
    "saving": ("by-saving.html", "best_measure_annual_kwh_saved", True,
               "best measure's saving, largest first"),
    "payback": ("by-payback.html", "best_measure_payback_years", False,
                "best measure's payback, shortest first"),
}
"""The pages: one per ordering of the table (no script sorts it in the browser)."""

RISK_WORDS = {"condensation": "condensation", "mould": "mould", "not assessed": "not assessed",
              "none": "none found"}
CHARTS = ("h-per-m2.png", "risk.png", "saving-payback.png")
CSP = "default-src 'none'; img-src data:; style-src 'unsafe-inline'"
MAX_BAR_HOUSES = 40


def _num(v) -> float | None:
    try:
        x = float(v)
    except (TypeError, ValueError):
        return None
    return x if math.isfinite(x) else None


def fmt(value, digits: int = 1) -> str:
    """A number with `digits` decimals and thousands separators; an en dash when missing."""
    x = _num(value)
    return "–" if x is None else f"{x:,.{digits}f}"


def interval(low, high, digits: int = 1) -> str:
    """``low–high`` for a 95 % interval, or nothing when either end is missing."""
    if _num(low) is None or _num(high) is None:
        return ""
    return f"{fmt(low, digits)}–{fmt(high, digits)}"


def _records(table) -> list[dict]:
    rows = table.astype(object).where(table.notna(), None).to_dict("records")
    return rows


# --------------------------------------------------------------------------------------
# charts
# --------------------------------------------------------------------------------------


def _chart(width_in: float, height_in: float):
    """A chart figure of the given size [in] with one axes, laid out tightly."""
    from .plots.common import new_figure, style

    with style():
        fig = new_figure(width_in * 25.4, height_in * 25.4)
        fig.set_layout_engine("tight")
        return fig, fig.add_subplot()


def write_charts(table, folder: Path) -> dict[str, Path]:
    """Three PNG charts of the portfolio into ``folder/charts``; returns them by name.

    ``h-per-m2.png``: H per m² of envelope with its 95 % interval, the houses with the
    largest values (bars up to `MAX_BAR_HOUSES` houses, else a histogram); ``risk.png``:
    houses by worst risk; ``saving-payback.png``: each house's best measure, annual energy
    saved against simple payback.
    """
    import numpy as np
    from matplotlib import colormaps

    from .plots.common import save

    folder = Path(folder) / "charts"
    rows = [r for r in _records(table) if r["state"] != "failed"]
    paths = {}
    colours = colormaps["viridis"](np.linspace(0.15, 0.85, 4))
    risk_colour = dict(zip(("none", "not assessed", "mould", "condensation"), colours, strict=True))

    per = [(r["house_id"], _num(r["h_per_envelope_m2_w_m2k"]),
            _num(r["h_per_envelope_m2_low95_w_m2k"]), _num(r["h_per_envelope_m2_high95_w_m2k"]))
           for r in rows if _num(r["h_per_envelope_m2_w_m2k"]) is not None]
    if len(per) <= MAX_BAR_HOUSES:
        per.sort(key=lambda p: p[1])
        fig, ax = _chart(7.5, 1.4 + 0.28 * max(len(per), 1))
        if per:
            y = np.arange(len(per))
            v = np.array([p[1] for p in per])
            lo = np.array([p[2] if p[2] is not None else p[1] for p in per])
            hi = np.array([p[3] if p[3] is not None else p[1] for p in per])
            ax.barh(y, v, color=colours[1], height=0.6)
            ax.errorbar(v, y, xerr=[v - lo, hi - v], fmt="none", ecolor="black", capsize=3,
                        lw=1)
            ax.set_yticks(y, [p[0] for p in per])
        else:
            ax.text(0.5, 0.5, "no house with a heat-loss coefficient", ha="center",
                    transform=ax.transAxes)
    else:
        fig, ax = _chart(7.5, 4.0)
        ax.hist([p[1] for p in per], bins=30, color=colours[1])
        ax.set_ylabel("houses")
    ax.set_xlabel("H per m² of assessed envelope [W/(m²·K)], 95 % interval")
    ax.set_title("Heat-loss coefficient per m² of envelope")
    paths["h-per-m2.png"] = save(fig, folder / "h-per-m2.png")

    fig, ax = _chart(7.5, 3.2)
    cats = ["condensation", "mould", "not assessed", "none"]
    counts = [sum(r["worst_risk"] == c for r in rows) for c in cats]
    failed = sum(r["state"] == "failed" for r in _records(table))
    labels = [RISK_WORDS[c] for c in cats] + ["survey failed"]
    ax.barh(np.arange(5), [*counts, failed],
            color=[risk_colour[c] for c in cats] + ["#9aa3ad"], height=0.6)
    ax.set_yticks(np.arange(5), labels)
    ax.invert_yaxis()
    ax.set_xlabel("houses")
    ax.set_title("Houses by worst condensation / mould risk")
    paths["risk.png"] = save(fig, folder / "risk.png")

    fig, ax = _chart(7.5, 4.4)
    pts = [(_num(r["best_measure_payback_years"]), _num(r["best_measure_annual_kwh_saved"]),
            r["worst_risk"]) for r in rows]
    pts = [p for p in pts if p[0] is not None and p[1] is not None and p[0] > 0]
    for cat in cats:
        sel = [p for p in pts if p[2] == cat]
        if sel:
            ax.scatter([p[0] for p in sel], [p[1] for p in sel], color=risk_colour[cat],
                       label=f"worst risk: {RISK_WORDS[cat]}", s=28, edgecolors="black",
                       linewidths=0.4)
    if pts:
        from matplotlib.ticker import FuncFormatter

        ax.set_xscale("log")
        # plain numbers: the figures' text is never parsed as math (plots.common.save)
        ax.xaxis.set_major_formatter(FuncFormatter(lambda v, _pos: f"{v:g}"))
        ax.xaxis.set_minor_formatter(FuncFormatter(lambda v, _pos: ""))
        ax.legend(fontsize="small")
    else:
        ax.text(0.5, 0.5, "no measure with a payback", ha="center", transform=ax.transAxes)
    ax.set_xlabel("simple payback of the best measure [years]")
    ax.set_ylabel("energy saved [kWh/yr]")
    ax.set_title("Best measure of each house")
    paths["saving-payback.png"] = save(fig, folder / "saving-payback.png")
    return paths


# --------------------------------------------------------------------------------------
# pages
# --------------------------------------------------------------------------------------


def _environment():
    """The reports' template environment, with the table's number filters on an overlay."""
    from .report.write import environment

    env = environment().overlay()
    env.filters["fmt"] = fmt
    env.globals["interval"] = interval
    return env


def _sorted(rows: list[dict], column: str, descending: bool) -> list[dict]:
    have = [r for r in rows if r.get(column) is not None]
    missing = [r for r in rows if r.get(column) is None]
    have.sort(key=lambda r: r[column], reverse=descending)
    return have + missing


def render_page(table, ordering: str = "rank", charts: dict[str, bytes] | None = None) -> str:
    """One portfolio page as HTML text: the table in `ordering` (a key of `ORDERINGS`).

    Parameters
    ----------
    table : pandas.DataFrame
        The ranked portfolio table (`envelope.portfolio.rank_houses`).
    ordering : str
        Key of `ORDERINGS`.
    charts : dict, optional
        PNG bytes by chart file name; embedded as data URIs.
    """
    from . import __version__
    from .report.homeowner import CAUTIONS

    if ordering not in ORDERINGS:
        raise ValueError(f"unknown ordering {ordering!r}; expected one of {', '.join(ORDERINGS)}")
    file, column, descending, heading = ORDERINGS[ordering]
    rows = _records(table)
    ok = [r for r in rows if r["state"] != "failed"]
    failed = [r for r in rows if r["state"] == "failed"]
    images = [{"uri": "data:image/png;base64," + base64.b64encode(data).decode("ascii"),
               "name": name} for name, data in (charts or {}).items()]
    states = {s: sum(r["state"] == s for r in rows) for s in ("assessed", "up to date", "failed")}
    currencies = sorted({r["currency"] for r in ok if r.get("currency")})
    return _environment().get_template("portfolio.html").render(
        csp=CSP, version=__version__, title=f"Portfolio of {len(rows)} houses — {heading}",
        rows=_sorted(ok, column, descending), failed=failed, images=images,
        orderings={k: (v[0], v[3]) for k, v in ORDERINGS.items()}, current=ordering,
        heading=heading, states=states, houses=len(rows), risk_words=RISK_WORDS,
        partial=sum(1 for r in ok if (r.get("failed_views") or 0) > 0),
        currency=currencies[0] if len(currencies) == 1 else "",
        defect_columns=[(c, c.removeprefix("defects_").replace("_", " ")) for c in DEFECT_COLUMNS],
        cautions=CAUTIONS)


def write_pages(table, folder: Path) -> list[Path]:
    """The charts and one page per ordering into `folder` (normally a staging folder)."""
    folder = Path(folder)
    charts = {name: p.read_bytes() for name, p in write_charts(table, folder).items()}
    written = []
    for key, (file, *_rest) in ORDERINGS.items():
        p = folder / file
        p.write_text(render_page(table, key, charts), encoding="utf-8")
        written.append(p)
    return written
