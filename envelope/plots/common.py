"""Shared look of every figure: colour maps, colour bars in °C, saving PNGs.

Colour maps are matplotlib's perceptually uniform maps under their matplotlib names.
Text from the survey (ids, element names) reaches titles, labels and legends: `save` switches
matplotlib's mathtext parser off for every text of the figure before drawing it, so a
``$...$`` in a name prints as typed and can never fail to parse (no global setting changed).
"""

from __future__ import annotations

from pathlib import Path

import numpy as np
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from matplotlib.text import Text

TEMPERATURE_CMAP = "inferno"
"""Surface temperature maps [°C]."""
FACTOR_CMAP = "viridis"
"""Temperature-factor (fRsi) and U maps."""
DPI = 110


def new_figure(figsize, layout=None, **subplot_kw):
    """A figure with one axes on the Agg canvas, without pyplot: no global backend is
    switched and no figure is kept alive by a figure manager (safe in notebooks)."""
    fig = Figure(figsize=figsize, dpi=DPI, layout=layout)
    FigureCanvasAgg(fig)
    return fig, fig.add_subplot(**subplot_kw)


def robust_limits(values, lo_pct: float = 1.0, hi_pct: float = 99.0,
                  min_span: float = 2.0) -> tuple[float, float]:
    """Colour limits that show the surfaces, not the outliers.

    Percentiles of the finite values, pulled in to Tukey's far-out fences (quartiles ∓ 3 IQR;
    Tukey, Exploratory Data Analysis, 1977) so that a small very warm patch (a reflection, a
    radiator) or dead pixels do not squash the walls into one colour; at least `min_span`
    wide. Clipped values show in the end colours of the map.
    """
    v = np.asarray(values, dtype=float)
    v = v[np.isfinite(v)]
    if v.size == 0:
        return 0.0, 1.0
    lo, q1, q3, hi = np.percentile(v, [lo_pct, 25.0, 75.0, hi_pct])
    iqr = q3 - q1
    lo, hi = max(lo, q1 - 3.0 * iqr), min(hi, q3 + 3.0 * iqr)
    if hi - lo < min_span:
        mid = 0.5 * (lo + hi)
        lo, hi = mid - 0.5 * min_span, mid + 0.5 * min_span
    return float(lo), float(hi)


def polygon_rings(geom, holes: bool = False) -> list[np.ndarray]:
    """Rings of a shapely Polygon / MultiPolygon as (N, 2) arrays [px] for plotting:
    the exteriors, and the interiors too when `holes` (openings cut out of a wall)."""
    if geom is None or geom.is_empty:
        return []
    out = []
    for part in getattr(geom, "geoms", [geom]):
        if hasattr(part, "exterior"):
            out.append(np.asarray(part.exterior.coords, dtype=float))
            if holes:
                out.extend(np.asarray(r.coords, dtype=float) for r in part.interiors)
    return out


def image_axes(image, *, cmap=TEMPERATURE_CMAP, label="Surface temperature [°C]", title=None,
               vmin=None, vmax=None, figsize=(7.0, 5.4)):
    """A figure with `image` shown in pixel coordinates and a labelled colour bar.

    Returns ``(fig, ax)``.
    """
    if vmin is None or vmax is None:
        lo, hi = robust_limits(image)
        vmin = lo if vmin is None else vmin
        vmax = hi if vmax is None else vmax
    fig, ax = new_figure(figsize=figsize)
    fig.subplots_adjust(left=0.09, right=0.88, bottom=0.09, top=0.93)
    im = ax.imshow(image, cmap=cmap, vmin=vmin, vmax=vmax, interpolation="nearest")
    cbar = fig.colorbar(im, ax=ax, fraction=0.046, pad=0.03)
    cbar.set_label(label)
    ax.set_xlabel("x [px]")
    ax.set_ylabel("y [px]")
    if title:
        ax.set_title(title)
    return fig, ax


def plain_text(fig) -> None:
    """Switch the mathtext parser off for every text of `fig` (survey text is not math)."""
    for text in fig.findobj(Text):
        text.set_parse_math(False)


def save(fig, path: str | Path) -> Path:
    """Save `fig` as PNG at `path` (parents created) and close it."""
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    plain_text(fig)
    # one draw (no bbox_inches="tight", which draws twice) and light PNG compression: the
    # figures of a survey are written in a few seconds
    fig.savefig(path, dpi=DPI, metadata={"Software": None}, pil_kwargs={"compress_level": 2})
    return path
