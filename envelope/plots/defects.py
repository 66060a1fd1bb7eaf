"""Thermogram with the ranked defects outlined and tagged by id (see `plots.thermogram`)."""

from __future__ import annotations

from pathlib import Path

from envelope.plots.thermogram import thermogram_figure

__all__ = ["defects_figure"]


def defects_figure(image_c, defects, path: str | Path, regions=None,
                   title: str | None = None, **kwargs) -> Path:
    """Write a PNG of a thermogram with each defect outlined in its class colour and tagged
    with its id; element outlines, reference zones and openings drawn beneath.

    Parameters
    ----------
    image_c : array_like, shape (H, W)
        Surface temperatures [°C].
    defects : sequence of Defect
        From `envelope.defects.find_defects` (``polygon``, ``id``, ``rank``,
        ``defect_class``).
    path : str or Path
        Output PNG.
    regions : dict[str, ElementRegion], optional
        The view's elements: their pixels set the colour limits.
    title : str, optional
    **kwargs
        Passed to `plots.thermogram.thermogram_figure` (``m_per_px``, ``labels``...).

    Returns
    -------
    Path
    """
    return thermogram_figure(image_c, regions or {}, list(defects), path, title=title or "",
                             **kwargs)
