"""The builder's check (``check.html``): one A4 page judging each specified element as
built, with the undisturbed U beside it, the defects on it with what they cost, and what
would settle or fix it. Layout in ``templates/check.html``.
"""

from __future__ import annotations

from collections.abc import Mapping

import envelope.report.facts as facts
from envelope.labels import element_label
from envelope.report.figures import Figures
from envelope.report.numbers import is_num, num, pct, plural, u_text, value_text

__all__ = ["MAX_PICTURES", "MAX_ROWS_WITH_PICTURES", "builder_context"]

MAX_PICTURES = 3
"""Close-ups on the sheet (one row at A4 width)."""
MAX_ROWS_WITH_PICTURES = 8
"""With more checked elements than this the sheet carries no pictures, to stay on one page."""
_ORDER = {"fail": 0, "inconclusive": 1, "pass": 2}
_LETTERS = "abcdefghijklmnopqrstuvwxyz"


def _defect_line(d: Mapping) -> str:
    kwh = d.get("annual_kwh")
    kwh_txt = (("≥ " if d.get("annual_kwh_lower_bound") else "") + num(kwh, 0) + " kWh/yr"
               if is_num(kwh) else "energy n/a")
    extra = value_text(d.get("extra_w"), floor=0.0, std=d.get("extra_w_std"), default_decimals=1)
    return (f"{d.get('id')} {d.get('defect_class')}, {num(d.get('area_m2'), 2)} m²: "
            f"{extra.value} W, {kwh_txt}")


def builder_context(results: Mapping, figs: Figures) -> dict:
    """Everything ``check.html`` shows."""
    checked = [e for e in facts.elements_of(results) if is_num(e.get("u_specified_w_m2k"))]
    defects = facts.defects_of(results)
    rows = []
    notes_text: list[str] = []  # remedies shared by several elements, printed once
    for e in sorted(checked, key=lambda e: (_ORDER.get(e.get("verdict"), 3), element_label(e))):
        on_it = [d for d in defects if d.get("element") == e.get("name")
                 and d.get("thermogram") == e.get("thermogram") and not facts.warm_spot(d)]
        basis = facts.verdict_basis(e)
        und = u_text(e.get("u_w_m2k"), e.get("u_low95_w_m2k"), e.get("u_high95_w_m2k"))
        whole = u_text(e.get("u_whole_w_m2k"), e.get("u_whole_low95_w_m2k"),
                       e.get("u_whole_high95_w_m2k"), std=e.get("u_whole_std_w_m2k"),
                       default_decimals=und.decimals)
        verdict = e.get("verdict") or "none"
        rem = facts.remedy(e, on_it)
        todo = []  # (what, text)
        if rem["fix"] and verdict in ("fail", "inconclusive"):
            todo.append(("fix", rem["fix"]))
        if verdict == "fail" and not rem["fix"]:
            what = ("the glazing unit and its frame against the specification"
                    if e.get("kind") in ("window", "door") else
                    "the insulation product, its thickness and its fitting")
            todo.append(("fix", f"no local defect: the whole element is above its "
                                f"specification; check {what}"))
        if verdict == "inconclusive" and rem["action"]:
            key = f"{rem['who']}: {rem['action']}"
            if key not in notes_text:
                notes_text.append(key)
            share = f", {pct(rem['share'])} of the variance" if rem["share"] is not None else ""
            todo.append(("settle", f"({_LETTERS[notes_text.index(key) % 26]}){share}"))
        notes = []
        if e.get("u_valid") is False:
            notes.append("U not valid: " + (e.get("u_note") or "see the auditor's report"))
        above = bool(basis["warning"]) and verdict != "fail"
        view = next((t for t in results.get("thermograms") or []
                     if t.get("id") == e.get("thermogram")), {})
        crop = (view.get("figures") or {}).get(f"element:{e.get('name')}")
        rows.append({
            "label": element_label(e), "view": e.get("thermogram") or "",
            "spec": num(e.get("u_specified_w_m2k"), 2),
            "whole": whole, "whole_has_interval": bool(whole.interval),
            "undisturbed": und, "verdict": verdict, "basis": basis["short"],
            "as_built": basis["as_built"],
            "defects": [_defect_line(d) for d in on_it],
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
                    shown = f"; {', '.join(d.split(' ')[0] for d in r['defects'])} outlined" \
                        if r["defects"] else ""
                    pictures.append({"src": src, "caption": f"{r['label']} ({r['view']}){shown}",
                                     "verdict": r["verdict"]})
    failing = [r["label"] for r in rows if r["verdict"] == "fail"]
    summary = ""
    if rows:
        parts = [f"{counts[w]} {w}" for w in ("fail", "inconclusive", "pass") if counts[w]]
        summary = f"{plural(len(rows), 'checked element')}: " + ", ".join(parts)
        if failing:
            summary += " — fails: " + ", ".join(failing)
    any_fallback = any(not r["as_built"] for r in rows)
    footnotes = [(_LETTERS[i % 26], f"To settle an inconclusive verdict, narrow the interval: "
                                    f"{t}.") for i, t in enumerate(notes_text)]
    bases = {r["basis"] for r in rows}
    return {"rows": rows, "footnotes": footnotes,
            "same_basis": bases.pop() if len(bases) == 1 else None,
            "any_whole_interval": any(r["whole_has_interval"] for r in rows),
            "any_above": any(r["above_spec"] for r in rows), "overall": overall, "summary": summary,
            "night": facts.night_validity(results), "pictures": pictures,
            "too_many_for_pictures": len(rows) > MAX_ROWS_WITH_PICTURES,
            "any_fallback": any_fallback, "rule": facts.VERDICT_RULE,
            "tolerance": facts.get(results, "survey", "analysis", "verdict_tolerance_w_m2k")}
