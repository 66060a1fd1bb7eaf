"""Energy figures: savings of the retrofit measures and the heat-loss breakdown."""

from __future__ import annotations

from collections.abc import Mapping, Sequence
from pathlib import Path

import numpy as np
from matplotlib import colormaps

from envelope.plots.common import new_figure, save


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


def savings_chart(measures: Sequence, path: str | Path, currency: str = "") -> Path:
    """Horizontal bars of delivered energy saved [kWh/yr] with 95 % range whiskers.

    Parameters
    ----------
    measures : sequence of mapping or MeasureResult
        Keys ``name``, ``annual_kwh_saved``, ``annual_kwh_saved_low95``, ``annual_kwh_saved_high95``,
        ``annual_money_saved``.
    path : path
        PNG to write.
    currency : str
        Label of the money figures.

    Returns
    -------
    Path
    """
    rows = [_as_mapping(m) for m in measures]
    rows = sorted(rows, key=lambda m: _num(m.get("annual_kwh_saved")))
    n = max(len(rows), 1)
    fig, ax = new_figure((7.5, 1.2 + 0.55 * n), layout="tight")
    if not rows:
        ax.text(0.5, 0.5, "no measures proposed", ha="center", va="center",
                transform=ax.transAxes)
        ax.set_axis_off()
        return save(fig, path)
    y = np.arange(len(rows))
    kwh = np.array([_num(m.get("annual_kwh_saved")) for m in rows])
    lo = np.array([_num(m.get("annual_kwh_saved_low95"), k) for m, k in zip(rows, kwh, strict=True)])
    hi = np.array([_num(m.get("annual_kwh_saved_high95"), k) for m, k in zip(rows, kwh, strict=True)])
    colours = colormaps["cividis"](np.linspace(0.25, 0.85, len(rows)))
    ax.barh(y, kwh, color=colours, edgecolor="black", linewidth=0.5)
    err = np.vstack([np.clip(kwh - lo, 0, None), np.clip(hi - kwh, 0, None)])
    ax.errorbar(kwh, y, xerr=err, fmt="none", ecolor="black", capsize=4, linewidth=1)
    ax.set_yticks(y, [str(m.get("name", "")) for m in rows])
    span = max(float(np.max(hi)), float(np.max(kwh)), 1.0)
    for yi, m, h in zip(y, rows, hi, strict=True):
        money = m.get("annual_money_saved")
        label = f"{_num(money):,.0f} {currency}/yr" if money is not None else ""
        ax.text(max(h, 0) + 0.02 * span, yi, label, va="center", fontsize=9)
    ax.set_xlim(min(0.0, float(np.min(lo)) * 1.1), span * 1.3)
    ax.axvline(0, color="black", linewidth=0.8)
    ax.set_xlabel("Delivered energy saved [kWh/yr] (whiskers: 95 % range)")
    ax.set_title("Retrofit measures: yearly saving")
    ax.grid(axis="x", alpha=0.3)
    return save(fig, path)


def _parts(heat_loss: Mapping) -> dict[str, float]:
    parts: dict[str, float] = {}
    for row in heat_loss.get("by_element") or []:
        if isinstance(row, Mapping):
            name, h = row.get("name"), row.get("h_w_k")
        else:
            name, h = row
        parts[str(name)] = parts.get(str(name), 0.0) + _num(h)
    parts["defects and bridges"] = _num(heat_loss.get("h_defects_w_k"))
    return parts


def heat_loss_chart(heat_loss_before, heat_loss_after, path: str | Path) -> Path:
    """Stacked bars of the heat-loss coefficient H [W/K] by element plus defects.

    Parameters
    ----------
    heat_loss_before : mapping or HeatLoss
        ``by_element`` (list of ``{"name", "h_w_k"}``) and ``h_defects_w_k``.
    heat_loss_after : mapping or HeatLoss or None
        The state after the measures; None draws the surveyed state only.
    path : path
        PNG to write.

    Returns
    -------
    Path
    """
    states = [("as surveyed", _parts(_as_mapping(heat_loss_before)))]
    if heat_loss_after is not None:
        states.append(("after all measures", _parts(_as_mapping(heat_loss_after))))
    names = list(dict.fromkeys(k for _, p in states for k in p))
    colours = colormaps["viridis"](np.linspace(0.05, 0.95, len(names)))
    fig, ax = new_figure((7.5, 1.8 + 0.9 * len(states)), layout="tight")
    y = np.arange(len(states))[::-1]
    left = np.zeros(len(states))
    for name, colour in zip(names, colours, strict=True):
        widths = np.array([p.get(name, 0.0) for _, p in states])
        ax.barh(y, widths, left=left, color=colour, edgecolor="white", linewidth=0.8,
                label=name)
        left += widths
    for yi, total in zip(y, left, strict=True):
        ax.text(total, yi, f"  H = {total:.1f} W/K", va="center", fontsize=9)
    ax.set_yticks(y, [s for s, _ in states])
    ax.set_xlim(0, max(float(left.max()), 1.0) * 1.3)
    ax.set_xlabel("Heat-loss coefficient H [W/K]")
    ax.set_title("Where the heat goes: H by element")
    ax.legend(loc="upper center", bbox_to_anchor=(0.5, -0.22), ncol=3, fontsize=8,
              frameon=False)
    return save(fig, path)
