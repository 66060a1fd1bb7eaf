"""Draw every figure of `plots.plan.plan_figures` from an assessment (edge: writes PNGs)."""

from __future__ import annotations

import dataclasses
from pathlib import Path

from envelope.labels import element_label
from envelope.plots.common import CLASS_COLOURS
from envelope.plots.frsi import frsi_figure
from envelope.plots.plan import plan_figures
from envelope.plots.series import series_figure
from envelope.plots.thermogram import (
    OPENING_KINDS,
    crop_figure,
    metre_per_px,
    thermogram_figure,
    view_scales,
    warm_mask,
)
from envelope.plots.umap import u_map_figure

__all__ = ["draw_figures"]


def _labels(survey) -> dict[str, str]:
    out = {}
    for name, el in (getattr(survey, "elements", None) or {}).items():
        out[name] = element_label({"name": name, "label": getattr(el, "label", None)})
    return out


def draw_figures(assessment, out_dir: str | Path, progress=None) -> dict[str, dict[str, str]]:
    """Write the planned PNGs of every view and series into ``out_dir/figures``.

    Parameters
    ----------
    assessment : Assessment
    out_dir : path
        Output folder; figure paths are relative to it.
    progress : callable, optional
        Called with ``"figures"`` after each view.

    Returns
    -------
    dict
        The plan that was drawn (`plots.plan.plan_figures`).
    """
    out_dir = Path(out_dir)
    plan = plan_figures(assessment)
    labels = _labels(assessment.survey)
    lim_m = assessment.limit_mould
    lim_c = assessment.limit_condensation
    for v in assessment.views:
        tg = v.thermogram
        paths = plan.get(tg.id) or {}
        if not paths:
            continue
        img = v.object_c
        defects = [d for d in assessment.defects if d.thermogram == tg.id]
        warm = warm_mask(defects, img.shape)
        scales = view_scales(img, v.regions, warm)
        area = getattr(v.corrected, "area_map_m2", None)
        m, uniform = metre_per_px(area, scales.opaque_mask | scales.own_mask)
        geo = {"m_per_px": m, "uniform": uniform}
        thermogram_figure(img, v.regions, defects, out_dir / paths["thermogram"],
                          title=f"{tg.id} · {tg.side} view", scales=scales, labels=labels, **geo)
        if "frsi" in paths:
            masks = [r.mask for r in v.regions.values()]
            # the factor the limits are defined for (design convention) when the view has it
            design = getattr(v, "frsi_design", None)
            fmap, conv = (v.frsi, "night") if design is None else (design, "design")
            frsi_figure(fmap, out_dir / paths["frsi"], limit=lim_m, condensation=lim_c,
                        title=f"{tg.id} · " + ("fRsi at the design convention" if conv == "design"
                                               else "temperature factor"),
                        masks=masks, convention=conv,
                        outlines=[r.polygon_net for r in v.regions.values()], exclude=warm,
                        **geo)
        if "u_map" in paths:
            bad = {e.name: e.u_note for e in v.elements if not e.u_valid}
            u_map_figure(v.u_map_w_m2k, v.regions, out_dir / paths["u_map"],
                         title=f"{tg.id} · U per pixel" + (" (NOT VALID)" if bad else ""),
                         not_valid=bad, **geo)
        by_id = {d.id: d for d in defects}
        for key, rel in paths.items():
            kind, _, name = key.partition(":")
            if kind == "defect" and name in by_id:
                d = by_id[name]
                crop_figure(img, scales, d.polygon, out_dir / rel,
                            colour=CLASS_COLOURS.get(d.defect_class, "#FFFFFF"), **geo)
            elif kind == "element" and name in v.regions:
                reg = v.regions[name]
                on_it = [(d.polygon, CLASS_COLOURS.get(d.defect_class, "#FFFFFF"))
                         for d in defects if d.element == name and d.polygon is not None]
                crop_figure(img, scales, reg.polygon_net, out_dir / rel, others=on_it,
                            layer="own" if reg.kind in OPENING_KINDS else "opaque", **geo)
        if progress:
            progress("figures")
    for sr in assessment.series:
        series_figure(dataclasses.asdict(sr), out_dir / f"figures/series-{sr.id}.png")
    return plan
