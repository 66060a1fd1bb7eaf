"""The builder's check (``check.html``): one A4 page judging each specified element as
built, with the undisturbed U beside it, the defects on it with what they cost, and what
would settle or fix it. Layout in ``templates/check.html``.

Texts are composed from the numbers, short enough for 20 elements on one page: the
pipeline's long reasons stay in the auditor's report.
"""

from __future__ import annotations

from collections.abc import Mapping

import envelope.report.facts as facts
from envelope.labels import element_label
from envelope.report.figures import Figures
from envelope.report.numbers import is_num, num, pct, plural, u_text, value_text

__all__ = ["MAX_PICTURES", "MAX_ROWS_WITH_PICTURES", "MAX_DEFECT_LINES", "builder_context"]

MAX_PICTURES = 3
"""Close-ups on the sheet (one row at A4 width)."""
MAX_ROWS_WITH_PICTURES = 8
"""With more checked elements than this the sheet carries no pictures, to stay on one page."""
MAX_DEFECT_LINES = 2
"""Defects listed one per line on a row; more are summed on one line."""
_ORDER = {"fail": 0, "inconclusive": 1, "pass": 2}
_LETTERS = "abcdefghijklmnopqrstuvwxyz"


def _defect_line(d: Mapping) -> str:
    """``D2 missing insulation 0.72 m²: 20 W, 59 kWh/yr`` (``at least`` for a lower bound)."""
    extra = value_text(d.get("extra_w"), floor=0.0, std=d.get("extra_w_std"), default_decimals=1)
    size = f"{num(d.get('area_m2'), 2)} m²"
    if d.get("defect_class") == "linear thermal bridge" and is_num(d.get("length_m")):
        size = f"{num(d.get('length_m'), 1)} m"
    return (f"{d.get('id')} {d.get('defect_class')} {size}: {extra.value} W, "
            f"{facts.energy_text(d)}")


def _defect_lines(on_it: list[Mapping], most: int = MAX_DEFECT_LINES) -> list[str]:
    if len(on_it) <= most:
        return [_defect_line(d) for d in on_it]
    w = sum(d["extra_w"] for d in on_it if is_num(d.get("extra_w")))
    kwh = sum(d["annual_kwh"] for d in on_it if is_num(d.get("annual_kwh")))
    low = any(facts.lower_bound(d) for d in on_it)
    classes = sorted({str(d.get("defect_class")) for d in on_it})
    what = classes[0] if len(classes) == 1 else "defects"
    return [f"{', '.join(str(d.get('id')) for d in on_it)} {what}: "
            f"{num(w, 0)} W, {'at least ' if low else ''}{num(kwh, 0)} kWh/yr together"]


def _u_pair(e: Mapping) -> tuple:
    """(judged U, undisturbed U) on the verdict's definition of U."""
    basis = facts.verdict_basis(e)
    judged = facts.judged_u(e)
    if basis["environmental"] and is_num(e.get("u_env_w_m2k")):
        und = u_text(e.get("u_env_w_m2k"), e.get("u_env_low95_w_m2k"),
                     e.get("u_env_high95_w_m2k"))
    else:
        und = u_text(e.get("u_w_m2k"), e.get("u_low95_w_m2k"), e.get("u_high95_w_m2k"))
    return judged, und


def builder_context(results: Mapping, figs: Figures) -> dict:
    """Everything ``check.html`` shows."""
    checked = [e for e in facts.elements_of(results) if is_num(e.get("u_specified_w_m2k"))]
    defects = facts.defects_of(results)
    rows = []
    notes_text: list[str] = []  # remedies shared by several elements, printed once
    many = len(checked) > MAX_ROWS_WITH_PICTURES  # compact rows: one line per kind of text
    for e in sorted(checked, key=lambda e: (_ORDER.get(e.get("verdict"), 3), element_label(e))):
        on_it = [d for d in defects if d.get("element") == e.get("name")
                 and d.get("thermogram") == e.get("thermogram") and not facts.warm_spot(d)]
        basis = facts.verdict_basis(e)
        whole, und = _u_pair(e)
        verdict = e.get("verdict") or "none"
        rem = facts.remedy(e, on_it)
        todo = []  # (what, text)
        fix_ids = [str(d.get("id")) for d in on_it]
        if fix_ids and verdict in ("fail", "inconclusive"):
            todo.append(("fix", f"make good {', '.join(fix_ids)}, then check again"))
        if verdict == "fail" and not fix_ids:
            what = ("glazing unit and frame" if e.get("kind") in ("window", "door") else
                    "insulation product, thickness and fitting")
            todo.append(("fix", f"no local defect, the whole element is above: check the "
                                f"{what} against the specification"))
        if verdict == "inconclusive" and rem["action"]:
            key = rem["action"]
            if key not in notes_text:
                notes_text.append(key)
            share = f", {pct(rem['share'])} of the variance" if rem["share"] is not None else ""
            todo.append(("settle", f"({_LETTERS[notes_text.index(key) % 26]}){share}"))
        notes = []
        if e.get("u_valid") is False:
            notes.append("U not valid: " + (facts.clean_note(e.get("u_note"))
                                             or "see the auditor's report"))
        bad = [c for c in e.get("checks") or [] if c.get("status") == "fail"
               and (c.get("scope") != "survey" or c.get("name") in facts.VIEW_CHECKS)]
        notes += [f"{facts.CHECK_WORDS.get(c.get('name'), c.get('name'))} "
                  f"{facts._check_value(c)}: {str(c.get('status')).upper()}" for c in bad]
        tape = facts.emissivity_note(e)
        if tape:
            notes.append("tape: " + tape.split(": ", 1)[1].split(";")[0])
        above = bool(basis["warning"]) and verdict != "fail"
        view = next((t for t in results.get("thermograms") or []
                     if t.get("id") == e.get("thermogram")), {})
        crop = (view.get("figures") or {}).get(f"element:{e.get('name')}")
        rows.append({
            "label": element_label(e), "view": e.get("thermogram") or "",
            "spec": num(e.get("u_specified_w_m2k"), 2),
            "whole": whole, "whole_has_interval": bool(whole.interval),
            "undisturbed": und, "verdict": verdict, "basis": basis["short"],
            "as_built": basis["as_built"], "environmental": basis["environmental"],
            "defects": _defect_lines(on_it, 1 if many else MAX_DEFECT_LINES), "defect_ids": [str(d.get("id")) for d in on_it],
            "todo": todo, "notes": notes, "crop": crop, "above_spec": above,
        })
    verdicts = [r["verdict"] for r in rows]
    overall = next((w for w in ("fail", "inconclusive", "pass") if w in verdicts), None)
    counts = {w: verdicts.count(w) for w in ("fail", "inconclusive", "pass")}
    pictures = []
    if 0 < len(rows) <= MAX_ROWS_WITH_PICTURES:
        for r in rows:
            if r["crop"] and len(pictures) < MAX_PICTURES:
                src = figs.src(r["crop"])
                if src:
                    shown = f"; {', '.join(r['defect_ids'])} outlined" if r["defect_ids"] else ""
                    pictures.append({"src": src, "caption": f"{r['label']} ({r['view']}){shown}",
                                     "verdict": r["verdict"]})
    failing = [r["label"] for r in rows if r["verdict"] == "fail"]
    summary = ""
    if rows:
        parts = [f"{counts[w]} {w}" for w in ("fail", "inconclusive", "pass") if counts[w]]
        summary = f"{plural(len(rows), 'checked element')}: " + ", ".join(parts)
        if failing:
            shown = failing[:4] + ([f"{len(failing) - 4} more"] if len(failing) > 4 else [])
            summary += " — fails: " + ", ".join(shown)
    footnotes = [(_LETTERS[i % 26], t) for i, t in enumerate(notes_text)]
    bases = {r["basis"] for r in rows}
    env = {r["environmental"] for r in rows}
    return {"rows": rows, "footnotes": footnotes,
            "same_basis": bases.pop() if len(bases) == 1 else None,
            "all_environmental": env == {True},
            "any_whole_interval": any(r["whole_has_interval"] for r in rows),
            "any_above": any(r["above_spec"] for r in rows), "overall": overall,
            "any_surface_air": any("surface–air" in n for r in rows for n in r["notes"]),
            "summary": summary, "night": facts.night_validity(results, max_views=3),
            "pictures": pictures, "too_many_for_pictures": len(rows) > MAX_ROWS_WITH_PICTURES,
            "rule": facts.VERDICT_RULE,
            "tolerance": facts.get(results, "survey", "analysis", "verdict_tolerance_w_m2k")}
