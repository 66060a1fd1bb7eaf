"""What the three reports read from the results, decided once: labels, states, caveats,
verdict bases, the judged U, remedies, energies and the heat-loss ranking.

Every function takes the results dict (schema ``envelope-results`` v2) and returns plain
Python values; nothing here formats HTML. Keys that not every pipeline writes (``label``,
``u_whole_env_w_m2k``, ``narrowing``, ``verdict_basis``, ``frsi_design_min``,
``warm_spot``, ``energy_lower_bound``...) are used when present, with a stated fallback
when absent.
"""

from __future__ import annotations

import re
from collections.abc import Mapping

from envelope.labels import INPUT_WORDS, element_label
from envelope.report.numbers import is_num, num, pct, u_text

__all__ = ["STATUS_ORDER", "VIEW_CHECKS", "CHECK_WORDS", "get", "label_of", "elements_of",
           "defects_of", "checks_bad", "check_text", "view_state", "night_validity",
           "element_caveats", "defect_caveats", "emissivity_note", "verdict_basis",
           "judged_u", "remedy", "narrowing", "largest_losses", "risky_elements",
           "warm_spot", "clean_note", "lower_bound", "energy_text", "clean_reason", "VERDICT_RULE",
           "measures_ranked", "verdict_text", "risk_factor"]

STATUS_ORDER = {"pass": 0, "warn": 1, "fail": 2}
VERDICT_RULE = ("PASS when the whole 95 % interval of the judged U is at or below the "
                "specified U (plus any tolerance), FAIL when it is wholly above, otherwise "
                "INCONCLUSIVE.")
VIEW_CHECKS = ("view_angle", "sun", "night_sky")
"""Checks that belong to a view (its night), as opposed to one element's U."""
CHECK_WORDS = {
    "delta_t": "indoor–outdoor temperature difference", "wind": "wind", "rain": "rain",
    "outdoor drift": "outdoor temperature drift", "indoor drift": "indoor temperature drift",
    "view_angle": "viewing angle", "sun": "sun before the survey",
    "night_sky": "night-sky cooling", "surface_air": "surface–air difference",
    "iso9869_duration": "duration (ISO 9869-1)",
    "iso9869_24h": "end vs 24 h earlier (ISO 9869-1)",
    "iso9869_two_thirds": "first vs last two thirds (ISO 9869-1)",
    "iso9869_storage": "stored heat (ISO 9869-1)",
    "iso9869_period": "whole days for a heavy element (ISO 9869-1)",
    "storage": "heat storage under the outdoor drift",
    "night_end_vs_third": "end vs one third earlier (ours)",
    "night_two_thirds": "first vs last two thirds (ours)",
    "dynamic_interval": "dynamic method: interval",
    "dynamic_stability": "dynamic method: stability (ours)",
}
"""Check names in words (the rule of each check is printed beside it where checks are
listed in full)."""
_REMEDIES = {
    "reflected": "measure it at this view (foil reflector read by the camera), or repeat on a "
                 "night with a larger indoor–outdoor difference",
    "probe": "read the contact probe more precisely, or at more spots on this element",
    "camera_absolute": "add a contact-probe spot on this element to remove the camera's "
                       "absolute error",
    "camera_offset": "add a contact-probe spot on this element to remove the camera's "
                     "absolute error",
    "camera_relative": "repeat on a night with a larger indoor–outdoor difference",
    "t_ai": "log the indoor air next to the element with a calibrated sensor",
    "t_ae": "log the outdoor air with a calibrated, shaded sensor",
    "emissivity": "measure it with a reference tape on the element",
    "tape": "put the tape where it is well above the reflected temperature",
    "h_c": "pin it with a heat-flux meter on the element",
    "wind": "survey on a calmer night, or measure the wind at the wall",
    "t_sky": "survey under full cloud cover",
}
"""Fallback remedies when the results carry no ``narrowing`` list."""


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
    bad = [c for c in checks or [] if isinstance(c, Mapping)
           and c.get("status") in ("warn", "fail")]
    return sorted(bad, key=lambda c: -STATUS_ORDER.get(c.get("status"), 0))


def _worst(statuses) -> str:
    worst = "pass"
    for s in statuses:
        if STATUS_ORDER.get(s, 0) > STATUS_ORDER[worst]:
            worst = s
    return worst


def _check_value(c: Mapping) -> str:
    v, unit = c.get("value"), c.get("unit")
    if not is_num(v):
        return "no value"
    unit = "" if unit in (None, "", "-", "1") else f" {unit}"
    return f"{v:.3g}{unit}"


def check_text(c: Mapping, rule: bool = False) -> str:
    """A check in a few words: ``surface–air difference WARN (1.66 K)`` (and its rule)."""
    text = (f"{CHECK_WORDS.get(c.get('name'), c.get('name'))} "
            f"{str(c.get('status')).upper()} ({_check_value(c)})")
    return text + (f"; rule: {c.get('rule')}" if rule and c.get("rule") else "")


def _view_checks(results: Mapping, view: Mapping) -> list[dict]:
    """The view's own checks, and those its elements carry under a view check's name."""
    tid = view.get("id")
    out = [c for c in view.get("checks") or [] if isinstance(c, Mapping)]
    names = {c.get("name") for c in out}
    for e in elements_of(results):
        if e.get("thermogram") != tid:
            continue
        for c in e.get("checks") or []:
            if c.get("name") in VIEW_CHECKS and c.get("name") not in names:
                out.append(c)
                names.add(c.get("name"))
    return out


def view_state(results: Mapping, view: Mapping) -> dict:
    """State of one view for a heading: never "assessed" alone when a check failed.

    Returns ``{"status", "worst", "word", "problems"}``: ``worst`` is the worst of the
    view's checks (viewing angle, sun, night sky), its elements' own checks (surface–air
    difference...) and an element whose U is not valid; ``problems`` says each in words.
    """
    tid = view.get("id")
    status = view.get("status") or "assessed"
    statuses, problems = [], []
    for c in _view_checks(results, view):
        statuses.append(c.get("status"))
        if c.get("status") in ("warn", "fail"):
            problems.append(f"{CHECK_WORDS.get(c.get('name'), c.get('name'))}: "
                            f"{c.get('status')}")
    for e in elements_of(results):
        if e.get("thermogram") != tid:
            continue
        for c in e.get("checks") or []:
            if c.get("scope") == "survey" or c.get("name") in VIEW_CHECKS:
                continue
            statuses.append(c.get("status"))
            if c.get("status") in ("warn", "fail"):
                problems.append(f"{element_label(e)}: "
                                f"{CHECK_WORDS.get(c.get('name'), c.get('name'))} "
                                f"{c.get('status')} ({_check_value(c)})")
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


def night_validity(results: Mapping, max_views: int = 4) -> dict:
    """Validity of the night: survey-wide checks and views whose own check failed.

    A view counts against the night when it could not be assessed or one of its view
    checks (viewing angle, sun, night sky) failed; one element's poorly conditioned U is
    that element's caveat, not the night's. Returns ``{"worst", "word", "headline",
    "survey_bad", "n_checks", "views_bad", "sentence", "short"}``; ``short`` names at most
    `max_views` views.
    """
    checks = [c for c in results.get("checks") or [] if isinstance(c, Mapping)]
    survey_worst = _worst(c.get("status") for c in checks)
    views_bad = []
    for t in results.get("thermograms") or []:
        if t.get("status") == "failed":
            views_bad.append((t.get("id"), ["not assessed"]))
            continue
        failed = [CHECK_WORDS.get(c.get("name"), c.get("name"))
                  for c in _view_checks(results, t) if c.get("status") == "fail"]
        if failed:
            views_bad.append((t.get("id"), failed))
    word = {"pass": "valid", "warn": "valid, with warnings", "fail": "NOT valid"}[survey_worst]
    bad = checks_bad(checks)
    parts = [f"{len(checks) - len(bad)} of {len(checks)} survey checks pass"] if checks else \
        ["no survey-wide checks recorded"]
    parts += [f"{CHECK_WORDS.get(c.get('name'), c.get('name'))} {c.get('status')}"
              f" ({_check_value(c)})" for c in bad]
    short_parts = list(parts)
    if views_bad:
        named = [f"{tid} ({', '.join(p)})" for tid, p in views_bad]
        parts.append("view checks failed: " + ", ".join(named))
        more = len(named) - max_views
        short_parts.append("view checks failed: " + ", ".join(named[:max_views])
                           + (f" and {more} more" if more > 0 else ""))
    headline = word
    if views_bad:
        headline += (f"; {len(views_bad)} view{'s' if len(views_bad) > 1 else ''} "
                     "with a failed check")
    return {"worst": survey_worst, "word": word, "headline": headline, "survey_bad": bad,
            "n_checks": len(checks), "views_bad": views_bad,
            "sentence": f"Night {word}: " + "; ".join(parts) + ".",
            "short": f"Night {word}: " + "; ".join(short_parts) + "."}


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


_SPOTS = re.compile(r"\b(\d+) contact-probe spot\(s\) give\b")


def clean_note(text) -> str:
    """A note as printed: "1 contact-probe spot(s) give" → "1 contact-probe spot gives"."""
    def repl(m):
        n = m.group(1)
        return f"{n} contact-probe spot gives" if n == "1" else f"{n} contact-probe spots give"

    return _SPOTS.sub(repl, str(text or ""))


def warm_spot(d: Mapping) -> bool:
    """A warm anomaly (reflection or heat source), not a defect to fix: the ``warm_spot``
    key, or (results without it) the pipeline's note."""
    if "warm_spot" in d and d["warm_spot"] is not None:
        return bool(d["warm_spot"])
    return any("warmer than reference" in str(n) for n in d.get("notes") or [])


def lower_bound(d: Mapping) -> bool:
    """The defect's energy is a lower bound (a leak counted by its conductive part only)."""
    return bool(d.get("energy_lower_bound") or d.get("annual_kwh_lower_bound"))


def energy_text(d: Mapping, unit: str = "kWh/yr") -> str:
    """A defect's yearly energy: ``55 kWh/yr``, ``at least 55 kWh/yr`` for a lower bound,
    ``warm spot`` for a warm anomaly."""
    if warm_spot(d):
        return "warm spot"
    kwh = d.get("annual_kwh")
    if not is_num(kwh):
        return "energy n/a"
    return ("at least " if lower_bound(d) else "") + num(kwh, 0, unit)


def emissivity_note(e: Mapping) -> str:
    """The tape's note when an emissivity tape was used or refused on this element's view
    (empty otherwise): shown where the element's emissivity and U are."""
    src = str(e.get("emissivity_source") or "")
    if "tape" not in src.lower():
        return ""
    return f"emissivity tape in view {e.get('thermogram')}: {src}"


def element_caveats(e: Mapping) -> list[str]:
    """Every caveat an element result carries, in words, for the line under its numbers:
    validity, the tape's note, the element's own checks (in a few words), the risk note."""
    out = []
    note = clean_note(e.get("u_note"))
    if e.get("u_valid") is False:
        out.append("U NOT VALID" + (f": {note}" if note else ""))
    elif note and "contact-probe spot" not in note:
        out.append(note)  # the probe's offset is in the calibration line
    tape = emissivity_note(e)
    if tape:
        out.append(tape)
    if e.get("risk_note"):
        out.append(str(e["risk_note"]))
    for c in checks_bad([c for c in e.get("checks") or [] if c.get("scope") != "survey"
                         or c.get("name") in VIEW_CHECKS]):
        out.append(check_text(c))
    return out


_DESIGN_NOTE = re.compile(r"^fRsi (at the design convention|p05)")


def defect_caveats(d: Mapping) -> list[str]:
    """Notes of a defect, the energy's lower-bound note first when flagged; the note that
    repeats the two factors (they have their own columns) is left out."""
    out = []
    if lower_bound(d):
        out.append("energy is a lower bound (at least): only the conductive part of the leak "
                   "is counted, not the heat carried by the leaking air")
    out += [str(n) for n in d.get("notes") or [] if not _DESIGN_NOTE.match(str(n))]
    return out


def verdict_basis(e: Mapping) -> dict:
    """Which U the builder verdict judged, and a warning when that is not the element as built.

    Returns ``{"basis", "short", "as_built", "environmental", "warning"}``: ``basis`` in
    words (``short`` for a table cell); ``as_built`` True when the verdict judged the whole
    net area (defects included); ``environmental`` True when U was referred to
    environmental temperatures (the ISO 6946 definition of a specified U). Without a
    ``verdict_basis`` key the pipeline judged the undisturbed area; the warning then says
    when the element as built is above the specification.
    """
    basis = e.get("verdict_basis")
    spec, whole = e.get("u_specified_w_m2k"), e.get("u_whole_w_m2k")
    env = "environmental" in str(basis or "").lower() or \
        str(e.get("u_specified_basis") or "").lower() == "environmental"
    if basis:
        low = str(basis).lower()
        as_built = any(w in low for w in ("whole", "as built", "as-built"))
        words = str(basis)
        short = ("as built" if as_built else "undisturbed area") + \
            (", environmental temperatures" if env else ", air temperatures"
             if "air" in str(e.get("u_specified_basis") or "") else "")
    else:
        as_built = False
        words = "undisturbed area only (reference zone, defects excluded)"
        short = "on the undisturbed area"
    warning = ""
    if not as_built and is_num(spec) and is_num(whole) and whole > spec:
        warning = (f"as built, defects included, U is {num(whole, 2)} > {num(spec, 2)} "
                   "specified: this verdict covers the undisturbed area only")
    return {"basis": words, "short": short, "as_built": as_built, "environmental": env,
            "warning": warning}


def judged_u(e: Mapping):
    """The U the builder verdict judged, printed in the reports' convention (`ValueText`).

    As built and referred to environmental temperatures when the results say so (the
    ``u_whole_env_*`` keys; without ``u_whole_env_w_m2k`` only its interval is printed),
    else as built referred to air temperatures, else the undisturbed U.
    """
    basis = verdict_basis(e)
    und = u_text(e.get("u_w_m2k"), e.get("u_low95_w_m2k"), e.get("u_high95_w_m2k"))
    if basis["as_built"] and basis["environmental"] and is_num(e.get("u_whole_env_low95_w_m2k")):
        return u_text(e.get("u_whole_env_w_m2k"), e.get("u_whole_env_low95_w_m2k"),
                      e.get("u_whole_env_high95_w_m2k"), default_decimals=und.decimals)
    if basis["as_built"]:
        return u_text(e.get("u_whole_w_m2k"), e.get("u_whole_low95_w_m2k"),
                      e.get("u_whole_high95_w_m2k"), std=e.get("u_whole_std_w_m2k"),
                      default_decimals=und.decimals)
    return und


def verdict_text(e: Mapping) -> str:
    """Why the builder verdict is what it is, from the numbers (U printed never below zero):
    the interval of the judged U (`judged_u`) against the specified U."""
    spec = e.get("u_specified_w_m2k")
    verdict = e.get("verdict")
    if not is_num(spec) or not verdict:
        return ""
    u = judged_u(e)
    iv = f"95 % interval {u.interval}" if u.interval else "no interval"
    reason = str(e.get("verdict_reason") or "")
    night = "validity check" in reason and "failed" in reason
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


def narrowing(e: Mapping) -> list[dict]:
    """What would narrow the element's interval, largest contributor first:
    ``[{"contributor", "who", "share", "remedy"}]`` from the ``narrowing`` list (a single
    mapping is accepted too); without it, the budget's largest share with a stock remedy."""
    nar = e.get("narrowing")
    items = [nar] if isinstance(nar, Mapping) else list(nar or [])
    out = []
    for n in items:
        if not isinstance(n, Mapping) or not n.get("remedy"):
            continue
        c = str(n.get("contributor") or "")
        out.append({"contributor": c, "who": INPUT_WORDS.get(c, c),
                    "share": n.get("share") if is_num(n.get("share")) else None,
                    "remedy": str(n["remedy"])})
    if out:
        return sorted(out, key=lambda n: -(n["share"] or 0.0))
    budget = [b for b in e.get("budget") or [] if is_num(b.get("share"))]
    if not budget:
        return []
    top = max(budget, key=lambda b: b["share"])
    c = str(top.get("input"))
    who = INPUT_WORDS.get(c, c)
    return [{"contributor": c, "who": who, "share": top["share"],
             "remedy": f"{who}: {_REMEDIES.get(c, 'narrow its uncertainty')}"}]


def remedy(e: Mapping, defects: list[Mapping]) -> dict:
    """What would settle an inconclusive verdict or fix a failing element.

    From `narrowing` (the results' list, largest contributor first) and the defects on the
    element. Returns ``{"narrow", "fix", "source", "who", "share", "action"}``: ``action``
    is the remedy of the largest contributor (it names its input), ``narrow`` adds its
    share of the variance of U.
    """
    items = narrowing(e)
    source = "narrowing" if e.get("narrowing") else "budget"
    narrow, who, share, action = "", "", None, ""
    if items:
        top = items[0]
        who, share, action = top["who"], top["share"], top["remedy"]
        if ":" not in action[:40]:  # the pipeline's remedies start with their input
            action = f"{who}: {action}"
        narrow = f"{action} ({pct(share)} of the variance of U)" if share is not None else action
    fixes = [d for d in defects if not warm_spot(d)]
    fix = ""
    if fixes:
        fix = "make good " + ", ".join(str(d.get("id")) for d in fixes) + ", check again"
    return {"narrow": narrow, "fix": fix, "source": source, "who": who, "share": share,
            "action": action}


def risk_factor(x: Mapping) -> tuple[float | None, str]:
    """The factor a risk was judged on and its name: the design-convention minimum
    (``frsi_design_min``) when present, else the factor measured on the night."""
    if is_num(x.get("frsi_design_min")):
        return x["frsi_design_min"], "at the design convention"
    return (x.get("frsi_min") if is_num(x.get("frsi_min")) else None), "measured on the night"


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
