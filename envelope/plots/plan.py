"""Which figures a survey gets, and their file names (no drawing, no matplotlib).

One plan serves both ends: `envelope.results` records it in ``results.json``
(``thermograms[].figures``) and `envelope.plots.draw.draw_figures` draws exactly it, so
every figure a report names exists. Per assessed view: one picture of the corrected
temperatures with outlines and defects (``thermogram``), and the temperature-factor map
(``frsi``, interior views) or the U map (``u_map``, exterior views, where fRsi is not
measured). Close-ups (``defect:<id>``, ``element:<name>``) are drawn for every defect that is
not a warm spot, for every element a measure targets or a specification covers, and for the
element with the largest heat loss: the homeowner summary and the builder sheet show them.
"""

from __future__ import annotations

from envelope.labels import safe_slug

__all__ = ["view_figures", "crop_names", "plan_figures"]


def view_figures(tid: str, side: str, status: str) -> dict[str, str]:
    """The whole-view figures of one thermogram, relative to the output folder."""
    if status == "failed":
        return {}
    base = safe_slug(tid)
    paths = {"thermogram": f"figures/{base}-thermogram.png"}
    if status == "assessed":
        if side == "interior":
            paths["frsi"] = f"figures/{base}-frsi.png"
        else:
            paths["u_map"] = f"figures/{base}-u.png"
    return paths


def _is_warm(d) -> bool:
    from envelope.defects import WARM_NOTE

    return WARM_NOTE in (getattr(d, "notes", None) or ())


def crop_names(assessment) -> tuple[set[str], set[str]]:
    """Defect ids and element names that get a close-up (see the module text)."""
    defects = {d.id for d in assessment.defects if not _is_warm(d)}
    elements = {e.name for e in assessment.elements if e.u_specified_w_m2k is not None}
    for m in getattr(assessment.energy, "measures", ()) or ():
        elements.update(str(t) for t in getattr(m, "targets", ()) if str(t) not in defects)
    balance = getattr(assessment.energy, "balance", None)
    by_element = getattr(getattr(balance, "heat_loss", None), "by_element", ()) or ()
    if by_element:
        elements.add(str(max(by_element, key=lambda r: r[1])[0]))
    return defects, elements


def plan_figures(assessment) -> dict[str, dict[str, str]]:
    """Thermogram id → {figure key: path relative to the output folder}.

    Keys: ``thermogram``, ``frsi`` or ``u_map``, ``defect:<id>`` and ``element:<name>``.
    File names are made safe (`labels.safe_slug`) and unique within the survey.
    """
    defect_ids, element_names = crop_names(assessment)
    plan: dict[str, dict[str, str]] = {}
    used: set[str] = set()
    for v in assessment.views:
        tg = v.thermogram
        paths = view_figures(tg.id, tg.side, v.status)
        used.update(paths.values())
        if v.status == "assessed":
            base = safe_slug(tg.id)
            wanted = [(f"defect:{d.id}", f"{base}-defect-{safe_slug(d.id)}")
                      for d in assessment.defects if d.thermogram == tg.id and d.id in defect_ids]
            wanted += [(f"element:{e.name}", f"{base}-element-{safe_slug(e.name)}")
                       for e in v.elements if e.name in element_names]
            for key, stem in wanted:
                rel, k = f"figures/{stem}.png", 2
                while rel in used:
                    rel, k = f"figures/{stem}-{k}.png", k + 1
                used.add(rel)
                paths[key] = rel
        plan[tg.id] = paths
    return plan
