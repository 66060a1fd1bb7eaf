"""HTML documents: auditor report, builder sheet, homeowner summary (self-contained).

Every value from the results reaches the page through `envelope.report.esc`; figures are
data URIs supplied by the caller (`image(rel) -> uri or None`).
"""

from __future__ import annotations

from collections.abc import Callable, Mapping

from envelope.report import (
    CAUTIONS,
    RISK_WORDS,
    STATUS_MARKS,
    STATUS_WORDS,
    VERDICT_WORDS,
    Markup,
    about_range,
    esc,
    fmt,
    get,
    is_num,
    money_range,
    overall_verdict,
    pct,
    thermogram_figure,
    top_fixes,
)

ImageFn = Callable[[str | None], str | None]

CSS = """
body{font-family:"DejaVu Sans",Arial,sans-serif;color:#1d1d1d;max-width:1250px;margin:1.5em auto;
padding:0 1em;line-height:1.4;font-size:14px}
h1{font-size:1.6em;margin-bottom:.2em}h2{font-size:1.25em;border-bottom:2px solid #3b4f6b;
padding-bottom:.15em;margin-top:1.6em}h3{font-size:1.05em}
table{border-collapse:collapse;margin:.5em 0 1em;font-size:.92em;max-width:100%}
.wide{overflow-x:auto}
th,td{border:1px solid #9aa3ad;padding:.25em .45em;text-align:left;vertical-align:top}
th{background:#e8ecf1}td.n{text-align:right;white-space:nowrap}
.st{font-weight:bold;white-space:nowrap}.st-pass{color:#1b5e20}.st-warn{color:#8a5a00}
.st-fail,.st-failed{color:#b00020}.st-inconclusive{color:#8a5a00}
figure{display:inline-block;margin:.4em .8em .8em 0;vertical-align:top}
figure img{width:480px;max-width:100%;border:1px solid #ccc}
figure.chart img{width:860px}
figcaption{font-size:.85em;color:#444}
.meta{color:#444}.small{font-size:.85em}.box{border:1px solid #9aa3ad;padding:.6em .9em;
margin:.8em 0;background:#f6f8fa}
tr.sub td{font-size:.9em;color:#333;border-top:none}
.fix{border:1px solid #9aa3ad;padding:.5em .9em;margin:1em 0;page-break-inside:avoid}
.fix img{max-width:480px;width:100%}
@media print{body{max-width:none;margin:0;font-size:10pt}.wide{overflow:visible}
table{font-size:8.5pt}h2{page-break-after:avoid}
figure,table,.fix{page-break-inside:avoid}a{color:inherit;text-decoration:none}}
"""

BUILDER_CSS = """
@page{size:A4 portrait;margin:12mm}
body{max-width:186mm;font-size:11px;margin:0 auto}h1{font-size:1.4em}h2{font-size:1.1em;margin-top:.8em}
figure img{width:auto;max-width:88mm;max-height:62mm}
td:nth-child(6){width:36%}
"""

IMAGES_SCRIPT = Markup("""<script>
window.addEventListener("load", function () {
  var imgs = Array.prototype.slice.call(document.images);
  var ok = imgs.every(function (i) { return i.complete && i.naturalWidth > 0; });
  document.body.dataset.imagesOk = ok ? "yes" : "no";
  document.body.dataset.imagesCount = String(imgs.length);
});
</script>""")

CSP = ("default-src 'none'; img-src data:; style-src 'unsafe-inline'; "
       "script-src 'unsafe-inline'")


def page(title: str, body: str, extra_css: str = "") -> str:
    """A complete, self-contained HTML document (no network: see the CSP)."""
    return (f'<!DOCTYPE html>\n<html lang="en"><head><meta charset="utf-8">'
            f'<meta http-equiv="Content-Security-Policy" content="{CSP}">'
            f'<meta name="viewport" content="width=device-width, initial-scale=1">'
            f"<title>{esc(title)}</title><style>{CSS}{extra_css}</style></head>\n"
            f"<body>\n{body}\n{IMAGES_SCRIPT}\n</body></html>\n")


def table(headers, rows, numeric=()) -> Markup:
    """An HTML table; every cell escaped unless it is `Markup`; `numeric` columns right."""
    head = "".join(f"<th>{esc(h)}</th>" for h in headers)
    body = []
    for row in rows:
        cells = "".join(
            f'<td class="n">{esc(c)}</td>' if i in numeric else f"<td>{esc(c)}</td>"
            for i, c in enumerate(row))
        body.append(f"<tr>{cells}</tr>")
    return Markup(f'<div class="wide"><table><thead><tr>{head}</tr></thead>'
                  f"<tbody>{''.join(body)}</tbody></table></div>")


def status(word) -> Markup:
    """Check or verdict status in words with a mark (never colour alone)."""
    key = str(word or "").lower()
    text = STATUS_WORDS.get(key) or VERDICT_WORDS.get(key) or (key.upper() or "N/A")
    mark = {**STATUS_MARKS, "inconclusive": "?", "failed": "\u2717", "assessed": "\u2713"}
    cls = key if key in {"pass", "warn", "fail", "inconclusive", "failed"} else "other"
    label = f"{mark[key]} {text}" if key in mark else text
    return Markup(f'<span class="st st-{cls}">{esc(label)}</span>')


def figure(uri: str | None, caption: str, missing_name: str | None = None,
           cls: str = "") -> Markup:
    """A figure from a data URI, or a text line saying it is missing."""
    if uri is None:
        return Markup(f'<p class="small">(figure not available: {esc(missing_name or caption)})'
                      "</p>") if missing_name else Markup("")
    klass = f' class="{esc(cls)}"' if cls else ""
    return Markup(f'<figure{klass}><img src="{esc(uri)}" alt="{esc(caption)}">'
                  f"<figcaption>{esc(caption)}</figcaption></figure>")


def gfmt(value, unit=None) -> str:
    """A check value in its own precision (3 significant figures) with its unit."""
    if isinstance(value, bool):
        return "yes" if value else "no"
    if not is_num(value):
        return fmt(value)
    unit = "" if unit in (None, "", "-", "1") else f" {unit}"
    return f"{value:.3g}{unit}"


def checks_table(checks) -> Markup:
    rows = [(status(c.get("status")), c.get("name"),
             gfmt(c.get("value"), c.get("unit")), c.get("rule"), c.get("scope"))
            for c in checks or []]
    if not rows:
        return Markup("<p>No checks recorded.</p>")
    return table(["status", "check", "value", "rule", "scope"], rows)


def interval(e: Mapping) -> str:
    lo, hi = e.get("u_low95_w_m2k"), e.get("u_high95_w_m2k")
    return f"{fmt(lo)} to {fmt(hi)}" if is_num(lo) and is_num(hi) else "n/a"


def header(results: Mapping, title: str) -> Markup:
    s = results.get("survey") or {}
    site = s.get("site") or {}
    place = ", ".join(str(x) for x in (site.get("address"), site.get("town")) if x)
    return Markup(
        f"<h1>{esc(title)}: {esc(site.get('name') or 'unnamed site')}</h1>"
        f'<p class="meta">{esc(place)}<br>Survey date {esc(s.get("date") or "n/a")}; surveyor '
        f"{esc(s.get('surveyor') or 'n/a')}; client {esc(s.get('client') or 'n/a')}; "
        f"envelope {esc(results.get('tool_version') or '')}</p>")


REFERENCES = (
    "Planck's law integrated over the camera band; fast inversion after Sakuma F. and "
    "Hattori S. (1982), Establishing a practical temperature standard by using a narrow-band "
    "radiation thermometer with a silicon detector, Temperature 5, 421-427.",
    "ISO 6946:2017, Building components and building elements - Thermal resistance and "
    "thermal transmittance - Calculation methods (surface resistances, series layers).",
    "Churchill S.W. and Chu H.H.S. (1975), Correlating equations for laminar and turbulent "
    "free convection from a vertical plate, Int. J. Heat Mass Transfer 18, 1323-1329.",
    "ISO 9869-1:2014, Thermal insulation - Building elements - In-situ measurement of thermal "
    "resistance and thermal transmittance - Part 1: Heat flow meter method (average method).",
    "ISO 13788:2012, Hygrothermal performance of building components - Internal surface "
    "temperature to avoid critical surface humidity and interstitial condensation.",
    "O'Grady M., Lechowska A.A. and Harte A.M. (2017), Infrared thermography technique as an "
    "in-situ method of assessing heat loss through thermal bridging, Energy and Buildings "
    "135, 20-32.",
    "Asdrubali F., Baldinelli G. and Bianchi F. (2012), A quantitative methodology to "
    "evaluate thermal bridges in buildings, Applied Energy 97, 365-373.",
    "JCGM 101:2008, Evaluation of measurement data - Supplement 1 - Propagation of "
    "distributions using a Monte Carlo method.",
    "Fokaides P.A. and Kalogirou S.A. (2011), Application of infrared thermography for the "
    "determination of the overall heat transfer coefficient (U-value) in building envelopes, "
    "Applied Energy 88, 4358-4365.",
    "Albatici R. and Tonelli A.M. (2010), Infrared thermovision technique for the assessment "
    "of thermal transmittance value of opaque building elements on site, Energy and "
    "Buildings 42, 2177-2183.",
)

METHOD_NOTES = (
    "Surface temperatures: the camera's apparent temperatures are turned back into band "
    "radiance, the measurement equation is solved with the surveyor's emissivity, "
    "reflected apparent temperature and transmittance, and inverted for the object "
    "temperature.",
    "U-values: interior method U = [h_c (T_ai - T_si) + eps sigma (T_r^4 - T_si^4)] / "
    "(T_ai - T_ae) [W/(m²·K)], convective coefficient h_c after ISO 6946 or "
    "Churchill-Chu; exterior method from the outside surface balance; time series by the "
    "ISO 9869-1 average method. The 95 % interval comes from a Monte Carlo propagation "
    "(JCGM 101) over emissivity, camera accuracy, air temperatures and film coefficients.",
    "Temperature factor fRsi = (T_si - T_e) / (T_i - T_e) [-], compared with fRsi,min from "
    "the ISO 13788 monthly procedure (critical surface humidity 0.8 for mould, 1.0 for "
    "condensation). Steady state is assumed: the survey-night fRsi predicts the surface "
    "temperature at design conditions only as far as the night was steady.",
    "Defects: extra heat flow against the undisturbed reference zone; psi [W/(m·K)] from "
    "the excess heat flux integrated along the junction (after O'Grady et al. 2017 and "
    "Asdrubali et al. 2012); kWh per year from heating degree-days.",
    "Heat loss H = sum(U A) + sum(psi L) + sum(chi) [W/K]; annual loss H x HDD x 24 / 1000 "
    "[kWh], heat delivered to the fabric before the heating system's efficiency. Its "
    "uncertainty treats elements as independent, which understates errors shared between "
    "elements (same camera, same air temperatures).",
    "Retrofit: added layers in series (ISO 6946 total resistance); delivered energy = "
    "fabric saving / heating efficiency; payback = cost / money saved per year; the "
    "package applies all measures together, so overlapping measures are not double "
    "counted. Sealing a leak removes 80 % of its extra loss unless stated (an assumption, "
    "common practice guess).",
)


def _element_rows(results):
    for e in results.get("elements") or []:
        u_txt = fmt(e.get("u_w_m2k"), 3)
        if e.get("u_valid") is False:
            u_txt = f"({u_txt}) NOT VALID"
        yield (f"{e.get('name')} ({e.get('kind') or 'n/a'}, {e.get('thermogram') or 'n/a'})",
               fmt(e.get("area_net_m2"), 2), u_txt, interval(e),
               fmt(e.get("u_whole_w_m2k"), 3),
               f"{e.get('u_method') or 'n/a'} / {e.get('h_c_model') or 'n/a'}"
               f"{'; calibrated' if e.get('calibrated') else ''}",
               fmt(e.get("emissivity"), 2),
               f"{fmt(e.get('frsi_min'))} / {fmt(e.get('frsi_p05'))}",
               f"{fmt(e.get('frsi_limit_mould'))} / {fmt(e.get('frsi_limit_condensation'))}",
               RISK_WORDS.get(str(e.get("risk")), e.get("risk") or "n/a"))


def defects_table(results) -> Markup:
    """Ranked defects: one row of numbers, one row of score and reasons below it."""
    head = ("rank", "id", "element (thermogram)", "class (confidence)", "size", "junction",
            "extra heat flow [W] ± std", "psi [W/(m·K)]", "chi [W/K]", "energy [kWh/yr]",
            "fRsi min [-]", "risk")
    rows = []
    for d in sorted(results.get("defects") or [], key=lambda d: d.get("rank") or 1e9):
        conf = d.get("confidence") or {}
        conf_txt = ", ".join(f"{k} {v:.0%}" for k, v in conf.items() if is_num(v))
        cells = (d.get("rank"), d.get("id"), f"{d.get('element')} ({d.get('thermogram')})",
                 f"{d.get('defect_class') or 'n/a'}" + (f" ({conf_txt})" if conf_txt else ""),
                 f"{fmt(d.get('area_m2'), 2, 'm²')}; length {fmt(d.get('length_m'), 2, 'm')}",
                 d.get("junction") or "-",
                 f"{fmt(d.get('extra_w'), 1)} ± {fmt(d.get('extra_w_std'), 1)}",
                 fmt(d.get("psi_w_mk"), 3), fmt(d.get("chi_w_k"), 3),
                 fmt(d.get("annual_kwh"), 0), fmt(d.get("frsi_min"), 2),
                 RISK_WORDS.get(str(d.get("risk")), d.get("risk") or "n/a"))
        num = {6, 7, 8, 9, 10}
        rows.append("<tr>" + "".join(f'<td class="n">{esc(c)}</td>' if k in num
                                     else f"<td>{esc(c)}</td>" for k, c in enumerate(cells))
                    + "</tr>")
        reasons = "; ".join(str(r) for r in d.get("reasons") or []) or "none recorded"
        rows.append(f'<tr class="sub"><td></td><td colspan="{len(head) - 1}">score: '
                    f"{esc(d.get('score_text') or 'n/a')}. Reasons: {esc(reasons)}</td></tr>")
    if not rows:
        return Markup("<p>No defects found.</p>")
    ths = "".join(f"<th>{esc(h)}</th>" for h in head)
    return Markup(f'<div class="wide"><table><thead><tr>{ths}</tr></thead><tbody>'
                  f"{''.join(rows)}</tbody></table></div>")


def _measure_rows(results, currency):
    rows = list(results.get("measures") or [])
    if results.get("package"):
        rows.append(results["package"])
    for m in rows:
        yield (m.get("name"), m.get("kind"), ", ".join(map(str, m.get("targets") or [])),
               fmt(m.get("cost"), 0, currency), fmt(m.get("annual_kwh_saved"), 0),
               f"{fmt(m.get('annual_kwh_saved_low95'), 0)} to {fmt(m.get('annual_kwh_saved_high95'), 0)}",
               fmt(m.get("annual_money_saved"), 0, currency), fmt(m.get("annual_co2_saved_kg"), 0),
               fmt(m.get("payback_years"), 1, missing="no saving"))


def auditor_html(results: Mapping, image: ImageFn, charts: Mapping[str, str | None]) -> str:
    """The auditor's report: every number with its unit, its checks and its sources."""
    s = results.get("survey") or {}
    c = s.get("conditions") or {}
    cam = s.get("camera") or {}
    cur = s.get("currency") or ""
    parts = [header(results, "Thermal survey assessment")]
    band = cam.get("band_um") or [None, None]
    parts += ["<h2>Survey night</h2>", table(["quantity", "value"], [
        ("indoor air temperature", fmt(c.get("indoor_air_c"), 1, "°C")),
        ("outdoor air temperature", fmt(c.get("outdoor_air_c"), 1, "°C")),
        ("indoor relative humidity", pct(c.get("indoor_rh"))),
        ("outdoor relative humidity", pct(c.get("outdoor_rh"))),
        ("wind speed", fmt(c.get("wind_m_s"), 1, "m/s")),
        ("rain", "yes" if c.get("rain") else ("no" if c.get("rain") is not None else "n/a")),
        ("cloud cover", fmt(c.get("sky_cloud_oktas"), 0, "oktas")),
        ("camera", cam.get("label") or "n/a"),
        ("camera band", f"{fmt(band[0], 1)} to {fmt(band[1], 1)} µm" if len(band) == 2 else "n/a"),
        ("camera accuracy / relative accuracy / noise",
         f"{fmt(cam.get('accuracy_k'), 2, 'K')} / {fmt(cam.get('relative_accuracy_k'), 2, 'K')}"
         f" / {fmt(cam.get('noise_k'), 3, 'K')}"),
    ])]
    parts += ["<h2>Validity of the night</h2>",
              Markup("<p>A failed check downgrades verdicts; it never hides a number.</p>"),
              checks_table(results.get("checks"))]
    parts.append("<h2>Thermograms</h2>")
    for t in results.get("thermograms") or []:
        tid = t.get("id")
        parts.append(Markup(f"<h3>Thermogram {esc(tid)} ({esc(t.get('side') or 'n/a')} side)"
                            f" {status(t.get('status'))}</h3><p class='small'>file "
                            f"{esc(t.get('file'))}</p>"))
        if t.get("status") == "failed":
            parts.append(Markup(f"<p>Not assessed: {esc(t.get('error') or 'unknown error')}</p>"))
            continue
        figs = t.get("figures") or {}
        for key, cap in (("overlay", "element outlines"), ("defects", "defects, ranked"),
                         ("frsi", "temperature factor fRsi [-]"),
                         ("u_map", "U per pixel [W/(m²·K)]"),
                         ("corrected", "corrected surface temperature [°C]")):
            if figs.get(key):
                parts.append(figure(image(figs[key]), f"{tid}: {cap}", figs[key]))
        if t.get("checks"):
            parts.append(checks_table(t.get("checks")))
    failures = results.get("failures") or []
    if failures:
        parts += ["<h3>Failed thermograms</h3>", table(
            ["thermogram", "file", "error"],
            [(f.get("thermogram"), f.get("file"), f.get("error")) for f in failures])]
    parts += ["<h2>Elements and U-values</h2>", table(
        ["element (kind, thermogram)", "net area [m²]", "U [W/(m²·K)]",
         "U 95 % interval [W/(m²·K)]", "U whole area [W/(m²·K)]", "method / h_c model",
         "emissivity [-]", "fRsi min / 5th pct [-]", "fRsi,min mould / condensation [-]",
         "risk"], list(_element_rows(results)), numeric=(1, 2, 4, 6))]
    flagged = [e for e in results.get("elements") or [] if e.get("u_note")]
    if flagged:
        parts.append(Markup("<ul class='small'>" + "".join(
            f"<li><b>{esc(e.get('name'))}</b> ({esc(e.get('thermogram'))}): {esc(e['u_note'])}</li>"
            for e in flagged) + "</ul>"))
    lim = results.get("frsi_limit") or {}
    if lim:
        parts.append(table(["limit", "fRsi,min [-]", "critical month", "method"], [
            (k, fmt(get(v, "value"), 3), get(v, "critical_month"), get(v, "method"))
            for k, v in lim.items() if isinstance(v, Mapping)]))
    parts += ["<h2>Defects, ranked</h2>",
              Markup("<p>Ranked by risk first (fRsi below its limit), then energy.</p>"),
              defects_table(results)]
    parts.append(_heat_loss_section(results, charts))
    parts += ["<h2>Retrofit case</h2>", table(
        ["measure", "kind", "targets", "cost", "saved [kWh/yr]", "95 % range [kWh/yr]",
         f"money [{cur}/yr]", "CO2 [kg/yr]", "simple payback [yr]"],
        list(_measure_rows(results, cur)), numeric=(3, 4, 6, 7, 8)),
        Markup("<p class='small'>Energy is delivered energy (fabric saving divided by the "
               "heating efficiency). The last row applies every measure together.</p>")]
    if charts.get("savings"):
        parts.append(figure(charts["savings"], "yearly saving of each measure", cls="chart"))
    parts.append("<h2>Uncertainty budget</h2>")
    els = [e for e in results.get("elements") or [] if e.get("budget")]
    inputs = list(dict.fromkeys(b.get("input") for e in els for b in e["budget"]))
    if els:
        parts += [Markup("<p>Share of the variance of each element's U that each input "
                         "carries (Monte Carlo, one input resampled at a time).</p>"), table(
            ["element (thermogram)", "u(U) [W/(m²·K)]", *inputs],
            [(f"{e.get('name')} ({e.get('thermogram')})", fmt(e.get("u_std_w_m2k"), 3),
              *(pct(next((b.get("share") for b in e["budget"] if b.get("input") == k), None),
                    missing="–") for k in inputs)) for e in els],
            numeric=tuple(range(1, 2 + len(inputs))))]
    notes = [(e.get("name"), e.get("calibration_note")) for e in results.get("elements") or []
             if e.get("calibration_note")]
    if notes:
        parts.append(Markup("<ul class='small'>" + "".join(
            f"<li><b>{esc(n)}</b>: {esc(c)}</li>" for n, c in notes) + "</ul>"))
    series = results.get("series") or []
    if series:
        parts += ["<h2>Time series (ISO 9869-1 average method)</h2>", table(
            ["element", "U [W/(m²·K)]", "95 % interval [W/(m²·K)]", "duration [h]", "checks"],
            [(r.get("element"), fmt(r.get("u_w_m2k"), 3),
              f"{fmt(r.get('u_low95_w_m2k'), 2)} to {fmt(r.get('u_high95_w_m2k'), 2)}",
              fmt(r.get("duration_h"), 1),
              "; ".join(f"{k.get('name')}: {k.get('status')}" for k in r.get("checks") or []))
             for r in series])]
        for r in series:
            if r.get("figure"):
                parts.append(figure(image(r["figure"]), f"{r.get('element')}: running U",
                                    r["figure"]))
    parts += ["<h2>Method and references</h2>",
              Markup("<ul>" + "".join(f"<li>{esc(n)}</li>" for n in METHOD_NOTES) + "</ul>"),
              Markup("<ol>" + "".join(f"<li>{esc(r)}</li>" for r in REFERENCES) + "</ol>")]
    parts += ["<h2>Cautions</h2>",
              Markup("<ul>" + "".join(f"<li>{esc(x)}</li>" for x in CAUTIONS) + "</ul>")]
    notes = results.get("notes") or []
    if notes:
        parts += ["<h2>Notes</h2>",
                  Markup("<ul>" + "".join(f"<li>{esc(n)}</li>" for n in notes) + "</ul>")]
    site = get(results, "survey", "site", "name", default="survey")
    return page(f"Thermal survey assessment: {site}", "\n".join(parts))


def _heat_loss_section(results, charts) -> Markup:
    h = results.get("heat_loss") or {}
    if not h:
        return Markup("<h2>Heat loss</h2><p>No heat-loss figures in these results.</p>")
    rows = [
        ("heat-loss coefficient H (± standard uncertainty)",
         f"{fmt(h.get('h_w_k'), 1)} ± {fmt(h.get('h_std_w_k'), 1)} W/K"),
        ("  of which elements (sum U A)", fmt(h.get("h_elements_w_k"), 1, "W/K")),
        ("  of which defects and bridges (sum psi L + chi)", fmt(h.get("h_defects_w_k"), 1, "W/K")),
        ("heat flow on the survey night", fmt(h.get("q_survey_w"), 0, "W")),
        (f"heat flow at design conditions ({fmt(h.get('design_indoor_c'), 1, '°C')} inside, "
         f"{fmt(h.get('design_outdoor_c'), 1, '°C')} outside)", fmt(h.get("q_design_w"), 0, "W")),
        ("heating degree-days", fmt(h.get("hdd_kd"), 0, "K·day")),
        ("annual fabric heat loss (before heating efficiency)",
         f"{fmt(h.get('annual_kwh'), 0)} ± {fmt(h.get('annual_kwh_std'), 0)} kWh/yr"),
    ]
    parts = [Markup("<h2>Heat loss</h2>"), table(["quantity", "value"], rows),
             table(["element", "U A [W/K]"],
                   [(r.get("name"), fmt(r.get("h_w_k"), 2)) for r in h.get("by_element") or []],
                   numeric=(1,))]
    if charts.get("heat_loss"):
        parts.append(figure(charts["heat_loss"], "heat-loss coefficient by element", cls="chart"))
    return Markup("\n".join(parts))


def builder_html(results: Mapping, image: ImageFn) -> str:
    """One printable A4 page: measured vs specified U per element, verdict in words."""
    checked = [e for e in results.get("elements") or [] if e.get("u_specified_w_m2k") is not None]
    defects = results.get("defects") or []
    n_fail = sum(1 for c in results.get("checks") or [] if c.get("status") == "fail")
    n_warn = sum(1 for c in results.get("checks") or [] if c.get("status") == "warn")
    rows = []
    for e in checked:
        on_it = [d for d in defects if d.get("element") == e.get("name")]
        rows.append((e.get("name"), fmt(e.get("u_w_m2k"), 2), interval(e),
                     fmt(e.get("u_specified_w_m2k"), 2), status(e.get("verdict")),
                     e.get("verdict_reason") or "", pct(e.get("coverage_share")),
                     "; ".join(f"{d.get('id')} {d.get('defect_class')}" for d in on_it) or "none"))
    parts = [header(results, "Insulation check"),
             Markup(f"<p>Survey validity: {n_fail} failed and {n_warn} warning checks. A "
                    "verdict is PASS only when the whole 95 % interval of the measured U "
                    "[W/(m²·K)] is at or below the specification.</p>")]
    if rows:
        parts.append(table(["element", "measured U [W/(m²·K)]", "95 % interval [W/(m²·K)]",
                            "specified U [W/(m²·K)]", "verdict", "reason",
                            "area looking properly insulated", "defects on it"], rows,
                           numeric=(1, 3)))
        word = overall_verdict(results)
        parts.append(Markup(f"<p class='box'><b>Overall:</b> {status(word)} over "
                            f"{len(rows)} checked element(s).</p>"))
    else:
        parts.append(Markup("<p>No element has a specified U, so no verdict is given.</p>"))
    shown = []
    for e in checked:
        tg = e.get("thermogram")
        if tg in shown:
            continue
        shown.append(tg)
        rel = thermogram_figure(results, tg, "defects")
        parts.append(figure(image(rel), f"{tg}: defects located", rel))
    parts.append(Markup(f"<p class='small'>{esc(CAUTIONS[0])} {esc(CAUTIONS[-1])}</p>"))
    site = get(results, "survey", "site", "name", default="survey")
    return page(f"Insulation check: {site}", "\n".join(parts), BUILDER_CSS)


# ---- homeowner --------------------------------------------------------------------------

U_WORDS = "U-value (heat lost through each square metre for each degree of difference)"
MOULD_TEXT = (
    "Mould risk means that in an ordinary winter the coldest spots of a surface can stay so "
    "cold and damp that mould can grow there, typically behind furniture, in corners and "
    "around windows. Condensation risk means water can form on the surface. Keep such "
    "spots ventilated and warm, keep furniture a little away from cold outside walls, "
    "and have the cause fixed. Mould is a health matter: if you see it spreading, ask a "
    "professional.")


def fix_text(item: Mapping, currency: str) -> dict[str, str]:
    """Plain-language pieces for one top fix (shared with the PDF)."""
    m = item.get("measure")
    defects = item.get("defects") or []
    where = ", ".join(str(d.get("element")) for d in defects if d.get("element"))
    if m is None:
        d = defects[0] if defects else {}
        return {"title": f"Problem {d.get('id')}: {str(d.get('defect_class') or '').replace('_', ' ')}",
                "body": f"On the {d.get('element')}: about {fmt(d.get('annual_kwh'), 0)} "
                        "kWh (units of energy on your bill) lost each year; "
                        f"{RISK_WORDS.get(str(d.get('risk')), 'risk not assessed')}."}
    lo, hi = money_range(m)
    body = (f"Saves {about_range(m.get('annual_kwh_saved_low95'), m.get('annual_kwh_saved_high95'), 'kWh')} "
            f"(units of energy on your bill) a year, worth {about_range(lo, hi, currency)} a "
            f"year. Estimated cost {fmt(m.get('cost'), 0, currency)}")
    pay = m.get("payback_years")
    if is_num(pay) and pay > 30:
        body += (f"; on energy savings alone it would take about {pay:.0f} years to pay for "
                 "itself, so it is best done for comfort or together with other work.")
    elif is_num(pay):
        body += f"; it pays for itself in about {pay:.0f} years."
    else:
        body += "; it does not pay back on energy alone."
    if where:
        body += f" Where: {where}."
    return {"title": str(m.get("name") or "measure"), "body": body}


CLASS_WORDS = {
    "missing insulation": "a patch where insulation is missing or has slipped",
    "linear thermal bridge": "a cold line along a junction (a thermal bridge)",
    "repeating thermal bridge": "framing (studs or rafters) showing through as cold lines",
    "air leakage": "a draught (cold air leaking in)",
    "unexplained": "a spot that needs a closer look",
}


def found_lines(results: Mapping) -> list[str]:
    """Plain sentences of what was found (shared with the PDF): the yearly loss, where the
    heat goes, the leakiest surfaces, risks, problem spots, and what could not be measured."""
    lines = []
    h = results.get("heat_loss") or {}
    if is_num(h.get("annual_kwh")):
        lo = h["annual_kwh"] - 1.96 * (h.get("annual_kwh_std") or 0.0)
        hi = h["annual_kwh"] + 1.96 * (h.get("annual_kwh_std") or 0.0)
        lines.append(f"The surveyed walls, windows, floors and ceilings lose "
                     f"{about_range(max(lo, 0.0), hi, 'kWh')} (kilowatt-hours, the units on your "
                     "energy bill) of heat a year, before your boiler's or heat pump's efficiency.")
    if is_num(h.get("h_w_k")) and h["h_w_k"] > 0 and is_num(h.get("h_defects_w_k")):
        share = h["h_defects_w_k"] / h["h_w_k"]
        lines.append(f"About {100 * share:.0f} in every 100 units of that heat escape through the "
                     "problem spots below; the rest goes through the surfaces as built.")
    valid = [e for e in results.get("elements") or []
             if is_num(e.get("u_w_m2k")) and e.get("u_valid", True)]
    worst = sorted(valid, key=lambda e: -e["u_w_m2k"])[:3]
    if worst:
        lines.append(
            f"A {U_WORDS} tells how leaky a surface is: lower is better. The leakiest surfaces "
            "measured: " + "; ".join(f"{e.get('name')} about {e['u_w_m2k']:.1f} watts per "
                                     "square metre per degree" for e in worst) + ".")
    risky = [e for e in valid if e.get("risk") in ("mould", "condensation")]
    for e in risky:
        lines.append(f"{e.get('name')}: {RISK_WORDS.get(str(e.get('risk')), '')} in a cold "
                     "spell (see below).")
    defects = results.get("defects") or []
    if defects:
        counts: dict[str, int] = {}
        for d in defects:
            c = str(d.get("defect_class") or "unexplained")
            counts[c] = counts.get(c, 0) + 1
        words = [f"{n} × {CLASS_WORDS.get(c, c)}" for c, n in counts.items()]
        lines.append(f"{len(defects)} problem spot(s), the riskiest first in the full report: "
                     + "; ".join(words) + ".")
    else:
        lines.append("No problem spots were found.")
    bad = [e for e in results.get("elements") or [] if e.get("u_valid") is False]
    for e in bad:
        lines.append(f"{e.get('name')} could not be measured reliably on this night; it is "
                     "left out of the totals.")
    return lines


def summary_html(results: Mapping, image: ImageFn) -> str:
    """Homeowner summary in plain words with marked pictures and saving ranges."""
    cur = get(results, "survey", "currency", default="")
    parts = [header(results, "Your home's heat survey"), "<h2>What we found</h2>",
             Markup("<ul>" + "".join(f"<li>{esc(x)}</li>" for x in found_lines(results))
                    + "</ul>"), "<h2>The fixes worth most</h2>"]
    fixes = top_fixes(results)
    if not fixes:
        parts.append(Markup("<p>No fixes were proposed.</p>"))
    for i, item in enumerate(fixes, 1):
        t = fix_text(item, cur)
        rel = thermogram_figure(results, item.get("thermogram"), "defects")
        parts.append(Markup(
            f"<div class='fix'><h3>{i}. {esc(t['title'])}</h3><p>{esc(t['body'])}</p>"
            f"{figure(image(rel), 'thermal picture with the problem spots marked', rel)}"
            "</div>"))
    pkg = results.get("package")
    if pkg:
        lo, hi = money_range(pkg)
        parts.append(Markup(f"<p class='box'>All fixes together: {esc(about_range(lo, hi, cur))}"
                            f" a year for about {esc(fmt(pkg.get('cost'), 0, cur))}.</p>"))
    parts += ["<h2>What mould risk means for you</h2>", Markup(f"<p>{esc(MOULD_TEXT)}</p>"),
              "<h2>Please read</h2>",
              Markup("<ul>" + "".join(f"<li>{esc(x)}</li>" for x in CAUTIONS) + "</ul>")]
    site = get(results, "survey", "site", "name", default="your home")
    return page(f"Heat survey summary: {site}", "\n".join(parts))
