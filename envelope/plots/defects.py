"""Thermogram with the ranked defects outlined, numbered and labelled by class."""

from __future__ import annotations

from pathlib import Path

import numpy as np

from envelope.plots.common import TEMPERATURE_CMAP, image_axes, polygon_rings, save

SHORT_LABELS = {
    "linear thermal bridge": "linear bridge",
    "repeating thermal bridge": "repeating bridge",
    "missing insulation": "missing insulation",
    "air leakage": "air leakage",
    "unexplained": "unexplained",
}
CLASS_COLOURS = {
    "linear thermal bridge": "#56b4e9",
    "repeating thermal bridge": "#009e73",
    "missing insulation": "#f0e442",
    "air leakage": "#ffffff",
    "unexplained": "#bbbbbb",
}
ELEMENT_COLOUR = "0.8"


def defects_figure(image_c, defects, path: str | Path, regions=None,
                   title: str | None = None) -> Path:
    """Write a PNG of a thermogram with each defect outlined and numbered by its rank.

    Parameters
    ----------
    image_c : array_like, shape (H, W)
        Surface temperatures [°C].
    defects : sequence of Defect
        From `envelope.defects.find_defects` (``polygon``, ``rank``, ``defect_class``).
    path : str or Path
        Output PNG.
    regions : dict[str, ElementRegion], optional
        Element outlines drawn thinly beneath the defects.
    title : str, optional

    Returns
    -------
    Path
        The written file.

    Notes
    -----
    Pixel coordinates follow the project convention: the frame spans ``[0, W] x [0, H]``
    and outlines are drawn on those coordinates (image extent set accordingly).
    """
    img = np.asarray(image_c, dtype=float)
    h, w = img.shape
    fig, ax = image_axes(img, cmap=TEMPERATURE_CMAP, label="Surface temperature [°C]",
                         title=title)
    ax.images[0].set_extent((0.0, w, h, 0.0))
    for el in (regions or {}).values():
        for ring in polygon_rings(getattr(el, "polygon_net", None)):
            ax.plot(ring[:, 0], ring[:, 1], color=ELEMENT_COLOUR, lw=0.6, ls="--")
    seen = set()
    for d in sorted(defects, key=lambda x: x.rank):
        colour = CLASS_COLOURS.get(d.defect_class, "#bbbbbb")
        label = SHORT_LABELS.get(d.defect_class, d.defect_class)
        for ring in polygon_rings(d.polygon):
            ax.plot(ring[:, 0], ring[:, 1], color=colour, lw=1.3,
                    label=None if label in seen else label)
            seen.add(label)
        rings = polygon_rings(d.polygon)
        if rings:  # number above the top-left of its largest part (a group: its first)
            top = min(rings, key=lambda r: (r[:, 0].min(), r[:, 1].min()))
            x0, y0 = float(top[:, 0].min()), float(top[:, 1].min())
        else:
            x0, y0 = d.bbox_px[0], d.bbox_px[1]
        ax.text(x0, max(y0 - 2.0, 0.0), f"{d.rank}", color="black", fontsize=8,
                fontweight="bold", va="bottom", ha="left",
                bbox={"boxstyle": "round,pad=0.15", "fc": colour, "ec": "none", "alpha": 0.85})
    ax.set_xlim(0, w)
    ax.set_ylim(h, 0)
    if seen:
        ax.legend(loc="lower right", fontsize=7, framealpha=0.6)
    return save(fig, path)
