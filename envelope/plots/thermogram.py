"""The corrected thermogram of a view: elements, reference zones and defects on one picture.

One picture per view replaces the former three (corrected, outlines, defects), which were
the same image under other overlays. Colours come from the elements' own pixels
(`common.element_limits`): the opaque elements share the temperature map, glazing, doors and
warm spots (reflections, heat sources) get a scale of their own so they neither flatten the
walls nor come out as one flat colour, and the surroundings are shown in grey on their own
scale for context. A colour bar carries an arrow at each end that some element pixels pass.
Axes are replaced by a metric scale bar when the view has a scale.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import shapely
from matplotlib import colormaps, patheffects
from matplotlib.colors import Normalize

from envelope.labels import element_label
from envelope.plots.common import (
    CLASS_COLOURS,
    CONTEXT_CMAP,
    OKABE_ITO,
    OWN_SCALE_CMAP,
    TEMPERATURE_CMAP,
    Sheet,
    element_limits,
    polygon_rings,
    robust_limits,
    scale_bar_length_m,
    style,
)

__all__ = ["OPENING_KINDS", "MIN_SPAN_K", "ViewScales", "view_scales", "warm_mask",
           "composite", "label_point", "metre_per_px", "thermogram_figure", "crop_window", "crop_figure",
           "draw_scale_bar", "HALO", "LABEL_BOX", "REFERENCE_COLOUR"]

OPENING_KINDS = ("window", "door")
"""Element kinds drawn on their own temperature scale."""
MIN_SPAN_K = 2.0
"""Narrowest temperature colour range [K]: noise of a uniform wall is not blown up."""
HALO = [patheffects.withStroke(linewidth=2.2, foreground="black")]
"""Dark outline under light lines, so they read on any part of the map."""
LABEL_BOX = {"boxstyle": "round,pad=0.2", "fc": "black", "ec": "none", "alpha": 0.6}
"""Dark box under white text on the map (cheaper to draw than a halo round each glyph)."""
NAN_COLOUR = (1.0, 1.0, 1.0, 0.0)
REFERENCE_COLOUR = OKABE_ITO["sky blue"]


@dataclass(frozen=True, eq=False)
class ViewScales:
    """Colour limits of one view and which pixels each limit applies to.

    Attributes
    ----------
    opaque, own, context : (float, float) or None
        Limits [°C] of the opaque elements, of glazing / doors / warm spots, and of the
        pixels outside every element.
    opaque_mask, own_mask, context_mask : ndarray of bool (H, W)
    element_masks : dict of str to (ndarray of bool, str)
        Element name → (its pixels on a scale, ``"opaque"`` or ``"own"``); warm spots are
        taken out of an opaque element's mask and put on the own scale.
    """

    opaque: tuple[float, float] | None
    own: tuple[float, float] | None
    context: tuple[float, float] | None
    opaque_mask: np.ndarray
    own_mask: np.ndarray
    context_mask: np.ndarray
    element_masks: dict = field(default_factory=dict)


def warm_mask(defects, shape) -> np.ndarray:
    """Pixels of the warm spots among `defects` (unexplained, warmer than the reference)."""
    from envelope.defects import WARM_NOTE
    from envelope.outlines import rasterise

    mask = np.zeros(shape, dtype=bool)
    for d in defects:
        if WARM_NOTE in (getattr(d, "notes", None) or ()) and getattr(d, "polygon", None) is not None:
            mask |= rasterise(d.polygon, shape)
    return mask


def view_scales(image_c, regions, warm=None, min_span_k: float = MIN_SPAN_K) -> ViewScales:
    """Colour limits of a view from its elements' own pixels.

    Parameters
    ----------
    image_c : ndarray (H, W)
        Corrected surface temperature [°C].
    regions : dict of str to ElementRegion
        ``kind`` and ``mask`` of each element in the view.
    warm : ndarray of bool (H, W), optional
        Warm spots (`warm_mask`): drawn on the own scale.
    min_span_k : float
        Narrowest range of a scale [K].

    Returns
    -------
    ViewScales
    """
    img = np.asarray(image_c, dtype=float)
    shape = img.shape
    warm = np.zeros(shape, dtype=bool) if warm is None else np.asarray(warm, dtype=bool)
    any_el = np.zeros(shape, dtype=bool)
    opaque_masks, own_masks, per = [], [], {}
    for name, reg in (regions or {}).items():
        m = np.asarray(reg.mask, dtype=bool)
        any_el |= m
        if reg.kind in OPENING_KINDS:
            own_masks.append(m)
            per[name] = (m, "own")
        else:
            opaque_masks.append(m & ~warm)
            per[name] = (m & ~warm, "opaque")
            if (m & warm).any():
                own_masks.append(m & warm)
    opaque_mask = np.logical_or.reduce(opaque_masks) if opaque_masks else np.zeros(shape, bool)
    own_mask = np.logical_or.reduce(own_masks) if own_masks else np.zeros(shape, bool)
    context_mask = ~any_el
    ctx = img[context_mask]
    return ViewScales(
        opaque=element_limits(img, opaque_masks, min_span=min_span_k),
        own=element_limits(img, own_masks, min_span=min_span_k),
        context=robust_limits(ctx, 1.0, 99.0, min_span_k) if np.isfinite(ctx).any() else None,
        opaque_mask=opaque_mask, own_mask=own_mask, context_mask=context_mask,
        element_masks=per)


def label_point(geom):
    """Where to write an element's name: the pole of inaccessibility of its largest part
    (the interior point farthest from the outline, so the text avoids openings)."""
    from shapely.ops import polylabel

    parts = list(getattr(geom, "geoms", [geom]))
    part = max(parts, key=lambda g: g.area)
    try:
        return polylabel(part, tolerance=max(1.0, part.length / 400.0))
    except (ValueError, shapely.errors.ShapelyError):  # degenerate outline
        return shapely.point_on_surface(part)


def composite(image_c, scales: ViewScales) -> np.ndarray:
    """RGBA image [0-1] of a view: context in grey, opaque elements and the own-scale pixels
    in their maps; NaN transparent. One array, drawn with a single ``imshow``."""
    img = np.asarray(image_c, dtype=float)
    rgba = np.zeros((*img.shape, 4))
    for mask, lim, cmap in ((scales.context_mask, scales.context, CONTEXT_CMAP),
                            (scales.opaque_mask, scales.opaque, TEMPERATURE_CMAP),
                            (scales.own_mask, scales.own, OWN_SCALE_CMAP)):
        if lim is None or not mask.any():
            continue
        norm = Normalize(*lim, clip=True)
        rgba[mask] = colormaps[cmap](norm(img[mask]))
    rgba[~np.isfinite(img)] = NAN_COLOUR
    if scales.context is not None and scales.context_mask.any():  # context: lighter
        ctx = scales.context_mask & np.isfinite(img)
        rgba[ctx, :3] = 0.35 + 0.5 * rgba[ctx, :3]
    return rgba


def metre_per_px(area_map_m2, mask=None) -> tuple[float | None, bool]:
    """Typical pixel size on the element plane [m] and whether it is uniform (±5 %).

    The square root of the median façade area of the pixels in `mask` (all finite pixels
    when None); uniform when the 10th and 90th percentiles differ by less than 10 %.
    """
    if area_map_m2 is None:
        return None, False
    a = np.asarray(area_map_m2, dtype=float)
    v = a[mask] if mask is not None and np.asarray(mask).any() else a.ravel()
    v = v[np.isfinite(v) & (v > 0)]
    if v.size == 0:
        return None, False
    p10, p50, p90 = np.percentile(np.sqrt(v), [10, 50, 90])
    return float(p50), bool(p90 / p10 < 1.1)


def draw_scale_bar(frame, m_per_px: float | None, uniform: bool) -> None:
    """A metric scale bar in the lower left of an image `frame` (`common.Frame`)."""
    if not m_per_px:
        return
    length_m = scale_bar_length_m(frame.pw * m_per_px)
    length_mm = length_m / m_per_px * frame.mm_per_px
    x = frame.x0 + 2.0
    y = frame.y0 + 2.5
    text = f"{length_m:g} m" if uniform else f"≈ {length_m:g} m (centre)"
    frame.sheet.ax.plot([x, x + length_mm], [y, y], color="white", lw=2.0,
                        solid_capstyle="butt", path_effects=HALO)
    frame.sheet.text(x, y + 1.2, text, color="white", ha="left", va="bottom", bbox=LABEL_BOX)


def _defect_tag(frame, d, colour):
    rings = polygon_rings(d.polygon)
    if rings:
        top = min(rings, key=lambda r: (r[:, 1].min(), r[:, 0].min()))
        x0, y0 = float(top[:, 0].min()), float(top[:, 1].min())
    else:
        x0, y0 = float(d.bbox_px[0]), float(d.bbox_px[1])
    (x, y), = frame.to_mm([[x0, y0]])
    x = min(max(x, frame.x0 + 0.5), frame.x0 + frame.w - 6.0)
    y = min(max(y + 0.6, frame.y0 + 1.0), frame.y0 + frame.h - 3.6)
    frame.sheet.text(x, y, d.id or str(d.rank), color="black", fontweight="bold",
                     va="bottom", ha="left",
                     bbox={"boxstyle": "round,pad=0.15", "fc": colour, "ec": "black", "lw": 0.4})


def _legend_items(classes, has_ref, has_opening):
    items = [(c, {"color": CLASS_COLOURS.get(c, "#FFFFFF"), "lw": 2.0, "path_effects": HALO})
             for c in classes]
    if has_ref:
        items.append(("reference zone", {"color": REFERENCE_COLOUR, "lw": 1.2, "ls": "--"}))
    if has_opening:
        items.append(("window or door", {"color": "white", "lw": 1.2, "ls": ":",
                                         "path_effects": HALO}))
    return items


def _bars(img, scales):
    return [(lim, cmap, lab, img[mask]) for lim, cmap, lab, mask in (
        (scales.opaque, TEMPERATURE_CMAP, "surface temperature, opaque elements [°C]",
         scales.opaque_mask),
        (scales.own, OWN_SCALE_CMAP, "own scale: glazing, doors, warm spots [°C]",
         scales.own_mask)) if lim is not None and mask.any()]


def thermogram_figure(image_c, regions, defects, path: str | Path, *, title: str = "",
                      scales: ViewScales | None = None, m_per_px: float | None = None,
                      uniform: bool = True, labels: dict | None = None,
                      width_mm: float = 90.0) -> Path:
    """Write the view's picture: corrected temperatures, outlines, reference zones, defects.

    Parameters
    ----------
    image_c : ndarray (H, W)
        Corrected surface temperature [°C].
    regions : dict of str to ElementRegion
    defects : sequence of Defect
        This view's ranked defects (``polygon``, ``id``, ``defect_class``), tagged by id.
    path : path
        PNG to write.
    title : str
        Drawn as typed (no math parsing).
    scales : ViewScales, optional
        Default `view_scales` with this view's warm spots on the own scale.
    m_per_px, uniform : float, bool
        Pixel size on the element plane [m] and whether it holds over the whole view.
    labels : dict of str to str, optional
        Element name → human label.
    width_mm : float
        Print width [mm]; text is 8 pt at this width.

    Returns
    -------
    Path
    """
    img = np.asarray(image_c, dtype=float)
    h, w = img.shape
    regions = regions or {}
    if scales is None:
        scales = view_scales(img, regions, warm_mask(defects, img.shape))
    bars = _bars(img, scales)
    items = _legend_items(sorted({d.defect_class for d in defects}),
                          any(r.reference_polygon is not None for r in regions.values()),
                          any(r.kind in OPENING_KINDS for r in regions.values()))
    pad = 2.0
    img_w = width_mm - 2 * pad
    img_h = img_w * h / w
    title_h = 5.0 if title else pad
    bar_h = 11.5
    legend_h = 4.2 * int(np.ceil(len(items) / 2)) + 1.0 if items else 0.0
    total = title_h + img_h + bar_h * len(bars) + legend_h + 1.5
    with style():
        sheet = Sheet(width_mm, total)
        frame = sheet.frame(pad, total - title_h - img_h, img_w, img_h, img.shape)
        frame.image(composite(img, scales))
        if title:
            sheet.text(pad, total - 1.0, title, size=9, va="top", ha="left")
        for name, reg in regions.items():
            opening = reg.kind in OPENING_KINDS
            for ring in polygon_rings(reg.polygon_net):
                frame.line(ring, color="white", lw=0.9, ls=":" if opening else "-",
                           path_effects=HALO)
            for ring in polygon_rings(getattr(reg, "reference_polygon", None)):
                frame.line(ring, color=REFERENCE_COLOUR, lw=0.9, ls="--")
            spots = [d.polygon for d in defects if d.element == name and d.polygon is not None]
            free = reg.polygon_net.difference(shapely.union_all(spots)) if spots else reg.polygon_net
            if not reg.polygon_net.is_empty:
                pt = label_point(free if not free.is_empty else reg.polygon_net)
                frame.text(pt.x, pt.y, (labels or {}).get(name) or element_label(name),
                           color="white", ha="center", va="center", bbox=LABEL_BOX)
        for d in sorted(defects, key=lambda x: x.rank):
            colour = CLASS_COLOURS.get(d.defect_class, "#FFFFFF")
            for ring in polygon_rings(d.polygon):
                frame.line(ring, color=colour, lw=1.1, path_effects=HALO)
            _defect_tag(frame, d, colour)
        draw_scale_bar(frame, m_per_px, uniform)
        y = frame.y0 - 1.5
        for lim, cmap, lab, vals in bars:
            y -= sheet.colour_bar(6.0, y, width_mm - 12.0, lim, cmap, lab, vals)
        if items:
            sheet.legend(pad + 4.0, y, items, width_mm - 2 * pad - 4.0)
        return sheet.save(path)


def crop_window(bounds, shape, m_per_px: float | None, margin_m: float = 0.4):
    """Pixel window ``(r0, r1, c0, c1)`` around `bounds` (x0, y0, x1, y1) [px]: a margin of
    `margin_m` or 20 % of the size, at least a third of the view each way, landscape between
    1:1 and 1.6:1 where the view allows."""
    h, w = shape
    x0, y0, x1, y1 = bounds
    margin = max(0.2 * max(x1 - x0, y1 - y0), margin_m / m_per_px if m_per_px else 15.0)
    cw = max(x1 - x0 + 2 * margin, w / 3.0)
    ch = max(y1 - y0 + 2 * margin, h / 3.0)
    cw = min(max(cw, ch), w)
    ch = min(max(ch, cw / 1.6), h)
    cx, cy = 0.5 * (x0 + x1), 0.5 * (y0 + y1)
    c0 = int(np.clip(np.floor(cx - cw / 2), 0, w - cw))
    r0 = int(np.clip(np.floor(cy - ch / 2), 0, h - ch))
    return r0, min(h, r0 + int(np.ceil(ch))), c0, min(w, c0 + int(np.ceil(cw)))


def crop_figure(image_c, scales: ViewScales, target, path: str | Path, *,
                layer: str = "opaque", m_per_px: float | None = None, uniform: bool = True,
                colour: str = "#FFFFFF", width_mm: float = 60.0,
                margin_m: float = 0.4, others=()) -> Path:
    """Write a close-up of one defect or element: its outline on the view's colours.

    Parameters
    ----------
    image_c : ndarray (H, W)
        Corrected surface temperature [°C].
    scales : ViewScales
        The view's scales (the close-up keeps the view's colours).
    target : shapely geometry
        Outline [px] of the defect or element.
    path : path
        PNG to write.
    layer : {"opaque", "own"}
        Which colour bar to show under the picture.
    m_per_px, uniform : float, bool
        Pixel size on the element plane [m]; draws a scale bar.
    colour : str
        Outline colour.
    width_mm : float
        Print width [mm].
    margin_m : float
        Margin around the target [m].
    others : sequence of (shapely geometry, str)
        Further outlines and their colours (e.g. the defects on an element), untagged.
    """
    img = np.asarray(image_c, dtype=float)
    r0, r1, c0, c1 = crop_window(target.bounds, img.shape, m_per_px, margin_m)
    sub = img[r0:r1, c0:c1]
    sub_scales = ViewScales(scales.opaque, scales.own, scales.context,
                            scales.opaque_mask[r0:r1, c0:c1], scales.own_mask[r0:r1, c0:c1],
                            scales.context_mask[r0:r1, c0:c1])
    own = layer == "own" and scales.own is not None
    lim = scales.own if own else scales.opaque
    cmap = OWN_SCALE_CMAP if own else TEMPERATURE_CMAP
    mask = sub_scales.own_mask if own else sub_scales.opaque_mask
    pad = 1.5
    img_w = width_mm - 2 * pad
    img_h = img_w * (r1 - r0) / max(c1 - c0, 1)
    bar_h = 11.5 if lim is not None else 0.0
    total = img_h + bar_h + 2 * pad
    with style():
        sheet = Sheet(width_mm, total)
        frame = sheet.frame(pad, total - pad - img_h, img_w, img_h, sub.shape,
                            origin_px=(c0, r0), size_px=(c1 - c0, r1 - r0))
        frame.image(composite(sub, sub_scales))
        for ring in polygon_rings(target):
            frame.line(ring, color=colour, lw=1.6, path_effects=HALO)
        for geom, col in others:
            for ring in polygon_rings(geom):
                frame.line(ring, color=col, lw=1.2, path_effects=HALO)
        draw_scale_bar(frame, m_per_px, uniform)
        if lim is not None:
            sheet.colour_bar(5.0, frame.y0 - 1.5, width_mm - 10.0, lim, cmap,
                             "surface temperature [°C]", sub[mask])
        return sheet.save(path)
