"""The auditor's report (``report.html``): key results first, then elements, defects,
heat loss and retrofit, inputs, methods with numbered citations, and the per-view pictures
last. This module turns the results into the template's context; the layout lives in
``templates/report.html``.
"""

from __future__ import annotations

from collections.abc import Mapping

import envelope.report.facts as facts
from envelope.labels import INPUT_SHORT, INPUT_WORDS, element_label
from envelope.report.facts import get
from envelope.report.figures import Figures
from envelope.report.methods import METHODS, REFERENCES, cite
from envelope.report.numbers import is_num, num, pct, u_text, value_text

__all__ = ["auditor_context", "RSI_DESIGN"]

RISK_WORDS = {"none": "none found", "mould": "mould", "condensation": "condensation",
              "not assessed": "not assessed"}
RSI_DESIGN = {"opaque": 0.25, "glazing": 0.13}
"""Internal surface resistances of the design convention [m²·K/W] (after ISO 13788 §4, from
memory, as used with BRE IP 1/06 and DIN 4108-2): what the fRsi limits are defined for."""


def _u_cells(e: Mapping) -> dict:
    und = u_text(e.get("u_w_m2k"), e.get("u_low95_w_m2k"), e.get("u_high95_w_m2k"))
    whole = u_text(e.get("u_whole_w_m2k"), e.get("u_whole_low95_w_m2k"),
                   e.get("u_whole_high95_w_m2k"), std=e.get("u_whole_std_w_m2k"),
                   default_decimals=und.decimals)
    env = env_whole = None
    if is_num(e.get("u_env_w_m2k")):
        env = u_text(e.get("u_env_w_m2k"), e.get("u_env_low95_w_m2k"),
                     e.get("u_env_high95_w_m2k"))
    if is_num(e.get("u_whole_env_low95_w_m2k")):
        env_whole = u_text(e.get("u_whole_env_w_m2k"), e.get("u_whole_env_low95_w_m2k"),
                           e.get("u_whole_env_high95_w_m2k"))
    return {"undisturbed": und, "whole": whole, "env": env, "env_whole": env_whole,
            "valid": e.get("u_valid") is not False}


def _pair(x: Mapping, lo_key: str, p05_key: str) -> dict | None:
    if not is_num(x.get(lo_key)):
        return None
    return {"min": num(x[lo_key], 2), "p05": num(x.get(p05_key), 2)}


def _frsi_cells(e: Mapping) -> dict:
    limits = (f"{num(e.get('frsi_limit_mould'), 2)} / {num(e.get('frsi_limit_condensation'), 2)}"
              if is_num(e.get("frsi_limit_mould")) else "n/a")
    glazing = e.get("kind") in ("window", "door")
    return {"night": _pair(e, "frsi_min", "frsi_p05"),
            "design": _pair(e, "frsi_design_min", "frsi_design_p05"), "limits": limits,
            "rsi": RSI_DESIGN["glazing" if glazing else "opaque"],
            "judged_on": e.get("risk_judged_on") or ""}


def _h_c(e: Mapping) -> str:
    h = e.get("h_c_w_m2k")
    if not is_num(h):
        return ""
    model = str(e.get("h_c_model") or "")
    words = (f"ensemble of {model.split(':', 1)[1]} correlations" if model.startswith("ensemble")
             else model)
    std = e.get("h_c_std_w_m2k")
    return f"{num(h, 2)}" + (f" ± {num(std, 2)}" if is_num(std) else "") + \
        (f" ({words})" if words else "")


def _elements(results, defects_by_el) -> dict:
    rows, rules = [], {}
    for e in facts.elements_of(results):
        spec = e.get("u_specified_w_m2k")
        basis = facts.verdict_basis(e) if is_num(spec) else None
        caveats = facts.element_caveats(e)
        if basis and basis["warning"] and e.get("verdict") != "fail":
            caveats.append(basis["warning"])
        for c in e.get("checks") or []:
            if c.get("scope") != "survey" and c.get("rule"):
                rules.setdefault(facts.CHECK_WORDS.get(c.get("name"), c.get("name")), c["rule"])
        risk = str(e.get("risk"))
        rows.append({
            "label": element_label(e), "name": e.get("name"), "kind": e.get("kind") or "",
            "view": e.get("thermogram") or "", "side": e.get("side") or "",
            "area": num(e.get("area_net_m2"), 1), "area_source": e.get("area_source") or "",
            "u": _u_cells(e), "spec": num(spec, 2) if is_num(spec) else "",
            "verdict": e.get("verdict") or "", "basis": basis,
            "frsi": _frsi_cells(e), "risk": RISK_WORDS.get(risk, risk), "risk_key": risk,
            "zone": e.get("undisturbed_zone") or "",
            "undisturbed_share": pct(e.get("undisturbed_share")),
            "coverage": pct(e.get("coverage_share")),
            "caveats": caveats, "verdict_reason": facts.verdict_text(e),
            "defects": ", ".join(d.get("id") for d in defects_by_el.get(e.get("name"), [])),
        })
    return {"rows": rows, "rules": sorted(rules.items()),
            "has_env": any(r["u"]["env"] for r in rows),
            "has_design": any(r["frsi"]["design"] for r in rows)}


def _budget(results) -> dict:
    els = [e for e in facts.elements_of(results) if e.get("budget")]
    inputs = list(dict.fromkeys(b.get("input") for e in els for b in e["budget"]))
    rows = []
    for e in els:
        shares = {b.get("input"): b.get("share") for b in e["budget"]}
        u = u_text(e.get("u_w_m2k"), e.get("u_low95_w_m2k"), e.get("u_high95_w_m2k"))
        half = (e["u_high95_w_m2k"] - e["u_low95_w_m2k"]) / 2 if is_num(e.get("u_high95_w_m2k")) \
            and is_num(e.get("u_low95_w_m2k")) else None
        top = max(shares, key=lambda k: shares[k] if is_num(shares[k]) else -1) if shares else None
        steps = [f"{n['remedy']} ({pct(n['share'])})" if n["share"] is not None else n["remedy"]
                 for n in facts.narrowing(e)]
        rows.append({"label": element_label(e), "view": e.get("thermogram"),
                     "half": f"± {num(half, u.decimals)}" if is_num(half) else "n/a",
                     "h_c": _h_c(e),
                     "shares": [pct(shares.get(k), 0, "–") if is_num(shares.get(k)) else "–"
                                for k in inputs],
                     "top": [k == top for k in inputs],
                     "calibration": _calibration(e),
                     "emissivity": f"{num(e.get('emissivity'), 2)} ({e.get('emissivity_source')})"
                     if e.get("emissivity_source") else "",
                     "tape": bool(facts.emissivity_note(e)), "steps": steps})
    return {"inputs": [INPUT_SHORT.get(k, k) for k in inputs], "rows": rows,
            "legend": [(INPUT_SHORT.get(k, k), INPUT_WORDS.get(k, k)) for k in inputs]}


def _calibration(e: Mapping) -> str:
    """The calibration note without the emissivity source (printed beside the emissivity)."""
    note, src = str(e.get("calibration_note") or ""), str(e.get("emissivity_source") or "")
    if src and src in note:
        note = "; ".join(p for p in (x.strip() for x in note.replace(src, "").split(";")) if p)
    return note


def _psi(d: Mapping):
    if not is_num(d.get("psi_w_mk")):
        return None
    return value_text(d.get("psi_w_mk"), d.get("psi_low95_w_mk"), d.get("psi_high95_w_mk"),
                      std=d.get("psi_std_w_mk"), default_decimals=3)


def _defect_details(results, d: Mapping) -> list[str]:
    """The numbers of a defect that have no column: zone, incidence, integration, air."""
    out = []
    els = [e for e in d.get("elements") or [] if e != d.get("element")]
    if els:
        out.append("its zone also covers " + ", ".join(facts.label_of(results, e) for e in els))
    if is_num(d.get("incidence_factor")):
        area = (f" over {num(d['incidence_area_m2'], 1)} m²"
                if is_num(d.get("incidence_area_m2")) else "")
        out.append(f"incidence factor {num(d['incidence_factor'], 2)}{area}")
    if d.get("integration_stop") and not facts.warm_spot(d):
        dist = (f" {num(d['integration_distance_m'], 2)} m beyond the region"
                if is_num(d.get("integration_distance_m")) else "")
        out.append(f"excess flux integrated{dist}, stopped by: {d['integration_stop']}")
    if is_num(d.get("air_h_w_k")):
        air = f"leakage air {num(d['air_h_w_k'], 2)} W/K"
        if is_num(d.get("annual_kwh_air")):
            air += f", {num(d['annual_kwh_air'], 0)} kWh/yr"
        if is_num(d.get("leak_flow_natural_m3_h")):
            air += f" ({num(d['leak_flow_natural_m3_h'], 1)} m³/h at natural conditions"
            if is_num(d.get("leak_flow_test_m3_h")):
                air += f", {num(d['leak_flow_test_m3_h'], 0)} m³/h at the test pressure"
            air += ")"
        out.append(air)
    return out


def _defects(results) -> list[dict]:
    out = []
    for d in facts.defects_of(results):
        warm = facts.warm_spot(d)
        extra = value_text(d.get("extra_w"), unit="", floor=0.0, std=d.get("extra_w_std"),
                           default_decimals=1)
        if warm:
            extra = value_text(None)
            extra["value"] = "– (warm)"
        kwh = d.get("annual_kwh")
        kwh_txt = num(kwh, 0) if is_num(kwh) and not warm else ("–" if warm else "n/a")
        if facts.lower_bound(d) and is_num(kwh):
            kwh_txt = f"at least {kwh_txt}"
        conf = d.get("confidence") or {}
        night = num(d.get("frsi_min"), 2) if is_num(d.get("frsi_min")) else "n/a"
        if warm and is_num(d.get("frsi_min")) and d["frsi_min"] > 1:
            night = "above 1 (warm)"
        size = f"{num(d.get('area_m2'), 2)} m²"
        if is_num(d.get("length_m")):
            size += f", {num(d.get('length_m'), 1)} m long"
        if (d.get("count") or 1) > 1:
            size += f", {d['count']} members"
        risk = str(d.get("risk"))
        out.append({
            "rank": d.get("rank"), "id": d.get("id"), "cls": d.get("defect_class") or "",
            "confidence": pct(conf.get(d.get("defect_class"))) if conf else "",
            "element": facts.label_of(results, d.get("element")), "view": d.get("thermogram"),
            "size": size, "junction": d.get("junction") or "",
            "extra": extra, "psi": _psi(d), "kwh": kwh_txt, "frsi": night,
            "frsi_design": num(d.get("frsi_design_min"), 2)
            if is_num(d.get("frsi_design_min")) else "",
            "risk": RISK_WORDS.get(risk, risk), "risk_key": risk,
            "reasons": [facts.clean_reason(r) for r in d.get("reasons") or []],
            "details": _defect_details(results, d),
            "caveats": facts.defect_caveats(d), "warm": warm,
        })
    return out


def _junctions(results) -> list[dict]:
    """Junction checks: measured psi against the specified or default psi of its type."""
    rows = []
    for d in facts.defects_of(results):
        if not (d.get("junction_verdict") or is_num(d.get("psi_design_w_mk"))):
            continue
        design = d.get("psi_design_w_mk")
        rows.append({"type": d.get("junction") or "", "id": d.get("id"),
                     "elements": ", ".join(facts.label_of(results, e)
                                           for e in d.get("elements") or [d.get("element")]),
                     "length": num(d.get("length_m"), 1), "psi": _psi(d),
                     "design": num(design, 3) if is_num(design) else "–",
                     "source": d.get("psi_design_source") or "",
                     "dimensions": d.get("psi_dimensions") or "",
                     "verdict": d.get("junction_verdict") or "",
                     "reason": d.get("junction_verdict_reason") or ""})
    return rows


def _heat(results) -> dict | None:
    h = results.get("heat_loss")
    if not isinstance(h, Mapping):
        return None
    H = value_text(h.get("h_w_k"), h.get("h_low95_w_k"), h.get("h_high95_w_k"), "W/K", 0.0,
                   std=h.get("h_std_w_k"), default_decimals=1)
    annual = value_text(h.get("annual_kwh"), h.get("annual_kwh_low95"),
                        h.get("annual_kwh_high95"), "kWh", 0.0, std=h.get("annual_kwh_std"),
                        default_decimals=0)
    indep = None
    if is_num(h.get("h_std_independent_w_k")):
        indep = value_text(h.get("h_w_k"), unit="W/K", floor=0.0,
                           std=h.get("h_std_independent_w_k"))
    kinds = {e.get("name"): e.get("kind") for e in facts.elements_of(results)}
    areas = {e.get("name"): e.get("area_net_m2") for e in facts.elements_of(results)}
    rows = [{"label": r["label"], "kind": kinds.get(r["name"], ""),
             "area": num(areas.get(r["name"]), 1), "h": num(r["h_w_k"], 1),
             "share": pct(r["share"])} for r in facts.largest_losses(results)]
    return {"H": H, "annual": annual, "independent": indep,
            "joint": is_num(h.get("h_low95_w_k")),
            "elements": num(h.get("h_elements_w_k"), 1),
            "defects": num(h.get("h_defects_w_k"), 1), "q_survey": num(h.get("q_survey_w"), 0),
            "q_design": num(h.get("q_design_w"), 0),
            "design": f"{num(h.get('design_indoor_c'), 1)} °C inside, "
                      f"{num(h.get('design_outdoor_c'), 1)} °C outside",
            "hdd": num(h.get("hdd_kd"), 0), "rows": rows,
            "lower_bound": any(facts.lower_bound(d) for d in facts.defects_of(results))}


def _measure_row(results, m, cur) -> dict:
    saved = value_text(m.get("annual_kwh_saved"), m.get("annual_kwh_saved_low95"),
                       m.get("annual_kwh_saved_high95"), "", 0.0, default_decimals=0)
    targets, low = [], False
    for t in m.get("targets") or []:
        d = next((d for d in results.get("defects") or [] if d.get("id") == t), None)
        low |= bool(d and facts.lower_bound(d))
        targets.append(f"{t} ({facts.label_of(results, d.get('element'))})" if d
                       else facts.label_of(results, t))
    if low:  # a leak counted by its conductive part: the saving is at least this
        saved["value"] = f"at least {saved['value']}"
    pay = m.get("payback_years")
    return {"name": m.get("name") or "", "kind": (m.get("kind") or "").replace("_", " "),
            "targets": "; ".join(targets), "cost": num(m.get("cost"), 0, cur),
            "saved": saved, "money": num(m.get("annual_money_saved"), 0, cur),
            "co2": num(m.get("annual_co2_saved_kg"), 0),
            "payback": (("at most " if low else "") + num(pay, 0)) if is_num(pay) else "no saving",
            "lower_bound": low, "package": m.get("kind") == "package"}


def _inputs(results) -> list[dict]:
    """One table of everything the numbers rest on, grouped."""
    s = results.get("survey") or {}
    c, cam, pr = s.get("conditions") or {}, s.get("camera") or {}, s.get("prices") or {}
    cl, an = s.get("climate") or {}, s.get("analysis") or {}
    lim = results.get("frsi_limit") or {}
    cur = s.get("currency") or pr.get("currency") or ""
    missing = "not in these results"
    groups = []

    def group(title, rows):
        groups.append({"title": title, "rows": [r for r in rows if r is not None]})

    band = cam.get("band_um") or []
    group("Survey night", [
        ("indoor air temperature", num(c.get("indoor_air_c"), 1, "°C"), ""),
        ("outdoor air temperature", num(c.get("outdoor_air_c"), 1, "°C"), ""),
        ("indoor / outdoor relative humidity", f"{pct(c.get('indoor_rh'))} / {pct(c.get('outdoor_rh'))}", ""),
        ("wind speed", num(c.get("wind_m_s"), 1, "m/s"), ""),
        ("rain", "yes" if c.get("rain") else ("no" if c.get("rain") is not None else "n/a"), ""),
        ("cloud cover", num(c.get("sky_cloud_oktas"), 0, "oktas"), ""),
    ])
    group("Camera", [
        ("camera", cam.get("label") or "n/a", ""),
        ("spectral band", f"{num(band[0], 1)}–{num(band[1], 1)} µm" if len(band) == 2 else "n/a", ""),
        ("absolute / relative accuracy", f"± {num(cam.get('accuracy_k'), 2)} K / ± "
         f"{num(cam.get('relative_accuracy_k'), 2)} K", "as given for the camera"),
        ("noise", num(cam.get("noise_k"), 3, "K"), ""),
    ])
    hum = cl.get("indoor_humidity")
    hum_txt = missing if not cl else (
        f"humidity class {cl.get('humidity_class')}" if hum == "humidity_class"
        else f"{hum}" + (f", rh {pct(cl.get('indoor_rh'))}" if is_num(cl.get("indoor_rh")) else ""))
    crit = cl.get("frsi_criterion") if cl else None
    lim_rows = []
    for key in ("mould", "condensation"):
        v = lim.get(key) if isinstance(lim, Mapping) else None
        if isinstance(v, Mapping):
            month = v.get("critical_month")
            lim_rows.append((f"fRsi,min {key}", num(v.get("value"), 3),
                             f"{v.get('method') or ''}, critical surface humidity "
                             f"{pct(v.get('critical_rh'))}" + (f", critical month {month}" if month else "")))
    group("Climate, humidity and limits", [
        ("heating degree-days", num(cl.get("heating_degree_days_kd", get(results, "heat_loss", "hdd_kd")), 0, "K·d"), ""),
        ("design indoor / outdoor temperature",
         f"{num(cl.get('design_indoor_c'), 1)} / {num(cl.get('design_outdoor_c'), 1)} °C" if cl else missing, ""),
        ("indoor humidity", hum_txt, "ISO 13788 Annex A classes" if hum == "humidity_class" else ""),
        ("fRsi criterion", crit or missing, "chosen by the surveyor; local codes decide"),
        *lim_rows,
    ])
    group("Prices and factors", [
        ("energy price", num(pr.get("energy_price_per_kwh"), 3, f"{cur}/kWh") if pr else missing, "surveyor's input"),
        ("heating-system efficiency", pct(pr.get("heating_efficiency")) if pr else missing, "surveyor's input"),
        ("CO2 factor", num(pr.get("co2_kg_per_kwh"), 3, "kg/kWh") if pr else missing, "surveyor's input"),
    ])
    group("Analysis", [
        ("Monte Carlo draws / seed", f"{an.get('monte_carlo_draws', 'n/a')} / {an.get('seed', 'n/a')}", "JCGM 101"),
        ("interior / exterior convection", f"{an.get('interior_convection', 'n/a')} / {an.get('exterior_convection', 'n/a')}", ""),
        ("sky model", an.get("sky_model") or "n/a", ""),
        ("defect threshold / smallest area", f"{num(an.get('defect_threshold'), 3)} / {num(an.get('defect_min_area_m2'), 3, 'm²')}", "fRsi below the reference level"),
        ("verdict tolerance", num(an.get("verdict_tolerance_w_m2k"), 2, "W/(m²·K)"), ""),
    ])
    def spec(e):
        if not is_num(e.get("u_specified_w_m2k")):
            return "none"
        basis = e.get("u_specified_basis")
        return (f"{num(e['u_specified_w_m2k'], 2)} W/(m²·K)"
                + (f" ({basis} temperatures)" if basis else ""))

    air = s.get("airtightness")
    if isinstance(air, Mapping) and air:
        group("Airtightness (blower door)", [(str(k).replace("_", " "), str(v), "surveyor's input")
                                             for k, v in air.items()])
    group("Elements", [
        (element_label(e), f"specified U {spec(e)}; emissivity {num(e.get('emissivity'), 2)}",
         f"{e.get('thermogram')}: {e.get('emissivity_source') or ''}")
        for e in facts.elements_of(results)])
    views = []
    for t in results.get("thermograms") or []:
        if t.get("status") == "failed":
            views.append((f"view {t.get('id')}", "not assessed", t.get("error") or ""))
            continue
        off = t.get("camera_offset_k")
        views.append((f"view {t.get('id')}",
                      f"reflected {num(t.get('reflected_c'), 1, '°C')}; distance "
                      f"{num(t.get('distance_m'), 1, 'm')}; transmittance "
                      f"{num(t.get('transmittance'), 4)}; angle {num(t.get('view_angle_deg'), 0)}°; "
                      f"camera offset removed {num(off, 2, 'K') if is_num(off) else 'none'}",
                      t.get("camera_offset_source") or ""))
    group("Views", views)
    return groups


def _views(results, figs: Figures) -> list[dict]:
    out = []
    for t in results.get("thermograms") or []:
        state = facts.view_state(results, t)
        f = t.get("figures") or {}
        design = any(is_num(e.get("frsi_design_min")) for e in facts.elements_of(results)
                     if e.get("thermogram") == t.get("id"))  # the map drawn at the design convention
        pics = []
        for key, cap in (("thermogram", "corrected surface temperature; elements, reference "
                          "zones and defects (tagged by id)"),
                         ("frsi", "temperature factor at the design convention (Rsi 0.25 "
                          "m²·K/W opaque, 0.13 glazing), what the limits are defined for; "
                          "stripes: below the fRsi,min limits" if design else
                          "temperature factor measured on the night; stripes: below the "
                          "fRsi,min limits"),
                         ("u_map", "U per pixel (exterior surface method)")):
            if f.get(key):
                pics.append({"src": figs.src(f[key]), "caption": cap, "rel": f[key]})
        out.append({
            "id": t.get("id"), "side": t.get("side") or "", "state": state,
            "file": t.get("file") or "", "error": t.get("error") or "",
            "pics": pics,
            "facts": [("file", t.get("file") or "n/a"),
                      ("reflected apparent temperature", num(t.get("reflected_c"), 1, "°C")),
                      ("distance", num(t.get("distance_m"), 1, "m")),
                      ("transmittance", num(t.get("transmittance"), 4)),
                      ("camera offset removed", num(t.get("camera_offset_k"), 2, "K")
                       + (f" ({t['camera_offset_source']})" if t.get("camera_offset_source") else "")),
                      ("scale", _scale(t.get("scale")))],
            "checks": [{"status": c.get("status"), "name": facts.CHECK_WORDS.get(c.get("name"), c.get("name")),
                        "value": facts._check_value(c), "rule": c.get("rule") or ""}
                       for c in t.get("checks") or []],
            "elements": ", ".join(element_label(e) for e in facts.elements_of(results)
                                  if e.get("thermogram") == t.get("id")),
        })
    return out


def _scale(sc) -> str:
    if not isinstance(sc, Mapping):
        return "n/a"
    text = str(sc.get("method") or "")
    if is_num(sc.get("rms_error_m")):
        text += f", reprojection error {num(sc['rms_error_m'], 3, 'm')}"
    if sc.get("fronto_parallel_assumed"):
        text += "; fronto-parallel view assumed"
    return text


def _series(results, figs: Figures) -> list[dict]:
    out = []
    for s in results.get("series") or []:
        u = u_text(s.get("u_w_m2k"), s.get("u_low95_w_m2k"), s.get("u_high95_w_m2k"))
        dyn = None
        if is_num(s.get("u_dynamic_w_m2k")):  # at the average method's precision
            dyn = num(s["u_dynamic_w_m2k"], max(u.decimals, 2))
            lo, hi = s.get("u_dynamic_low95_w_m2k"), s.get("u_dynamic_high95_w_m2k")
            if is_num(lo) and is_num(hi) and s["u_dynamic_w_m2k"] > 0:
                rel = 50.0 * (hi - lo) / s["u_dynamic_w_m2k"]
                dyn += (f" W/(m²·K) (95 % interval of the regression alone ± {rel:.1g} %; the "
                        "systematic inputs behind the average method's interval apply to it too)")
            else:
                dyn += " W/(m²·K)"
        lag = s.get("u_lag_corrected_w_m2k")
        checks = [{"status": c.get("status"),
                   "name": facts.CHECK_WORDS.get(c.get("name"), c.get("name")),
                   "value": facts._check_value(c), "rule": c.get("rule") or ""}
                  for c in s.get("checks") or []]
        out.append({"id": s.get("id"), "label": facts.label_of(results, s.get("element")),
                    "u": u, "dynamic": dyn,
                    "lag": num(lag, max(u.decimals, 2)) if is_num(lag) else "",
                    "duration": num(s.get("duration_h"), 1, "h"),
                    "frames": s.get("n_frames"), "converged": s.get("converged"),
                    "checks": checks, "notes": [facts.clean_note(n) for n in s.get("notes") or []],
                    "bad": [c["name"] for c in checks if c["status"] == "fail"],
                    "note": s.get("calibration_note") or "",
                    "src": figs.src(s.get("figure")), "rel": s.get("figure")})
    return out


def _risk_line(x: Mapping, label: str, lead: str = "") -> dict | None:
    """A risk for the key results: the factor it was judged on against its limit; None for
    an element whose own factor is above the limit (raised by a defect listed apart)."""
    risk = x.get("risk")
    f, on = facts.risk_factor(x)
    lim_key = "frsi_limit_condensation" if risk == "condensation" else "frsi_limit_mould"
    lim = x.get(lim_key)
    if is_num(f) and is_num(lim) and f >= lim:
        return None
    text = f"{lead}{risk}: fRsi {num(f, 2)} {on}"
    if is_num(x.get("frsi_min")) and on != "measured on the night":
        text += f" ({num(x['frsi_min'], 2)} measured on the night)"
    if is_num(lim):
        text += f" < limit {num(lim, 2)}"
    return {"label": label, "risk": risk, "text": text}


def _key_results(results, heat) -> dict:
    night = facts.night_validity(results)
    limits = {k: get(results, "frsi_limit", k, "value") for k in ("mould", "condensation")}
    risky_defects = [d for d in facts.defects_of(results)
                     if d.get("risk") in ("mould", "condensation")]
    # an element whose risk a defect on it explains is named by that defect's line
    explained = {(d.get("element"), d.get("risk")) for d in risky_defects}
    risks = [_risk_line(e, element_label(e)) for e in facts.risky_elements(results)
             if (e.get("name"), e.get("risk")) not in explained]
    for d in risky_defects:
        x = dict(d, frsi_limit_mould=limits["mould"],
                 frsi_limit_condensation=limits["condensation"])
        risks.append(_risk_line(x, facts.label_of(results, d.get("element")),
                                f"{d.get('id')} {d.get('defect_class')}, "))
    order = {"condensation": 0, "mould": 1}
    risks = sorted([r for r in risks if r], key=lambda r: order.get(r["risk"], 2))
    cur = get(results, "survey", "currency", default="")
    top = [_measure_row(results, m, cur) for m in facts.measures_ranked(results)[:3]]
    checked = [e for e in facts.elements_of(results)
               if is_num(e.get("u_specified_w_m2k")) and e.get("verdict")]
    verdicts = [e.get("verdict") for e in checked]
    bases = {facts.verdict_basis(e)["short"] for e in checked}
    losses = facts.largest_losses(results)
    return {"night": night, "risks": risks[:5], "n_risks": len(risks), "top": top,
            "verdicts": {w: verdicts.count(w) for w in ("fail", "inconclusive", "pass")},
            "n_checked": len(verdicts), "basis": bases.pop() if len(bases) == 1 else "",
            "largest": losses[0] if losses else None,
            "failures": results.get("failures") or [],
            "notes": [str(n) for n in results.get("notes") or []]}


def auditor_context(results: Mapping, figs: Figures, charts: Mapping[str, str]) -> dict:
    """Everything ``report.html`` shows, formatted (numbers as text, in one convention)."""
    defects = facts.defects_of(results)
    by_el: dict[str, list] = {}
    for d in defects:
        by_el.setdefault(d.get("element"), []).append(d)
    heat = _heat(results)
    cur = get(results, "survey", "currency", default="")
    measures = [_measure_row(results, m, cur) for m in results.get("measures") or []]
    if results.get("package"):
        measures.append(_measure_row(results, results["package"], cur))
    return {
        "key": _key_results(results, heat),
        "heat": heat,
        "elements": _elements(results, by_el),
        "budget": _budget(results),
        "series": _series(results, figs),
        "defects": _defects(results),
        "junctions": _junctions(results),
        "measures": measures,
        "inputs": _inputs(results),
        "views": _views(results, figs),
        "charts": {k: figs.src(v) for k, v in charts.items()},
        "limits": {k: num(get(results, "frsi_limit", k, "value"), 2)
                   for k in ("mould", "condensation")},
        "methods": METHODS, "references": REFERENCES, "cite": cite,
        "currency": cur,
    }
