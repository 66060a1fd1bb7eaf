"""Per-pixel U map of a view: heat flux through each pixel over the indoor–outdoor air
difference, on the elements only (drawn for exterior views, where no fRsi map exists)."""

from __future__ import annotations

from pathlib import Path

import numpy as np
from matplotlib import colormaps
from matplotlib.colors import Normalize

from envelope.plots.common import U_CMAP, Sheet, element_limits, polygon_rings, style

__all__ = ["u_map_figure"]


def u_map_figure(u_map, regions, path: str | Path, title: str | None = None, *,
                 width_mm: float = 90.0, m_per_px: float | None = None,
                 uniform: bool = True, not_valid=None) -> Path:
    """Write the U map [W/(m²·K)] with the element outlines; elements whose U is not valid
    are hatched and said so under the colour bar, so their pixels are not read as U.

    Parameters
    ----------
    u_map : array_like, shape (H, W)
        U per pixel [W/(m²·K)], NaN outside the elements.
    regions : dict[str, ElementRegion]
        Outlines drawn over the map; the colour range comes from each element's pixels
        (0.5–99.5 %, at least 0.2 W/(m²·K) wide).
    path : str or Path
        Output PNG.
    title : str, optional
        Drawn as typed (no math parsing).
    width_mm : float
        Print width [mm].
    m_per_px, uniform : float, bool
        Pixel size on the element plane [m]; draws a scale bar.
    not_valid : mapping of str to str, optional
        Element name → why its U is not valid (e.g. night-sky cooling).
    """
    from envelope.plots.frsi import stripes
    from envelope.plots.thermogram import HALO, draw_scale_bar

    not_valid = dict(not_valid or {})

    u = np.asarray(u_map, dtype=float)
    h, w = u.shape
    masks = [np.asarray(r.mask, bool) for r in (regions or {}).values()] or [np.isfinite(u)]
    lim = element_limits(u, masks, min_span=0.2) or (0.0, 1.0)
    finite = np.isfinite(u)
    rgba = colormaps[U_CMAP](Normalize(*lim, clip=True)(np.where(finite, u, lim[0])))
    rgba[~finite] = (0.93, 0.93, 0.93, 1.0)
    label = "U per pixel on the survey night [W/(m²·K)]"
    if lim[0] < 0:
        label = "U per pixel [W/(m²·K)]; below 0: surface colder than the outdoor air"
    bad = np.zeros(u.shape, bool)
    for name, reg in (regions or {}).items():
        if name in not_valid:
            bad |= np.asarray(reg.mask, bool)
    notes = sorted({str(n) for n in not_valid.values()})
    why = ("night-sky cooling" if any("night-sky" in n for n in notes)
           else (notes[0][:48] if notes else ""))
    items = [("hatched: U NOT VALID" + (f" ({why})" if why else ""),
              {"color": "#333333", "lw": 2.5})] if bad.any() else []
    pad = 2.0
    img_w = width_mm - 2 * pad
    img_h = img_w * h / w
    title_h = 5.0 if title else pad
    total = title_h + img_h + 13.0 + 4.2 * len(items)
    with style():
        sheet = Sheet(width_mm, total)
        frame = sheet.frame(pad, total - title_h - img_h, img_w, img_h, u.shape)
        frame.image(rgba)
        if bad.any():
            frame.image(stripes(bad, "#333333", period_px=5))
        if title:
            sheet.text(pad, total - 1.0, title, size=9, va="top", ha="left")
        for reg in (regions or {}).values():
            for xy in polygon_rings(reg.polygon_net, holes=True):
                frame.line(xy, color="white", lw=0.8, path_effects=HALO)
        draw_scale_bar(frame, m_per_px, uniform)
        used = sheet.colour_bar(6.0, frame.y0 - 1.5, width_mm - 12.0, lim, U_CMAP, label,
                                u[finite])
        if items:
            sheet.legend(pad + 4.0, frame.y0 - 1.5 - used, items, width_mm - 2 * pad - 4.0,
                         ncol=1)
        return sheet.save(path)
