"""Temperature-factor map with what lies below the fRsi,min limits marked on the picture.

The colour range comes from the elements' own pixels (widened to take in the mould limit
when it lies near them), the limits are marked on the colour bar, and the pixels below each
limit are covered by stripes (orange below the mould limit, vermillion below the
condensation limit) so that the area at risk reads without telling colours apart. The
legend gives the share of the element area below each limit.
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
from matplotlib import colormaps
from matplotlib.colors import Normalize

from envelope.plots.common import (
    FACTOR_CMAP,
    OKABE_ITO,
    Sheet,
    element_limits,
    polygon_rings,
    style,
)

__all__ = ["MOULD_COLOUR", "CONDENSATION_COLOUR", "frsi_scale", "stripes", "frsi_figure"]

MOULD_COLOUR = OKABE_ITO["orange"]
CONDENSATION_COLOUR = OKABE_ITO["vermillion"]
OUTLINE_COLOUR = "0.15"
_NEAR = 0.15
"""A limit closer than this to the data range [-] is brought onto the colour bar."""


def _limit_value(limit) -> float | None:
    """A float from a number or an object with a `value` (e.g. `FrsiLimit`)."""
    if limit is None:
        return None
    value = getattr(limit, "value", limit)
    return None if value is None else float(value)


def _outline_xy(outline) -> list[np.ndarray]:
    """Exterior rings of a shapely polygon / multipolygon or an (N, 2) sequence, in px."""
    if hasattr(outline, "geom_type"):
        return polygon_rings(outline)
    xy = np.asarray(outline, dtype=float)
    if xy.ndim != 2 or xy.shape[1] != 2:
        raise ValueError(f"an outline must be a polygon or (N, 2) points; got shape {xy.shape}")
    return [xy]


def frsi_scale(frsi_map, masks=None, limits=()) -> tuple[float, float]:
    """Colour limits of a factor map: the elements' percentiles (0.5–99.5 % of each mask, or
    of all finite pixels), widened to a limit that lies within 0.15 of them, at least 0.1
    wide."""
    f = np.asarray(frsi_map, dtype=float)
    masks = list(masks) if masks is not None else [np.isfinite(f)]
    lim = element_limits(f, masks, min_span=0.1) or (0.0, 1.0)
    lo, hi = lim
    for v in limits:
        if v is not None and lo - _NEAR < v < lo:
            lo = v - 0.02
        if v is not None and hi < v < hi + _NEAR:
            hi = v + 0.02
    return lo, hi


def stripes(mask, colour, period_px: int = 6, width_px: int = 2) -> np.ndarray:
    """RGBA layer of diagonal stripes over `mask` (transparent elsewhere)."""
    m = np.asarray(mask, dtype=bool)
    rows, cols = np.indices(m.shape)
    on = m & (((rows + cols) % period_px) < width_px)
    rgba = np.zeros((*m.shape, 4))
    rgba[on] = np.array([int(colour[i:i + 2], 16) / 255.0 for i in (1, 3, 5)] + [1.0])
    return rgba


def frsi_figure(frsi_map, path: str | Path, limit=None, title: str | None = None,
                outlines=None, *, condensation=None, masks=None, width_mm: float = 90.0,
                m_per_px: float | None = None, uniform: bool = True, exclude=None,
                convention: str = "night") -> Path:
    """Write a PNG of a temperature-factor map with the pixels below fRsi,min marked.

    Parameters
    ----------
    frsi_map : array_like, shape (H, W)
        fRsi per pixel [-], measured on the survey night or at the design convention (see
        `convention`); NaN pixels are left blank.
    path : str or Path
        Output PNG.
    limit : float or FrsiLimit, optional
        fRsi,min for mould (critical surface humidity 0.8, ISO 13788).
    title : str, optional
        Drawn as typed (no math parsing).
    outlines : sequence, optional
        Element outlines [px] (shapely polygons or (N, 2) point lists).
    condensation : float or FrsiLimit, optional
        fRsi,min for surface condensation (critical surface humidity 1.0).
    masks : sequence of bool ndarray, optional
        One mask per element: the colour range comes from these pixels and the shares below
        the limits are of these pixels. Default: every finite pixel.
    width_mm : float
        Print width [mm].
    m_per_px, uniform : float, bool
        Pixel size on the element plane [m]; draws a scale bar.
    exclude : bool ndarray, optional
        Pixels kept off the colour scale and drawn in grey (warm spots: a factor above 1
        is a heat source or a reflection, not a surface at risk).
    convention : {"night", "design"}
        What the map holds, for the colour bar's label: the factor measured on the night,
        or the factor at the design convention (Rsi 0.25 m²·K/W opaque, 0.13 glazing), the
        one the fRsi,min limits are defined for.

    Returns
    -------
    Path

    Notes
    -----
    fRsi = (T_si - T_e) / (T_i - T_e) measured on the night predicts the surface
    temperature at design conditions only as far as the night was steady (ISO 13788:2012
    defines fRsi,min for design conditions).
    """
    from envelope.plots.thermogram import HALO, draw_scale_bar

    labels = {"night": "temperature factor fRsi on the survey night [-]",
              "design": "fRsi at design Rsi 0.25 m²K/W (glazing 0.13) [-]"}
    if convention not in labels:
        raise ValueError(f"convention must be one of {sorted(labels)}; got {convention!r}")
    f = np.asarray(frsi_map, dtype=float)
    if f.ndim != 2:
        raise ValueError(f"frsi_map must be a 2-D image; got shape {f.shape}")
    h, w = f.shape
    mould, cond = _limit_value(limit), _limit_value(condensation)
    el = (np.logical_or.reduce([np.asarray(m, bool) for m in masks]) if masks
          else np.isfinite(f))
    el &= np.isfinite(f)
    warm = np.zeros(f.shape, bool) if exclude is None else np.asarray(exclude, bool) & el
    el &= ~warm
    scale_masks = [np.asarray(m, bool) & ~warm for m in masks] if masks else [el]
    lo, hi = frsi_scale(f, scale_masks, (mould, cond))
    rgba = colormaps[FACTOR_CMAP](Normalize(lo, hi, clip=True)(np.where(np.isfinite(f), f, lo)))
    rgba[~el] = (0.93, 0.93, 0.93, 1.0)
    rgba[warm] = (0.62, 0.62, 0.62, 1.0)
    rgba[~np.isfinite(f)] = (1.0, 1.0, 1.0, 1.0)
    n_el = max(int(el.sum()), 1)
    items, marks = [], []
    below_c = el & (f < cond) if cond is not None else np.zeros_like(el)
    below_m = el & (f < mould) & ~below_c if mould is not None else np.zeros_like(el)
    if mould is not None:
        share = (below_m | below_c).sum() / n_el
        items.append((f"below the mould limit {mould:.2f}: {100 * share:.1f} % of the area",
                      {"color": MOULD_COLOUR, "lw": 2.5}))
        marks.append((mould, "mould"))
    if cond is not None:
        share = below_c.sum() / n_el
        items.append((f"below the condensation limit {cond:.2f}: {100 * share:.1f} %",
                      {"color": CONDENSATION_COLOUR, "lw": 2.5}))
        marks.append((cond, "condensation"))
    if mould is None and cond is None:
        items.append(("no fRsi,min limit given", {"color": "white", "lw": 0.0}))
    if warm.any():
        items.append(("warm spot (factor above the wall's, off the scale)",
                      {"color": "0.62", "lw": 5.0}))
    pad = 2.0
    img_w = width_mm - 2 * pad
    img_h = img_w * h / w
    title_h = 5.0 if title else pad
    bar_h = 11.5 + (4.0 if marks else 0.0)
    legend_h = 4.2 * len(items) + 1.0
    total = title_h + img_h + bar_h + legend_h + 1.5
    with style():
        sheet = Sheet(width_mm, total)
        frame = sheet.frame(pad, total - title_h - img_h, img_w, img_h, f.shape)
        frame.image(rgba)
        if below_m.any():
            frame.image(stripes(below_m, MOULD_COLOUR))
        if below_c.any():
            frame.image(stripes(below_c, CONDENSATION_COLOUR, period_px=4))
        if title:
            sheet.text(pad, total - 1.0, title, size=9, va="top", ha="left")
        for outline in outlines or ():
            for xy in _outline_xy(outline):
                frame.line(xy, color="white", lw=0.8, path_effects=HALO)
        draw_scale_bar(frame, m_per_px, uniform)
        y = frame.y0 - 1.5 - (4.0 if marks else 0.0)
        y -= sheet.colour_bar(6.0, y, width_mm - 12.0, (lo, hi), FACTOR_CMAP,
                              labels[convention], f[el],
                              marks=marks) - (4.0 if marks else 0.0)
        sheet.legend(pad + 4.0, y, items, width_mm - 2 * pad - 4.0, ncol=1)
        return sheet.save(path)
