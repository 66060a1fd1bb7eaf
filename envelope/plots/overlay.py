"""Thermogram with element outlines, reference zones and numbered marks, for raw outlines
(the outline editor's check) as well as assessed regions."""

from __future__ import annotations

from collections.abc import Mapping
from pathlib import Path

import numpy as np

from envelope.plots.common import OKABE_ITO, Sheet, element_limits, style
from envelope.plots.thermogram import (
    HALO,
    LABEL_BOX,
    REFERENCE_COLOUR,
    ViewScales,
    composite,
    label_point,
    view_scales,
)

__all__ = ["overlay_figure"]

MARK_COLOUR = OKABE_ITO["bluish green"]


def _scales_of_outlines(img, outlines) -> ViewScales:
    from envelope.outlines import rasterise

    masks = [rasterise(o.polygon, img.shape) for o in outlines if o.role != "reference"]
    any_el = np.logical_or.reduce(masks) if masks else np.zeros(img.shape, bool)
    lim = element_limits(img, masks, min_span=2.0) or element_limits(img, [np.isfinite(img)],
                                                                    min_span=2.0)
    return ViewScales(lim, None, element_limits(img, [~any_el], 1.0, 99.0, 2.0), any_el,
                      np.zeros(img.shape, bool), ~any_el)


def overlay_figure(image_c, regions_or_outlines, path, title=None, defects=None,
                   width_mm: float = 90.0) -> Path:
    """Save a PNG of the thermogram with every outline drawn over it.

    Parameters
    ----------
    image_c : array_like, shape (H, W)
        Surface temperatures [°C].
    regions_or_outlines : dict of str to ElementRegion, or list of Outline
        Element regions (net outlines, openings, reference zones) or raw outlines.
    path : str or Path
        PNG file to write.
    title : str, optional
        Drawn as typed (no math parsing).
    defects : list of (int, shapely geometry or bool mask), optional
        Numbered marks drawn in bluish green with their number.
    width_mm : float
        Print width [mm].

    Returns
    -------
    Path
        The written file.

    Notes
    -----
    Element outlines are solid, reference zones dashed, openings dotted; each element is
    labelled at its pole of inaccessibility.
    """
    from envelope.outlines import rasterise

    img = np.asarray(image_c, dtype=float)
    h, w = img.shape
    if isinstance(regions_or_outlines, Mapping):
        scales = view_scales(img, regions_or_outlines)
        shapes = [(r.polygon_net, "-" if r.kind not in ("window", "door") else ":", "white", name)
                  for name, r in regions_or_outlines.items()]
        shapes += [(r.reference_polygon, "--", REFERENCE_COLOUR, None)
                   for r in regions_or_outlines.values() if r.reference_polygon is not None]
    else:
        outlines = list(regions_or_outlines)
        scales = _scales_of_outlines(img, outlines)
        shapes = [(o.polygon, "--" if o.role == "reference" else "-",
                   REFERENCE_COLOUR if o.role == "reference" else "white",
                   None if o.role == "reference" else o.element) for o in outlines]
    pad = 2.0
    img_w = width_mm - 2 * pad
    img_h = img_w * h / w
    title_h = 5.0 if title else pad
    total = title_h + img_h + 13.0
    with style():
        sheet = Sheet(width_mm, total)
        frame = sheet.frame(pad, total - title_h - img_h, img_w, img_h, img.shape)
        frame.image(composite(img, scales))
        if title:
            sheet.text(pad, total - 1.0, title, size=9, va="top", ha="left")
        from envelope.plots.common import polygon_rings

        for geom, ls, colour, name in shapes:
            for ring in polygon_rings(geom, holes=True):
                frame.line(ring, color=colour, ls=ls, lw=1.0, path_effects=HALO)
            if name and geom is not None and not geom.is_empty:
                pt = label_point(geom)
                frame.text(pt.x, pt.y, name, color="white", ha="center", va="center",
                           bbox=LABEL_BOX)
        for number, shape in defects or ():
            geom_mask = shape if isinstance(shape, np.ndarray) else rasterise(shape, img.shape)
            if not np.asarray(geom_mask).any():
                continue
            if isinstance(shape, np.ndarray):
                rows, cols = np.nonzero(shape)
                frame.image(np.where(shape[..., None], np.array([0.0, 0.62, 0.45, 0.6]), 0.0))
                frame.text(cols.mean() + 0.5, rows.mean() + 0.5, str(number), color="white",
                           fontweight="bold", ha="center", va="center", path_effects=HALO)
            else:
                for ring in polygon_rings(shape):
                    frame.line(ring, color=MARK_COLOUR, lw=1.4, path_effects=HALO)
                pt = label_point(shape)
                frame.text(pt.x, pt.y, str(number), color="white", fontweight="bold",
                           ha="center", va="center", path_effects=HALO)
        if scales.opaque is not None:
            sheet.colour_bar(6.0, frame.y0 - 1.5, width_mm - 12.0, scales.opaque, "inferno",
                             "surface temperature [°C]", img[scales.opaque_mask])
        return sheet.save(path)
