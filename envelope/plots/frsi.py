"""Temperature-factor map with the fRsi,min limit drawn as a contour line."""

from __future__ import annotations

from pathlib import Path

import numpy as np
from matplotlib.lines import Line2D

from envelope.plots.common import FACTOR_CMAP, image_axes, polygon_rings, robust_limits, save

LIMIT_COLOUR = "white"
OUTLINE_COLOUR = "0.85"


def _limit_value(limit) -> float | None:
    """A float from a number or an object with a `value` (e.g. `FrsiLimit`)."""
    if limit is None:
        return None
    return float(getattr(limit, "value", limit))


def _outline_xy(outline) -> list[np.ndarray]:
    """Exterior rings of a shapely polygon / multipolygon or an (N, 2) sequence, in px."""
    if hasattr(outline, "geom_type"):
        return polygon_rings(outline)
    xy = np.asarray(outline, dtype=float)
    if xy.ndim != 2 or xy.shape[1] != 2:
        raise ValueError(f"an outline must be a polygon or (N, 2) points; got shape {xy.shape}")
    return [xy]


def frsi_figure(frsi_map, path: str | Path, limit=None, title: str | None = None,
                outlines=None) -> Path:
    """Write a PNG of a temperature-factor map, with the fRsi,min limit as a contour.

    Parameters
    ----------
    frsi_map : array_like, shape (H, W)
        fRsi per pixel [-]; NaN pixels are left blank.
    path : str or Path
        Output PNG.
    limit : float or FrsiLimit, optional
        fRsi,min, drawn as a labelled contour line ("fRsi,min = 0.75"); pixels inside the
        line are below the limit.
    title : str, optional
    outlines : sequence, optional
        Element outlines in pixel coordinates (shapely polygons or (N, 2) point lists,
        frame spanning [0, W] x [0, H]).

    Returns
    -------
    Path
        The written file.

    Notes
    -----
    The colour scale is 0-1 (viridis), widened to the robust 1-99 % range when the map goes
    outside it.
    """
    f = np.asarray(frsi_map, dtype=float)
    if f.ndim != 2:
        raise ValueError(f"frsi_map must be a 2-D image; got shape {f.shape}")
    lo, hi = robust_limits(f, min_span=0.0)
    vmin, vmax = min(0.0, lo), max(1.0, hi)
    fig, ax = image_axes(f, cmap=FACTOR_CMAP, label="Temperature factor fRsi [-]",
                         title=title, vmin=vmin, vmax=vmax)
    h, w = f.shape
    # Pixel convention of the project: pixel [row, col] spans [col, col+1] x [row, row+1].
    ax.images[0].set_extent((0.0, w, h, 0.0))
    ax.set_xlim(0.0, w)
    ax.set_ylim(h, 0.0)
    handles = []
    value = _limit_value(limit)
    if value is not None:
        label = f"fRsi,min = {value:.2f}"
        finite = f[np.isfinite(f)]
        if finite.size and finite.min() < value < finite.max():
            xs, ys = np.arange(w) + 0.5, np.arange(h) + 0.5
            cs = ax.contour(xs, ys, np.ma.masked_invalid(f), levels=[value],
                            colors=LIMIT_COLOUR, linewidths=1.4)
            ax.clabel(cs, fmt={cs.levels[0]: label}, fontsize=8)
        else:
            side = "above" if finite.size and finite.min() >= value else "below"
            label += f" (all pixels {side})"
        handles.append(Line2D([], [], color=LIMIT_COLOUR, lw=1.4, label=label))
    for outline in outlines or ():
        for xy in _outline_xy(outline):
            ax.plot(xy[:, 0], xy[:, 1], color=OUTLINE_COLOUR, lw=1.0, ls="--")
    if handles:
        leg = ax.legend(handles=handles, loc="lower right", fontsize=8, framealpha=0.6)
        leg.get_frame().set_facecolor("0.3")
        for text in leg.get_texts():
            text.set_color("white")
    return save(fig, path)
