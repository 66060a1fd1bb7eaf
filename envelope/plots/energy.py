"""Energy charts from the results: where the heat goes, and what each measure saves."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from pathlib import Path

import numpy as np

from envelope.labels import element_label
from envelope.plots.common import KIND_COLOURS, OKABE_ITO, new_figure, save, style

__all__ = ["heat_loss_chart", "savings_chart"]


def _as_mapping(obj) -> Mapping:
    if obj is None or isinstance(obj, Mapping):
        return obj
    if hasattr(obj, "to_dict"):
        return obj.to_dict()
    raise TypeError(f"expected a mapping or an object with to_dict(), got {type(obj)!r}")


def _num(value, default=0.0) -> float:
    try:
        out = float(value)
    except (TypeError, ValueError):
        return default
    return out if np.isfinite(out) else default


def savings_chart(measures: Sequence, path: str | Path, currency: str = "",
                  labels: Mapping | None = None, width_mm: float = 170.0) -> Path:
    """Horizontal bars of delivered energy saved [kWh/yr] with 95 % range whiskers.

    Parameters
    ----------
    measures : sequence of mapping or MeasureResult
        Keys ``name``, ``kind``, ``annual_kwh_saved``, ``annual_kwh_saved_low95``,
        ``annual_kwh_saved_high95``, ``annual_money_saved``; a ``kind == "package"`` row is
        drawn apart, in another colour.
    path : path
        PNG to write.
    currency : str
        Label of the money figures.
    labels : mapping, optional
        Measure name → text to show (default: the name).
    width_mm : float
        Print width [mm].

    Returns
    -------
    Path
    """
    rows = [_as_mapping(m) for m in measures]
    rows = sorted(rows, key=lambda m: (m.get("kind") != "package", _num(m.get("annual_kwh_saved"))))
    n = max(len(rows), 1)
    with style():
        fig = new_figure(width_mm, 16.0 + 6.5 * n)
        ax = fig.add_axes((0.36, 12.0 / (16.0 + 6.5 * n), 0.5, (6.5 * n) / (16.0 + 6.5 * n)))
        if not rows:
            ax.text(0.5, 0.5, "no measures proposed", ha="center", va="center",
                    transform=ax.transAxes)
            ax.set_axis_off()
            return save(fig, path)
        y = np.arange(len(rows))
        kwh = np.array([_num(m.get("annual_kwh_saved")) for m in rows])
        lo = np.array([_num(m.get("annual_kwh_saved_low95"), k) for m, k in zip(rows, kwh, strict=True)])
        hi = np.array([_num(m.get("annual_kwh_saved_high95"), k) for m, k in zip(rows, kwh, strict=True)])
        colours = [OKABE_ITO["orange"] if m.get("kind") == "package" else OKABE_ITO["blue"]
                   for m in rows]
        ax.barh(y, kwh, color=colours, edgecolor="black", linewidth=0.4, height=0.62)
        err = np.vstack([np.clip(kwh - np.clip(lo, 0, None), 0, None), np.clip(hi - kwh, 0, None)])
        ax.errorbar(kwh, y, xerr=err, fmt="none", ecolor="black", capsize=2.5, linewidth=0.8)
        names = [str((labels or {}).get(m.get("name"), m.get("name", ""))) for m in rows]
        ax.set_yticks(y, names)
        for t in ax.get_yticklabels():
            t.set_parse_math(False)
        span = max(float(np.max(hi)), float(np.max(kwh)), 1.0)
        for yi, m, h in zip(y, rows, hi, strict=True):
            money = m.get("annual_money_saved")
            if money is not None:
                ax.text(max(h, 0) + 0.02 * span, yi, f"{_num(money):,.0f} {currency}/yr",
                        va="center", fontsize=8, parse_math=False)
        ax.set_xlim(0.0, span * 1.3)
        ax.set_xlabel("delivered energy saved [kWh/yr]; whiskers: 95 % interval")
        ax.grid(axis="x", alpha=0.3)
        return save(fig, path)


def _rows(heat_loss: Mapping, kinds: Mapping) -> list[tuple[str, str, float]]:
    out: dict[str, float] = {}
    for row in heat_loss.get("by_element") or []:
        if isinstance(row, Mapping):
            name, h = row.get("name"), row.get("h_w_k")
        else:
            name, h = row
        out[str(name)] = out.get(str(name), 0.0) + _num(h)
    rows = [(name, kinds.get(name, "wall"), h) for name, h in out.items()]
    rows.append(("junctions and defects", "junctions and defects",
                 _num(heat_loss.get("h_defects_w_k"))))
    return rows


def heat_loss_chart(heat_loss_before, heat_loss_after, path: str | Path,
                    kinds: Mapping | None = None, labels: Mapping | None = None,
                    width_mm: float = 170.0) -> Path:
    """Bars of each element's share of the heat-loss coefficient H [W/K], largest first.

    Parameters
    ----------
    heat_loss_before : mapping or HeatLoss
        ``by_element`` (list of ``{"name", "h_w_k"}``) and ``h_defects_w_k``.
    heat_loss_after : mapping or HeatLoss or None
        The state after all measures: a black tick on each bar that changes.
    path : path
        PNG to write.
    kinds : mapping, optional
        Element name → kind (wall, window, roof, ceiling, floor, door): the bar colour.
    labels : mapping, optional
        Element name → human label.
    width_mm : float
        Print width [mm].

    Returns
    -------
    Path
    """
    kinds = dict(kinds or {})
    before = _rows(_as_mapping(heat_loss_before), kinds)
    before.sort(key=lambda r: r[2])
    after = {n: h for n, _, h in _rows(_as_mapping(heat_loss_after), kinds)} \
        if heat_loss_after is not None else {}
    total = sum(h for _, _, h in before) or 1.0
    n = len(before)
    height = 20.0 + 5.2 * n
    with style():
        fig = new_figure(width_mm, height)
        ax = fig.add_axes((0.3, 14.0 / height, 0.5, 5.2 * n / height))
        y = np.arange(n)
        ax.barh(y, [h for *_, h in before], height=0.66, edgecolor="black", linewidth=0.4,
                color=[KIND_COLOURS.get(k, OKABE_ITO["blue"]) for _, k, _ in before])
        names = [n_ if k == "junctions and defects" else
                 str((labels or {}).get(n_) or element_label(n_)) for n_, k, _ in before]
        ax.set_yticks(y, names)
        for t in ax.get_yticklabels():
            t.set_parse_math(False)
        top = max(h for *_, h in before) or 1.0
        for yi, (name, _, h) in zip(y, before, strict=True):
            ax.text(h + 0.01 * top, yi, f"{h:.1f} W/K ({100 * h / total:.0f} %)", va="center",
                    fontsize=8)
            if name in after and abs(after[name] - h) > 1e-6:
                ax.plot([after[name]] * 2, [yi - 0.38, yi + 0.38], color="black", lw=1.6)
        ax.set_xlim(0, top * 1.35)
        ax.set_xlabel(f"heat-loss coefficient H [W/K]; total {total:.1f} W/K")
        ax.grid(axis="x", alpha=0.3)
        from matplotlib.lines import Line2D
        from matplotlib.patches import Patch

        present = list(dict.fromkeys(k for _, k, _ in before))
        handles = [Patch(fc=KIND_COLOURS.get(k, OKABE_ITO["blue"]), ec="black", lw=0.4,
                         label=k) for k in present]
        if after:
            handles.append(Line2D([], [], color="black", lw=1.6, label="after all measures"))
        ax.legend(handles=handles, loc="lower right", frameon=True, framealpha=0.9)
        return save(fig, path)
