"""What the three reports read from the results, decided once: labels, states, caveats,
verdict bases, remedies and the heat-loss ranking.

Every function takes the results dict (schema ``envelope-results`` v2, with or without the
keys that later pipeline versions add) and returns plain Python values; nothing here
formats HTML. Keys planned but not yet written by every pipeline (``label``,
``u_whole_low95_w_m2k``, ``narrowing``, ``verdict_basis``, ``frsi_design_min``...) are
used when present, with a stated fallback when absent.
"""

from __future__ import annotations

import re
from collections.abc import Mapping

from envelope.labels import INPUT_WORDS, element_label
from envelope.report.numbers import is_num, num, pct

__all__ = ["STATUS_ORDER", "get", "label_of", "elements_of", "defects_of", "checks_bad",
           "view_state", "night_validity", "element_caveats", "defect_caveats",
           "verdict_basis", "remedy", "largest_losses", "risky_elements", "warm_spot",
           "clean_reason", "VERDICT_RULE", "measures_ranked", "verdict_text"]

STATUS_ORDER = {"pass": 0, "warn": 1, "fail": 2}
VERDICT_RULE = ("PASS when the whole 95 % interval of the judged U is at or below the "
                "specified U (plus any tolerance), FAIL when it is wholly above, otherwise "
                "INCONCLUSIVE.")
CHECK_WORDS = {
    "delta_t": "indoor–outdoor temperature difference", "wind": "wind", "rain": "rain",
    "outdoor drift": "outdoor temperature drift", "indoor drift": "indoor temperature drift",
    "view_angle": "viewing angle", "sun": "sun before the survey", "night_sky": "night-sky cooling",
}
_REMEDIES = {
    "reflected": "measure it at this view (foil reflector read by the camera), or repeat on a "
                 "night with a larger indoor–outdoor difference",
    "probe": "read the contact probe more precisely, or at more spots on this element",
    "camera_absolute": "add a contact-probe spot on this element to remove the camera's "
                       "absolute error",
    "camera_relative": "repeat on a night with a larger indoor–outdoor difference",
    "t_ai": "log the indoor air next to the element with a calibrated sensor",
    "t_ae": "log the outdoor air with a calibrated, shaded sensor",
    "emissivity": "measure it with a reference tape on the element",
    "emissivity (tape)": "put the tape where it is well above the reflected temperature",
    "t_sky": "survey under full cloud cover",
    "tape": "put the tape where it is well above the reflected temperature",
    "h_c": "pin it with a heat-flux meter on the element",
    "h_c_model": "pin the film coefficient with a heat-flux meter on the element",
    "wind": "survey on a calmer night, or measure the wind at the wall",
    "sky": "survey under full cloud cover",
}


def get(mapping, *keys, default=None):
    """Nested lookup that copes with missing keys and None at any level."""
    cur = mapping
    for key in keys:
        if not isinstance(cur, Mapping):
            return default
        cur = cur.get(key)
        if cur is None:
            return default
    return cur


def label_of(results: Mapping, name, lower: bool = False) -> str:
    """Human label of the element called `name` (its ``label`` key, else a readable name)."""
    for e in results.get("elements") or []:
        if e.get("name") == name:
            return element_label(e, lower=lower)
    return element_label(str(name or ""), lower=lower)


def elements_of(results: Mapping) -> list[dict]:
    return [e for e in results.get("elements") or [] if isinstance(e, Mapping)]


def defects_of(results: Mapping) -> list[dict]:
    ds = [d for d in results.get("defects") or [] if isinstance(d, Mapping)]
    return sorted(ds, key=lambda d: d.get("rank") if is_num(d.get("rank")) else 1e9)


def checks_bad(checks) -> list[dict]:
    """Checks that did not pass, worst first."""
    bad = [c for c in checks or [] if isinstance(c, Mapping) and c.get("status") in ("warn", "fail")]
    return sorted(bad, key=lambda c: -STATUS_ORDER.get(c.get("status"), 0))


def _worst(statuses) -> str:
    worst = "pass"
    for s in statuses:
        if STATUS_ORDER.get(s, 0) > STATUS_ORDER[worst]:
            worst = s
    return worst


def view_state(results: Mapping, view: Mapping) -> dict:
    """State of one view for a heading: never "assessed" alone when a check failed.

    Returns ``{"status", "worst", "word", "problems"}``: ``worst`` is the worst of the
    view's own checks, its elements' checks (other than the survey-wide ones) and an
    element whose U is not valid; ``word`` says it in a few words.
    """
    tid = view.get("id")
    status = view.get("status") or "assessed"
    statuses, problems = [], []
    for c in view.get("checks") or []:
        statuses.append(c.get("status"))
        if c.get("status") in ("warn", "fail"):
            problems.append(f"{CHECK_WORDS.get(c.get('name'), c.get('name'))}: "
                            f"{c.get('status')}")
    for e in elements_of(results):
        if e.get("thermogram") != tid:
            continue
        for c in e.get("checks") or []:
            if c.get("scope") == "survey" and c.get("name") not in ("view_angle", "sun", "night_sky"):
                continue
            statuses.append(c.get("status"))
            if c.get("status") in ("warn", "fail"):
                text = f"{CHECK_WORDS.get(c.get('name'), c.get('name'))}: {c.get('status')}"
                if text not in problems:
                    problems.append(text)
        if e.get("u_valid") is False:
            statuses.append("fail")
            problems.append(f"U of {element_label(e, lower=True)} not valid")
    worst = _worst(statuses)
    if status == "failed":
        word = "not assessed"
    elif status == "paired":
        word = f"depressurised image, used with {view.get('paired_with') or 'its baseline'}"
    else:
        word = {"pass": "assessed, checks pass", "warn": "assessed, with warnings",
                "fail": "assessed, a check FAILED"}[worst]
    return {"status": status, "worst": "fail" if status == "failed" else worst, "word": word,
            "problems": problems}


def night_validity(results: Mapping) -> dict:
    """Validity of the night: survey-wide checks and views with a failed check.

    Returns ``{"worst", "word", "headline", "survey_bad", "n_checks", "views_bad",
    "sentence"}``.
    """
    checks = [c for c in results.get("checks") or [] if isinstance(c, Mapping)]
    survey_worst = _worst(c.get("status") for c in checks)
    views_bad = []
    for t in results.get("thermograms") or []:
        st = view_state(results, t)
        if st["status"] == "failed" or st["worst"] == "fail":
            views_bad.append((t.get("id"), st))
    word = {"pass": "valid", "warn": "valid, with warnings", "fail": "NOT valid"}[survey_worst]
    bad = checks_bad(checks)
    parts = [f"{len(checks) - len(bad)} of {len(checks)} survey checks pass"] if checks else \
        ["no survey-wide checks recorded"]
    parts += [f"{CHECK_WORDS.get(c.get('name'), c.get('name'))} {c.get('status')}"
              f" ({_check_value(c)})" for c in bad]
    if views_bad:
        parts.append("views with a failed check or not assessed: " + ", ".join(
            f"{tid} ({'; '.join(st['problems']) or st['word']})" for tid, st in views_bad))
    headline = word
    if views_bad:
        headline += f"; {len(views_bad)} view{'s' if len(views_bad) > 1 else ''} with a failed check"
    return {"worst": survey_worst, "word": word, "headline": headline, "survey_bad": bad,
            "n_checks": len(checks),
            "views_bad": views_bad, "sentence": f"Night {word}: " + "; ".join(parts) + "."}


def _check_value(c: Mapping) -> str:
    v, unit = c.get("value"), c.get("unit")
    if not is_num(v):
        return "no value"
    unit = "" if unit in (None, "", "-", "1") else f" {unit}"
    return f"{v:.3g}{unit}"


_FRSI_REASON = re.compile(r"\(fRsi (-?[0-9.]+) against (-?[0-9.]+)\)")


def clean_reason(text: str) -> str:
    """A defect reason as printed: a temperature factor above 1 (a surface warmer than the
    indoor air, i.e. a heat source) is said in words, not as a meaningless factor."""
    def repl(m):
        f = float(m.group(1))
        if f > 1.0:
            return f"(warmer than the indoor air; reference fRsi {m.group(2)})"
        return m.group(0)

    return _FRSI_REASON.sub(repl, str(text))


def warm_spot(d: Mapping) -> bool:
    """A warm anomaly (reflection or heat source), not a defect to fix."""
    return any("warmer than reference" in str(n) for n in d.get("notes") or [])


def element_caveats(e: Mapping) -> list[str]:
    """Every caveat an element result carries, in words, for the line under its numbers."""
    out = []
    if e.get("u_valid") is False:
        out.append("U NOT VALID" + (f": {e['u_note']}" if e.get("u_note") else ""))
    elif e.get("u_note"):
        out.append(str(e["u_note"]))
    if e.get("risk_note"):
        out.append(str(e["risk_note"]))
    for c in checks_bad([c for c in e.get("checks") or [] if c.get("scope") != "survey"
                         or c.get("name") in ("view_angle", "sun", "night_sky")]):
        out.append(f"{CHECK_WORDS.get(c.get('name'), c.get('name'))} check "
                   f"{str(c.get('status')).upper()} ({_check_value(c)}; rule: {c.get('rule')})")
    if e.get("u_definition"):
        out.append(f"U definition: {e['u_definition']}")
    return out


def defect_caveats(d: Mapping) -> list[str]:
    """Notes of a defect, with the leak energy's lower-bound note first when flagged."""
    out = []
    if d.get("annual_kwh_lower_bound"):
        out.append("energy is a lower bound: only the conductive part of the leak is counted, "
                   "not the heat carried by the leaking air")
    out += [str(n) for n in d.get("notes") or [] if not str(n).startswith("fRsi p05")]
    return out


def verdict_basis(e: Mapping) -> dict:
    """Which U the builder verdict judged, and a warning when that is not the element as built.

    Returns ``{"basis", "short", "as_built", "warning"}``: ``basis`` in words (``short``
    for a table cell); ``as_built`` True
    when the verdict judged the whole net area (defects included). Without a
    ``verdict_basis`` key the pipeline of schema v2 judged the undisturbed area; the
    warning then says when the element as built is above the specification.
    """
    basis = e.get("verdict_basis")
    spec, whole = e.get("u_specified_w_m2k"), e.get("u_whole_w_m2k")
    if basis:
        as_built = any(w in str(basis).lower() for w in ("whole", "as built", "as-built"))
        words = "element as built (whole area, defects included)" if as_built else str(basis)
        short = "as built" if as_built else str(basis)
    else:
        as_built = False
        words = "undisturbed area only (reference zone, defects excluded)"
        short = "on the undisturbed area"
    warning = ""
    if not as_built and is_num(spec) and is_num(whole) and whole > spec:
        warning = (f"as built, defects included, U is {num(whole, 2)} > {num(spec, 2)} "
                   "specified: this verdict covers the undisturbed area only")
    return {"basis": words, "short": short, "as_built": as_built, "warning": warning}


def verdict_text(e: Mapping) -> str:
    """Why the builder verdict is what it is, from the numbers (U printed never below zero).

    The interval is that of the judged U: the whole-area interval when the results say the
    verdict judged the element as built and carry it, else the undisturbed one.
    """
    from envelope.report.numbers import u_text

    spec = e.get("u_specified_w_m2k")
    verdict = e.get("verdict")
    if not is_num(spec) or not verdict:
        return ""
    if verdict_basis(e)["as_built"] and is_num(e.get("u_whole_low95_w_m2k")):
        u = u_text(e.get("u_whole_w_m2k"), e.get("u_whole_low95_w_m2k"),
                   e.get("u_whole_high95_w_m2k"))
    else:
        u = u_text(e.get("u_w_m2k"), e.get("u_low95_w_m2k"), e.get("u_high95_w_m2k"))
    iv = f"95 % interval {u.interval}" if u.interval else "no interval"
    reason = str(e.get("verdict_reason") or "")
    night = "validity check failed" in reason
    if verdict == "pass":
        text = f"the whole {iv} is at or below the limit {num(spec, 2)}"
    elif verdict == "fail":
        text = f"the whole {iv} is above the limit {num(spec, 2)}"
    elif night and "within the limit" in reason:
        text = (f"the {iv} is within the limit {num(spec, 2)}, but a survey validity check "
                "failed: a pass needs a valid night")
    else:
        text = f"the {iv} includes the limit {num(spec, 2)}"
    if night and verdict != "inconclusive":
        text += "; a survey validity check failed: confirm before remedial work"
    return text


def _top_budget(e: Mapping) -> tuple[str | None, float | None]:
    budget = [b for b in e.get("budget") or [] if is_num(b.get("share"))]
    if not budget:
        return None, None
    top = max(budget, key=lambda b: b["share"])
    return top.get("input"), top["share"]


def remedy(e: Mapping, defects: list[Mapping]) -> dict:
    """What would settle an inconclusive verdict or fix a failing element.

    Uses the ``narrowing`` key when the results carry it (``contributor``, ``share``,
    ``remedy``); otherwise the largest share of the element's uncertainty budget, phrased
    for what the view already had (a probe that was used is not asked for again). Defects
    on the element are named with the repair. Returns ``{"narrow", "fix", "source", "who",
    "share", "action"}`` (``narrow`` is who, share and action in one sentence).
    """
    narrow, who, share, action = "", "", None, ""
    nar = e.get("narrowing")
    if isinstance(nar, Mapping) and nar.get("remedy"):
        who = str(INPUT_WORDS.get(str(nar.get("contributor")), nar.get("contributor") or ""))
        share = nar.get("share") if is_num(nar.get("share")) else None
        action = str(nar["remedy"])
        source = "narrowing"
    else:
        inp, share = _top_budget(e)
        source = "budget"
        if inp:
            who = INPUT_WORDS.get(inp, inp)
            action = _REMEDIES.get(inp, "narrow its uncertainty")
    if action:
        narrow = (f"{who} ({pct(share)} of the variance of U): {action}" if share is not None
                  else f"{who}: {action}")
    fixes = [d for d in defects if not warm_spot(d)]
    fix = ""
    if fixes:
        fix = "make good " + ", ".join(str(d.get("id")) for d in fixes) + ", check again"
    return {"narrow": narrow, "fix": fix, "source": source, "who": who, "share": share,
            "action": action}


def largest_losses(results: Mapping) -> list[dict]:
    """Elements by their share of H, largest first: ``{"name", "label", "h_w_k", "share"}``."""
    h = results.get("heat_loss") or {}
    rows = [r for r in h.get("by_element") or [] if is_num(r.get("h_w_k"))]
    total = h.get("h_w_k") if is_num(h.get("h_w_k")) and h.get("h_w_k") > 0 else \
        sum(r["h_w_k"] for r in rows) or 1.0
    out = [{"name": r.get("name"), "label": label_of(results, r.get("name")),
            "h_w_k": r["h_w_k"], "share": r["h_w_k"] / total} for r in rows]
    return sorted(out, key=lambda r: -r["h_w_k"])


def risky_elements(results: Mapping) -> list[dict]:
    """Elements at condensation risk, then mould risk (valid results only)."""
    order = {"condensation": 0, "mould": 1}
    risky = [e for e in elements_of(results) if e.get("risk") in order]
    return sorted(risky, key=lambda e: order[e["risk"]])


def measures_ranked(results: Mapping) -> list[dict]:
    """Measures by yearly money saved (then energy), the package left out."""
    def key(m):
        money = m.get("annual_money_saved")
        kwh = m.get("annual_kwh_saved")
        return (-(money if is_num(money) else -1e18), -(kwh if is_num(kwh) else -1e18))

    return sorted([m for m in results.get("measures") or [] if isinstance(m, Mapping)], key=key)
