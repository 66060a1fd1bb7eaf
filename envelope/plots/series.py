"""Running U of a time series (ISO 9869-1 average method), to judge convergence by eye, with
the dynamic method's U and its interval beside it when the series carries them."""

from __future__ import annotations

from pathlib import Path

import numpy as np

from envelope.labels import element_label
from envelope.plots.common import OKABE_ITO, new_figure, save, style

__all__ = ["series_figure"]


def series_figure(series: dict, path: str | Path, width_mm: float = 170.0) -> Path:
    """Running average-method U against time, with the final value and its 95 % interval.

    Parameters
    ----------
    series : dict
        One entry of ``results["series"]`` (``times_h``, ``u_running_w_m2k``, ``u_w_m2k``,
        optional ``u_low95_w_m2k`` / ``u_high95_w_m2k``, ``u_dynamic_w_m2k`` with
        ``u_dynamic_low95_w_m2k`` / ``u_dynamic_high95_w_m2k``, ``element``, ``converged``).
    path : str or Path
        Output PNG.
    width_mm : float
        Print width [mm].
    """
    t = np.asarray(series.get("times_h") or [], dtype=float)
    u = np.asarray(series.get("u_running_w_m2k") or [], dtype=float)
    with style():
        fig = new_figure(width_mm, 72.0)
        ax = fig.add_axes((0.09, 0.33, 0.88, 0.58))
        ax.plot(t, u, color=OKABE_ITO["blue"], marker="o", ms=2.5, lw=1.2,
                label="running U (average method)")
        final = series.get("u_w_m2k")
        lo, hi = series.get("u_low95_w_m2k"), series.get("u_high95_w_m2k")
        if final is not None:
            ax.axhline(final, color=OKABE_ITO["vermillion"], lw=1.0, ls="--",
                       label=f"final U {final:.2f} W/(m²·K)")
        if lo is not None and hi is not None and t.size:
            ax.axhspan(max(lo, 0.0), hi, color=OKABE_ITO["sky blue"], alpha=0.25,
                       label="95 % interval (systematic inputs)")
        dyn = series.get("u_dynamic_w_m2k")
        if dyn is not None and t.size:
            d_lo, d_hi = series.get("u_dynamic_low95_w_m2k"), series.get("u_dynamic_high95_w_m2k")
            ax.axhline(dyn, color=OKABE_ITO["bluish green"], lw=1.2, ls=":",
                       label=f"dynamic method {dyn:.2f} W/(m²·K)")
            if d_lo is not None and d_hi is not None:
                ax.axhspan(max(d_lo, 0.0), d_hi, color=OKABE_ITO["bluish green"], alpha=0.25,
                           label="its 95 % interval (regression only)")
        ax.set_xlabel("time since the first frame [h]")
        ax.set_ylabel("U [W/(m²·K)]")
        conv = series.get("converged")
        state = ("" if conv is None else
                 " · converged" if conv else " · NOT converged by the ISO 9869-1 criteria")
        ax.set_title(f"{element_label(series.get('element') or '')}: night series{state}",
                     loc="left", parse_math=False)
        ax.grid(alpha=0.3)
        ax.legend(loc="upper center", bbox_to_anchor=(0.5, -0.22), ncol=3, frameon=False,
                  fontsize=8)
        return save(fig, path)
