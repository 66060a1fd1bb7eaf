"""Shared look of every figure: sizes at print scale, palettes, colour limits, saving.

Figures are drawn on a `matplotlib.figure.Figure` with its own Agg canvas (no pyplot, no
global backend switch) at their print size in millimetres, with text of at least
`MIN_FONT_PT` points: a report shows each picture at that width or wider, so the text is
never smaller than 8 pt on paper. Continuous data use matplotlib's perceptually uniform maps
under their matplotlib names; categories use the colour-blind-safe palette of Okabe and Ito.
Every string that may come from the survey is drawn with ``parse_math=False``.

References
----------
[1] Okabe M. and Ito K. (2008), Color Universal Design (CUD): how to make figures and
    presentations that are friendly to colorblind people, J*Fly data depository.
[2] Nuñez J.R., Anderton C.R. and Renslow R.S. (2018), Optimizing colormaps with
    consideration for color vision deficiency, PLoS ONE 13(7): e0199239,
    doi:10.1371/journal.pone.0199239 (the cividis map).
"""

from __future__ import annotations

import contextlib
from pathlib import Path

import matplotlib
import numpy as np
from matplotlib import colormaps
from matplotlib.backends.backend_agg import FigureCanvasAgg
from matplotlib.figure import Figure
from matplotlib.lines import Line2D
from matplotlib.patches import Polygon as PolygonPatch
from matplotlib.patches import Rectangle
from matplotlib.ticker import MaxNLocator

__all__ = ["TEMPERATURE_CMAP", "OWN_SCALE_CMAP", "CONTEXT_CMAP", "FACTOR_CMAP", "U_CMAP",
           "OKABE_ITO", "CLASS_COLOURS", "KIND_COLOURS", "DPI", "MIN_FONT_PT", "MM",
           "new_figure", "style", "Sheet", "Frame", "element_limits", "robust_limits", "extend_of",
           "clipped_share", "polygon_rings", "scale_bar_length_m", "save"]

TEMPERATURE_CMAP = "inferno"
"""Surface temperature of the opaque elements [°C]."""
OWN_SCALE_CMAP = "cividis"
"""Glazing, doors and warm spots, drawn on a temperature scale of their own [°C]."""
CONTEXT_CMAP = "gray"
"""Pixels outside every element (context only, own scale)."""
FACTOR_CMAP = "viridis"
"""Temperature factor fRsi [-]."""
U_CMAP = "viridis"
"""U per pixel [W/(m²·K)]."""

OKABE_ITO = {
    "orange": "#E69F00", "sky blue": "#56B4E9", "bluish green": "#009E73",
    "yellow": "#F0E442", "blue": "#0072B2", "vermillion": "#D55E00",
    "reddish purple": "#CC79A7", "black": "#000000",
}
"""The eight colours of Okabe & Ito [1], told apart under the common colour-vision deficiencies."""

CLASS_COLOURS = {
    "missing insulation": OKABE_ITO["sky blue"],
    "linear thermal bridge": OKABE_ITO["bluish green"],
    "repeating thermal bridge": OKABE_ITO["yellow"],
    "air leakage": OKABE_ITO["reddish purple"],
    "unexplained": "#FFFFFF",
}
"""Outline colour of each defect class (drawn with a black halo on the thermal image)."""

KIND_COLOURS = {
    "wall": OKABE_ITO["blue"], "window": OKABE_ITO["sky blue"], "door": OKABE_ITO["bluish green"],
    "roof": OKABE_ITO["orange"], "ceiling": OKABE_ITO["orange"], "floor": OKABE_ITO["reddish purple"],
    "junctions and defects": OKABE_ITO["vermillion"],
}
"""Bar colour of each element kind in the heat-loss chart."""

DPI = 150
"""Raster resolution of every PNG [dots per inch]: sharp at print size (8 pt text is 17 px high)."""
MIN_FONT_PT = 8.0
"""Smallest text in any figure at print size [pt]."""
MM = 1.0 / 25.4
"""Inches per millimetre."""

_RC = {
    "font.size": 8.0, "axes.titlesize": 9.0, "axes.labelsize": 8.0, "xtick.labelsize": 8.0,
    "ytick.labelsize": 8.0, "legend.fontsize": 8.0, "font.family": "DejaVu Sans",
    "axes.titlepad": 3.0, "svg.fonttype": "none",
}


@contextlib.contextmanager
def style():
    """The figures' text sizes (≥ 8 pt) for the drawing inside the block; restored after."""
    with matplotlib.rc_context(_RC):
        yield


def new_figure(width_mm: float, height_mm: float) -> Figure:
    """A figure of the given print size on its own Agg canvas (no pyplot, no figure manager).

    Parameters
    ----------
    width_mm, height_mm : float
        Print size [mm]; the PNG has ``size / 25.4 * DPI`` pixels.
    """
    fig = Figure(figsize=(width_mm * MM, height_mm * MM), dpi=DPI)
    FigureCanvasAgg(fig)
    return fig


class Frame:
    """Where an image of ``(H, W)`` pixels sits on a `Sheet` [mm], and the pixel → mm map."""

    def __init__(self, sheet: Sheet, x0_mm: float, y0_mm: float, width_mm: float,
                 height_mm: float, shape, origin_px=(0.0, 0.0), size_px=None):
        self.sheet = sheet
        self.x0, self.y0, self.w, self.h = x0_mm, y0_mm, width_mm, height_mm
        self.px0, self.py0 = origin_px
        self.pw, self.ph = size_px if size_px is not None else (shape[1], shape[0])
        self.clip = Rectangle((x0_mm, y0_mm), width_mm, height_mm, transform=sheet.ax.transData)

    @property
    def mm_per_px(self) -> float:
        return self.w / self.pw

    def to_mm(self, xy_px) -> np.ndarray:
        """Pixel coordinates ``(x, y)`` (y down) → sheet millimetres (y up)."""
        xy = np.asarray(xy_px, dtype=float)
        x = self.x0 + (xy[..., 0] - self.px0) * self.w / self.pw
        y = self.y0 + self.h - (xy[..., 1] - self.py0) * self.h / self.ph
        return np.stack([x, y], axis=-1)

    def image(self, rgba) -> None:
        self.sheet.ax.imshow(rgba, extent=(self.x0, self.x0 + self.w, self.y0, self.y0 + self.h),
                             interpolation="nearest", aspect="auto", origin="upper")

    def line(self, xy_px, **kw) -> Line2D:
        xy = self.to_mm(xy_px)
        (ln,) = self.sheet.ax.plot(xy[:, 0], xy[:, 1], **kw)
        ln.set_clip_path(self.clip)
        return ln

    def text(self, x_px, y_px, s, **kw):
        (x, y), = self.to_mm([[x_px, y_px]])
        return self.sheet.text(x, y, s, clip_on=False, **kw)


class Sheet:
    """A figure drawn on one axes-free canvas whose data units are millimetres (y up).

    Images, outlines, colour bars, legends and text are placed in millimetres on a single
    `Axes` with its axis switched off: no tick machinery is built per picture, which is what
    made the thermogram figures slow, and every size is a print size.
    """

    def __init__(self, width_mm: float, height_mm: float):
        self.width, self.height = float(width_mm), float(height_mm)
        self.fig = new_figure(width_mm, height_mm)
        self.ax = self.fig.add_axes((0.0, 0.0, 1.0, 1.0))
        self.ax.set_xlim(0.0, self.width)
        self.ax.set_ylim(0.0, self.height)
        self.ax.set_axis_off()

    def frame(self, x0_mm, y0_mm, width_mm, height_mm, shape, origin_px=(0.0, 0.0),
              size_px=None) -> Frame:
        return Frame(self, x0_mm, y0_mm, width_mm, height_mm, shape, origin_px, size_px)

    def text(self, x_mm, y_mm, s, size: float = MIN_FONT_PT, **kw):
        """Text at a point [mm]; never parsed as math (survey strings print as typed)."""
        kw.setdefault("fontsize", size)
        return self.ax.text(x_mm, y_mm, str(s), parse_math=False, **kw)

    def colour_bar(self, x0_mm, y0_mm, width_mm, lim, cmap, label, values=None,
                   height_mm: float = 2.6, marks=()) -> float:
        """A horizontal colour bar with round ticks, arrows for clipped values and a label.

        Parameters
        ----------
        lim : (float, float)
            Colour limits.
        values : array_like, optional
            The values drawn with it: an arrow at an end that some of them pass.
        marks : sequence of (float, str)
            Values to mark on the bar with a line and a short text (e.g. limits).

        Returns
        -------
        float
            Height used [mm] (bar, ticks, label).
        """
        lo, hi = lim
        arrow = 1.6
        x_lo, x_hi = x0_mm + arrow, x0_mm + width_mm - arrow
        top = y0_mm
        bottom = top - height_mm
        grad = colormaps[cmap](np.linspace(0.0, 1.0, 256))[None, :, :]
        self.ax.imshow(grad, extent=(x_lo, x_hi, bottom, top), aspect="auto",
                       interpolation="bilinear")
        self.ax.add_patch(Rectangle((x_lo, bottom), x_hi - x_lo, height_mm, fill=False,
                                    lw=0.5, ec="black"))
        ext = extend_of(values, lim) if values is not None else "neither"
        cm = colormaps[cmap]
        if ext in ("min", "both"):
            self.ax.add_patch(PolygonPatch([[x_lo, bottom], [x_lo, top],
                                            [x_lo - arrow, 0.5 * (top + bottom)]],
                                           fc=cm(0.0), ec="black", lw=0.5))
        if ext in ("max", "both"):
            self.ax.add_patch(PolygonPatch([[x_hi, bottom], [x_hi, top],
                                            [x_hi + arrow, 0.5 * (top + bottom)]],
                                           fc=cm(1.0), ec="black", lw=0.5))
        span = hi - lo if hi > lo else 1.0

        def at(v):
            return x_lo + (v - lo) / span * (x_hi - x_lo)

        ticks = [t for t in MaxNLocator(nbins=5, steps=[1, 2, 2.5, 5, 10]).tick_values(lo, hi)
                 if lo - 1e-9 <= t <= hi + 1e-9]
        step = ticks[1] - ticks[0] if len(ticks) > 1 else 1.0
        digits = max(0, -int(np.floor(np.log10(step) + 1e-9))) if step < 1 else 0
        for t in ticks:
            self.ax.plot([at(t), at(t)], [bottom, bottom - 0.8], color="black", lw=0.5)
            self.text(at(t), bottom - 1.0, f"{t:.{digits}f}".replace("-", "−"), ha="center",
                      va="top")
        for v, text in marks:
            if lo <= v <= hi:
                self.ax.plot([at(v), at(v)], [bottom - 0.3, top + 0.9], color="black", lw=1.0)
                self.text(at(v), top + 1.0, text, ha="center", va="bottom")
        self.text(x0_mm + 0.5 * width_mm, bottom - 4.6, label, ha="center", va="top")
        return height_mm + 8.6 + (4.0 if marks else 0.0)

    def legend(self, x0_mm, y0_mm, items, width_mm: float, ncol: int = 2) -> float:
        """Legend entries ``(label, line kwargs)`` in `ncol` columns; returns the height used."""
        col_w = width_mm / max(ncol, 1)
        row_h = 4.2
        for i, (label, kw) in enumerate(items):
            r, c = divmod(i, ncol)
            x = x0_mm + c * col_w
            y = y0_mm - r * row_h - 2.0
            self.ax.plot([x, x + 6.0], [y, y], **kw)
            self.text(x + 7.5, y, label, va="center", ha="left")
        return row_h * int(np.ceil(len(items) / max(ncol, 1)))

    def save(self, path) -> Path:
        return save(self.fig, path)


def robust_limits(values, lo_pct: float = 0.5, hi_pct: float = 99.5,
                  min_span: float = 0.0) -> tuple[float, float]:
    """Percentile limits of the finite `values`, widened (never narrowed) to `min_span`."""
    v = np.asarray(values, dtype=float)
    v = v[np.isfinite(v)]
    if v.size == 0:
        return 0.0, 1.0
    lo, hi = (float(x) for x in np.percentile(v, [lo_pct, hi_pct]))
    if hi - lo < min_span:
        mid = 0.5 * (lo + hi)
        lo, hi = mid - 0.5 * min_span, mid + 0.5 * min_span
    return lo, hi


def element_limits(image, masks, lo_pct: float = 0.5, hi_pct: float = 99.5,
                   min_span: float = 0.0) -> tuple[float, float] | None:
    """Colour limits from the elements' own pixels: the union of each mask's percentiles.

    Every element keeps at most ``lo_pct`` % of its pixels below the lower limit and
    ``100 - hi_pct`` % above the upper one (1 % in all with the defaults), whatever the
    other elements or the surroundings hold; the span is widened to `min_span` at least.

    Parameters
    ----------
    image : ndarray (H, W)
    masks : iterable of bool ndarray (H, W)
        One mask per element (empty masks are skipped).

    Returns
    -------
    (float, float) or None
        None when no mask holds a finite pixel.
    """
    img = np.asarray(image, dtype=float)
    los, his = [], []
    for m in masks:
        v = img[np.asarray(m, dtype=bool)]
        v = v[np.isfinite(v)]
        if v.size:
            lo, hi = np.percentile(v, [lo_pct, hi_pct])
            los.append(float(lo))
            his.append(float(hi))
    if not los:
        return None
    lo, hi = min(los), max(his)
    if hi - lo < min_span:
        mid = 0.5 * (lo + hi)
        lo, hi = mid - 0.5 * min_span, mid + 0.5 * min_span
    return lo, hi


def clipped_share(values, limits) -> float:
    """Share of the finite `values` strictly outside ``limits`` (drawn in an end colour)."""
    v = np.asarray(values, dtype=float)
    v = v[np.isfinite(v)]
    if v.size == 0 or limits is None:
        return 0.0
    return float(np.count_nonzero((v < limits[0]) | (v > limits[1])) / v.size)


def extend_of(values, limits) -> str:
    """Colour-bar ``extend`` value: an arrow at each end that some of `values` pass."""
    v = np.asarray(values, dtype=float)
    v = v[np.isfinite(v)]
    if v.size == 0:
        return "neither"
    low, high = bool((v < limits[0]).any()), bool((v > limits[1]).any())
    return {(False, False): "neither", (True, False): "min", (False, True): "max",
            (True, True): "both"}[(low, high)]


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


def scale_bar_length_m(span_m: float) -> float:
    """A round scale-bar length [m] near a fifth of `span_m` (0.1, 0.2, 0.5, 1, 2, 5 ...)."""
    if not np.isfinite(span_m) or span_m <= 0:
        return 1.0
    target = span_m / 5.0
    mag = 10.0 ** np.floor(np.log10(target))
    for step in (1.0, 2.0, 5.0, 10.0):
        if step * mag >= target:
            return float(step * mag)
    return float(10.0 * mag)


def _plain_text(fig: Figure) -> None:
    """Switch the mathtext parser off for every text a figure's author set: the figure's and
    the axes' texts, titles, axis labels and legends (tick labels are numbers; walking them
    would make matplotlib build every tick)."""
    texts = list(fig.texts)
    for ax in fig.axes:
        texts += [*ax.texts, ax.title, ax._left_title, ax._right_title, ax.xaxis.label,
                  ax.yaxis.label]
        if ax.get_legend() is not None:
            texts += ax.get_legend().get_texts()
    for text in texts:
        text.set_parse_math(False)


def save(fig: Figure, path: str | Path) -> Path:
    """Write `fig` as a PNG at `path` (parents created): one draw, 256 colours, no metadata.

    The canvas is drawn once (no ``bbox_inches="tight"``, which draws twice). The pixels are
    reduced to an adaptive palette of 256 colours without dithering (each colour map has 256
    steps; the outlines and text need few): about a fifth of the bytes of full colour, which
    keeps linked and embedded reports small, and the same figure gives the same bytes.
    """
    from PIL import Image

    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    _plain_text(fig)  # no survey text reaches the math parser, whoever drew it
    canvas = fig.canvas
    canvas.draw()
    rgba = np.asarray(canvas.buffer_rgba())
    image = Image.fromarray(rgba[..., :3].copy(), "RGB")
    image = image.quantize(256, method=Image.Quantize.FASTOCTREE, dither=Image.Dither.NONE)
    image.save(path, "PNG", compress_level=3, dpi=(DPI, DPI))
    return path
