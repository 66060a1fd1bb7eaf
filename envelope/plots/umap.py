"""Per-pixel U map of a thermogram: heat flux through each pixel over the indoor–outdoor
air difference, on the elements only."""

from __future__ import annotations

from pathlib import Path

import numpy as np

from envelope.plots.common import FACTOR_CMAP, image_axes, polygon_rings, robust_limits, save


def u_map_figure(u_map, regions, path: str | Path, title: str | None = None) -> Path:
    """Write the U map [W/(m²·K)] with the element outlines.

    Parameters
    ----------
    u_map : array_like, shape (H, W)
        U per pixel [W/(m²·K)], NaN outside the elements.
    regions : dict[str, ElementRegion]
        Outlines drawn over the map.
    path : str or Path
        Output PNG.
    """
    u = np.asarray(u_map, dtype=float)
    lo, hi = robust_limits(u, min_span=0.2)
    fig, ax = image_axes(u, cmap=FACTOR_CMAP, label="U [W/(m²·K)]", title=title,
                         vmin=max(lo, 0.0) if lo > -0.5 else lo, vmax=hi)
    h, w = u.shape
    ax.images[0].set_extent((0.0, w, h, 0.0))
    for reg in (regions or {}).values():
        for xy in polygon_rings(reg.polygon_net, holes=True):
            ax.plot(xy[:, 0], xy[:, 1], color="white", lw=0.8)
    ax.set_xlim(0, w)
    ax.set_ylim(h, 0)
    ax.set_facecolor("#d0d0d0")  # pixels off the elements
    return save(fig, path)
