"""Thermogram with the element outlines, reference zones, openings and numbered defects."""

from __future__ import annotations

from collections.abc import Mapping
from pathlib import Path

import numpy as np
import shapely

from envelope.plots.common import TEMPERATURE_CMAP, image_axes, polygon_rings, save

ELEMENT_COLOUR = "white"
REFERENCE_COLOUR = "cyan"
OPENING_COLOUR = "white"
DEFECT_COLOUR = "lime"


def _draw(ax, geom, colour, ls, lw=1.3):
    for ring in polygon_rings(geom, holes=True):
        ax.plot(ring[:, 0], ring[:, 1], ls, color=colour, lw=lw)


def _label(ax, geom, text, colour):
    if geom is None or geom.is_empty:
        return
    pt = shapely.point_on_surface(geom)
    ax.text(pt.x, pt.y, text, color=colour, fontsize=8, ha="center", va="center",
            bbox={"boxstyle": "round,pad=0.2", "fc": "black", "ec": "none", "alpha": 0.55})


def _mask_outline(ax, mask, colour):
    ax.contour(np.asarray(mask, dtype=float), levels=[0.5], colors=[colour], linewidths=1.2,
               extent=(0, mask.shape[1], mask.shape[0], 0), origin="upper")


def overlay_figure(image_c, regions_or_outlines, path, title=None, defects=None) -> Path:
    """Save a PNG of the thermogram with every outline drawn over it.

    Parameters
    ----------
    image_c : array_like, shape (H, W)
        Surface temperatures [°C].
    regions_or_outlines : dict of str to ElementRegion, or list of Outline
        Element regions (net outlines, openings, reference masks) or raw outlines.
    path : str or Path
        PNG file to write.
    title : str, optional
    defects : list of (int, shapely geometry or bool mask), optional
        Numbered defects drawn in green with their number.

    Returns
    -------
    Path
        The written file.

    Notes
    -----
    Element outlines are solid, reference zones dashed, openings dotted; each element is
    labelled at a point inside it (``shapely.point_on_surface``).
    """
    img = np.asarray(image_c, dtype=float)
    fig, ax = image_axes(img, cmap=TEMPERATURE_CMAP, title=title)
    if isinstance(regions_or_outlines, Mapping):
        for name, reg in regions_or_outlines.items():
            ls = ":" if reg.kind in ("window", "door") else "-"
            colour = OPENING_COLOUR if ls == ":" else ELEMENT_COLOUR
            _draw(ax, reg.polygon_net, colour, ls, lw=1.8 if ls == ":" else 1.3)
            if reg.reference_polygon is not None:
                _draw(ax, reg.reference_polygon, REFERENCE_COLOUR, "--")
            _label(ax, reg.polygon_net, name, colour)
    else:
        for o in regions_or_outlines:
            if o.role == "reference":
                _draw(ax, o.polygon, REFERENCE_COLOUR, "--")
            else:
                _draw(ax, o.polygon, ELEMENT_COLOUR, "-")
                _label(ax, o.polygon, o.element, ELEMENT_COLOUR)
    for number, shape in defects or ():
        if isinstance(shape, np.ndarray):
            if not shape.any():
                continue
            _mask_outline(ax, shape, DEFECT_COLOUR)
            rows, cols = np.nonzero(shape)
            ax.text(cols.mean() + 0.5, rows.mean() + 0.5, str(number), color=DEFECT_COLOUR,
                    fontsize=9, fontweight="bold", ha="center", va="center")
        else:
            _draw(ax, shape, DEFECT_COLOUR, "-", lw=1.6)
            _label(ax, shape, str(number), DEFECT_COLOUR)
    ax.set_xlim(0, img.shape[1])
    ax.set_ylim(img.shape[0], 0)
    return save(fig, path)
