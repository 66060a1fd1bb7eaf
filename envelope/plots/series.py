"""Running U of a time series (ISO 9869-1 average method), to judge convergence by eye."""

from __future__ import annotations

from pathlib import Path

import numpy as np

from envelope.plots.common import new_figure, save


def series_figure(series: dict, path: str | Path) -> Path:
    """Running average-method U against time, with the final value and its 95 % interval.

    Parameters
    ----------
    series : dict
        One entry of ``results["series"]`` (``times_h``, ``u_running_w_m2k``, ``u_w_m2k``,
        optional ``u_low95_w_m2k`` / ``u_high95_w_m2k``, ``element``).
    path : str or Path
        Output PNG.
    """
    t = np.asarray(series.get("times_h") or [], dtype=float)
    u = np.asarray(series.get("u_running_w_m2k") or [], dtype=float)
    fig, ax = new_figure((7.0, 3.4), layout="tight")
    ax.plot(t, u, color="#3b528b", marker="o", ms=3, lw=1.4, label="running U (average method)")
    final = series.get("u_w_m2k")
    lo, hi = series.get("u_low95_w_m2k"), series.get("u_high95_w_m2k")
    if final is not None:
        ax.axhline(final, color="#21918c", lw=1.0, ls="--", label=f"final U = {final:.2f} W/(m²·K)")
    if lo is not None and hi is not None and t.size:
        ax.axhspan(lo, hi, color="#5ec962", alpha=0.18, label="95 % interval (systematic inputs)")
    ax.set_xlabel("time since the first frame [h]")
    ax.set_ylabel("U [W/(m²·K)]")
    ax.set_title(f"{series.get('element', '')} — time series")
    ax.grid(alpha=0.3)
    ax.legend(fontsize=7, loc="best")
    return save(fig, path)
