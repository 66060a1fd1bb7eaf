"""The homeowner summary (``summary.html`` and ``summary.pdf``): plain words, human labels,
every fix with its own numbered picture, totals equal to what is listed, and cautions that
hold for any client's survey. Layout in ``templates/summary.html``.

No sentence holds a code name: elements are named by their ``label`` (else a readable form
of the name) and defects by what they are, never by id.
"""

from __future__ import annotations

from collections.abc import Mapping

import envelope.report.facts as facts
from envelope.constants import Z95
from envelope.labels import class_words, element_label
from envelope.report.figures import Figures
from envelope.report.numbers import (
    is_num,
    money_symbol,
    plain_amount,
    plain_money,
    plain_range,
    plural,
)

__all__ = ["CAUTIONS", "MAX_PICTURED_FIXES", "homeowner_context", "fix_title"]

MAX_PICTURED_FIXES = 6
"""Fixes shown with a picture; any further ones are listed below them without one."""

CAUTIONS = (
    "Thermal images show where heat escapes; they do not prove the cause. Before paying for "
    "expensive work, have what a picture suggests confirmed by opening up, inspecting or "
    "measuring.",
    "A fan pressure test of the house can pull flue gases back indoors from open-flue "
    "appliances such as gas fires, boilers and wood stoves. Such tests belong to trained "
    "people, with those appliances switched off and made safe first.",
    "Roofs and ladders, electrical equipment and gas equipment carry hazards of their own: "
    "leave them to people trained and equipped for them.",
    "Mould is a health matter, not only a building one: damp, mouldy rooms can harm "
    "breathing, above all for children, older people and anyone with asthma.",
    "Energy, cost and carbon figures are estimates from one night's measurements, the energy "
    "price and heating efficiency your surveyor entered, and typical weather for the area; "
    "your bills will differ.",
    "Local building codes and licensed practitioners have the last word on any work.",
)

_RISK_WORDS = {
    "condensation": "can run wet with condensation in a cold spell (and grow mould)",
    "mould": "can stay cold and damp enough for mould to grow in a cold spell",
}


def _targets_text(results, m) -> tuple[list[str], list[Mapping], list[str]]:
    """Labels of what a measure acts on, its defects, and its element names."""
    defects = {d.get("id"): d for d in results.get("defects") or []}
    labels, ds, names = [], [], []
    for t in m.get("targets") or []:
        if t in defects:
            ds.append(defects[t])
            name = defects[t].get("element")
        else:
            name = t
        names.append(name)
        lab = facts.label_of(results, name, lower=True)
        if lab not in labels:
            labels.append(lab)
    return labels, ds, names


def _join(words: list[str]) -> str:
    words = [w for w in words if w]
    if len(words) <= 1:
        return "".join(words)
    return ", ".join(words[:-1]) + " and " + words[-1]


def fix_title(results: Mapping, m: Mapping) -> str:
    """A plain title for a measure from what it does and where (the surveyor's own name of
    the measure stays in the auditor's report)."""
    labels, ds, _ = _targets_text(results, m)
    where = "the " + _join(labels) if labels else "the house"
    kind = m.get("kind")
    if kind == "add_layer":
        return f"Add insulation to {where}"
    if kind == "replace_glazing":
        return f"Replace the glazing of {where}"
    if kind == "seal_leak":
        return f"Seal the draught at {where}"
    if kind == "fix_bridge":
        return f"Insulate the cold junction at {where}"
    if kind == "repair_defect":
        return f"Put right the missing insulation in {where}"
    return f"Improve {where}"


def _payback(pay) -> str:
    if not is_num(pay):
        return "It does not pay for itself on energy savings alone."
    if pay > 30:
        return (f"On energy savings alone it would take about {plain_amount(pay)} years to pay "
                "for itself, so it is best done for comfort or together with other work.")
    return f"It pays for itself in about {plain_amount(pay)} years."


def _picture(results, targets: list[str], defects: list[Mapping], used: set) -> dict | None:
    views = {t.get("id"): t.get("figures") or {} for t in results.get("thermograms") or []}
    for d in defects:
        rel = views.get(d.get("thermogram"), {}).get(f"defect:{d.get('id')}")
        if rel and rel not in used:
            return {"rel": rel, "what": facts.label_of(results, d.get("element"))}
    for e in facts.elements_of(results):
        if e.get("name") in targets:
            rel = views.get(e.get("thermogram"), {}).get(f"element:{e.get('name')}")
            if rel and rel not in used:
                return {"rel": rel, "what": element_label(e)}
    return None


def _fixes(results, figs: Figures, cur: str) -> list[dict]:
    sym = money_symbol(cur)
    defects = {d.get("id"): d for d in results.get("defects") or []}

    def key(m):
        risky = any(defects.get(t, {}).get("risk") in ("mould", "condensation")
                    for t in m.get("targets") or [])
        risky |= any(e.get("risk") in ("mould", "condensation") for e in facts.elements_of(results)
                     if e.get("name") in (m.get("targets") or []))
        pay, money = m.get("payback_years"), m.get("annual_money_saved")
        return (not risky, pay if is_num(pay) else 1e18, -(money if is_num(money) else 0))

    measures = sorted([m for m in results.get("measures") or [] if isinstance(m, Mapping)], key=key)
    used: set = set()
    out = []
    for i, m in enumerate(measures, 1):
        labels, ds, names = _targets_text(results, m)
        kwh = (m.get("annual_kwh_saved_low95"), m.get("annual_kwh_saved"),
               m.get("annual_kwh_saved_high95"))
        money = (m.get("annual_money_saved_low95"), m.get("annual_money_saved"),
                 m.get("annual_money_saved_high95"))
        low = any(facts.lower_bound(d) for d in ds)  # a leak counted by its conduction only
        body = [f"Saves {plain_range(*kwh, 'kWh')} a year"
                + (f", worth {plain_money(*money, sym)} a year" if is_num(money[1]) else "")
                + ("; at least that, as the heat carried by the leaking air is not counted."
                   if low else ".")]
        if is_num(m.get("cost")):
            body.append(f"Costs about {sym}{plain_amount(m['cost'])}. " + _payback(m.get("payback_years")))
        if key(m)[0] is False:
            body.insert(0, "It makes a cold, damp-prone surface warmer.")
        pic = None
        if i <= MAX_PICTURED_FIXES:
            pic = _picture(results, names, ds, used)
            if pic:
                used.add(pic["rel"])
                pic["src"] = figs.src(pic["rel"])
                if pic["src"] is None:
                    pic = None
        out.append({"number": i, "title": fix_title(results, m), "body": " ".join(body),
                    "picture": pic, "kwh": m.get("annual_kwh_saved"),
                    "money": m.get("annual_money_saved"), "cost": m.get("cost"),
                    "targets": names})
    return out


def _total(results, fixes, cur) -> dict | None:
    if not fixes:
        return None
    sym = money_symbol(cur)
    costs = [f["cost"] for f in fixes if is_num(f["cost"])]
    kwh_sum = sum(f["kwh"] for f in fixes if is_num(f["kwh"]))
    money_sum = sum(f["money"] for f in fixes if is_num(f["money"]))
    pkg = results.get("package") or {}
    overlap = False
    if is_num(pkg.get("annual_kwh_saved")) and len(fixes) == len(results.get("measures") or []):
        kwh = (pkg.get("annual_kwh_saved_low95"), pkg.get("annual_kwh_saved"),
               pkg.get("annual_kwh_saved_high95"))
        money = (pkg.get("annual_money_saved_low95"), pkg.get("annual_money_saved"),
                 pkg.get("annual_money_saved_high95"))
        overlap = pkg["annual_kwh_saved"] < 0.99 * kwh_sum
    else:
        kwh, money = (None, kwh_sum, None), (None, money_sum, None)
    text = (f"All {plural(len(fixes), 'fix', 'fixes')} together cost about "
            f"{sym}{plain_amount(sum(costs))} and save {plain_range(*kwh, 'kWh')} a year, "
            f"worth {plain_money(*money, sym)} a year.")
    if overlap:
        text += (" That is less than the fixes add up to one by one, because some of them "
                 "act on the same surfaces.")
    return {"text": text, "cost": sum(costs), "kwh": kwh[1], "money": money[1],
            "kwh_sum": kwh_sum, "overlap": overlap}


def _problems(results) -> list[str]:
    out = []
    for d in facts.defects_of(results):
        if facts.warm_spot(d):
            continue
        others = [facts.label_of(results, e, lower=True) for e in d.get("elements") or []
                  if e != d.get("element")]
        where = _join([facts.label_of(results, d.get("element"))] + others)
        what = class_words(d.get("defect_class"))
        size = d.get("area_m2")
        text = f"{where}: {'an' if what[:1] in 'aeiou' else 'a'} {what}"
        length = d.get("length_m")
        if (d.get("count") or 1) > 1:
            text = f"{where}: {what} ({d['count']} of them)"
        elif d.get("defect_class") == "linear thermal bridge" and is_num(length):
            text += f" about {plain_amount(length)} metres long"
        elif is_num(size) and size >= 0.05:
            text += f" of about {plain_amount(size)} square metres"
        kwh = d.get("annual_kwh")
        if is_num(kwh) and kwh >= 1:
            text += (f"; it lets out at least {plain_amount(kwh)} kWh a year"
                     if facts.lower_bound(d) else
                     f"; it lets out about {plain_amount(kwh)} kWh a year")
        if d.get("risk") in _RISK_WORDS:
            text += f"; it {_RISK_WORDS[d['risk']]}"
        out.append(text + ".")
    return out


def homeowner_context(results: Mapping, figs: Figures) -> dict:
    """Everything ``summary.html`` (and the PDF made from it) shows."""
    s = results.get("survey") or {}
    cur = s.get("currency") or ""
    h = results.get("heat_loss") or {}
    losses = facts.largest_losses(results)
    fixes = _fixes(results, figs, cur)
    total = _total(results, fixes, cur)
    short, heat = [], []
    annual = h.get("annual_kwh")
    if is_num(annual):
        lo = h.get("annual_kwh_low95")
        hi = h.get("annual_kwh_high95")
        if not (is_num(lo) and is_num(hi)) and is_num(h.get("annual_kwh_std")):
            lo, hi = annual - Z95 * h["annual_kwh_std"], annual + Z95 * h["annual_kwh_std"]
        heat.append(f"The walls, windows, floors and ceilings that were surveyed lose "
                    f"{plain_range(lo, annual, hi, 'kWh')} of heat a year (kilowatt-hours, the "
                    "unit on your energy bill), before your boiler's or heat pump's efficiency.")
        short.append(f"Heat lost through the surveyed surfaces: about "
                     f"{plain_amount(annual)} kWh a year.")
    defect_ids = {d.get("id") for d in results.get("defects") or []}
    targeted = {t for m in results.get("measures") or [] for t in m.get("targets") or []
                if t not in defect_ids}  # the element itself, not a spot on it
    biggest = None
    if losses:
        top = losses[0]
        biggest = dict(top, src=None, caption="")
        heat.append(f"Most of it goes through the {facts.label_of(results, top['name'], lower=True)}"
                    f": about {round(100 * top['share'])} of every 100 units lost.")
        if top["name"] not in targeted:
            heat.append("This survey prices no fix for it; ask your surveyor what it would take "
                        "to improve it.")
        short.append(f"Largest heat loss: the {facts.label_of(results, top['name'], lower=True)}"
                     f" (about {round(100 * top['share'])} in every 100 units).")
        others = [f"the {facts.label_of(results, r['name'], lower=True)} (about "
                  f"{round(100 * r['share'])} in 100)" for r in losses[1:3] if r["share"] >= 0.05]
        if others:
            heat.append("Next come " + _join(others) + ".")
        views = {t.get("id"): t.get("figures") or {} for t in results.get("thermograms") or []}
        el = next((e for e in facts.elements_of(results) if e.get("name") == top["name"]), None)
        rel = views.get(el.get("thermogram"), {}).get(f"element:{top['name']}") if el else None
        used = {f["picture"]["rel"] for f in fixes if f["picture"]}
        if rel and rel not in used:
            biggest["src"] = figs.src(rel)
            biggest["caption"] = f"{facts.label_of(results, top['name'])}: the largest heat loss"
    for e in facts.elements_of(results):
        if e.get("u_valid") is False:
            heat.append(f"The {element_label(e, lower=True)} could not be measured reliably on "
                        "this night; it is left out of these totals.")
    risky = facts.risky_elements(results)
    risks = [f"The {element_label(e, lower=True)} {_RISK_WORDS[e['risk']]}." for e in risky]
    if risks:
        short.append(risks[0])
    # a risk the list of problems already states (a spot on that surface with that risk)
    # is not said again below it
    stated = {(name, d.get("risk")) for d in facts.defects_of(results) if not facts.warm_spot(d)
              for name in [d.get("element"), *(d.get("elements") or [])]}
    more_risks = [f"The {element_label(e, lower=True)} {_RISK_WORDS[e['risk']]}." for e in risky
                  if (e.get("name"), e.get("risk")) not in stated]
    problems = _problems(results)
    if fixes:
        short.append(f"Best first step: {fixes[0]['title'][:1].lower()}{fixes[0]['title'][1:]}.")
    site = s.get("site") or {}
    return {
        "site": site.get("name") or "your home",
        "place": ", ".join(str(x) for x in (site.get("address"), site.get("town")) if x),
        "date": s.get("date") or "", "surveyor": s.get("surveyor") or "",
        "short": short, "heat": heat, "biggest": biggest,
        "problems": problems,
        "problems_head": (f"We found {plural(len(problems), 'problem spot')}." if problems
                          else "We found no problem spots on the surveyed surfaces."),
        "fixes": fixes, "pictured": [f for f in fixes if f["number"] <= MAX_PICTURED_FIXES],
        "more": [f for f in fixes if f["number"] > MAX_PICTURED_FIXES],
        "total": total, "risks": risks, "more_risks": more_risks, "cautions": CAUTIONS,
    }
