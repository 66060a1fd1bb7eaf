"""The terminal summary of `envelope assess` (edge: prints).

At most 100 columns, coloured on a terminal (rich; plain text when piped), in the reports'
number convention (95 % intervals, U never below zero). It ends with the two lines a
surveyor acts on: the builder's verdict and the validity of the night. Every string from the
survey is printed as text (no markup) with control characters removed.
"""

from __future__ import annotations

from collections.abc import Mapping

import envelope.report.facts as facts
from envelope.labels import element_label, strip_control
from envelope.report.numbers import is_num, u_text, value_text

__all__ = ["MAX_WIDTH", "summary_lines", "print_summary"]

MAX_WIDTH = 100
"""Widest line printed [columns]."""

_STYLE = {"pass": "bold green", "fail": "bold red", "inconclusive": "bold yellow",
          "warn": "bold yellow", "condensation": "bold red", "mould": "bold red"}
_WORD = {"pass": "PASS", "fail": "FAIL", "inconclusive": "INCONCLUSIVE"}


def _clip(text, width: int) -> str:
    text = strip_control(text)
    return text if len(text) <= width else text[: width - 1] + "…"


def _element_rows(results: Mapping) -> list[tuple]:
    rows = []
    for e in facts.elements_of(results):
        und = u_text(e.get("u_w_m2k"), e.get("u_low95_w_m2k"), e.get("u_high95_w_m2k"))
        whole = u_text(e.get("u_whole_w_m2k"), e.get("u_whole_low95_w_m2k"),
                       e.get("u_whole_high95_w_m2k"), std=e.get("u_whole_std_w_m2k"),
                       default_decimals=und.decimals)
        u = f"{und.value} ({und.interval})" if und.interval else und.value
        if e.get("u_valid") is False:
            u = "not valid"
        risk = str(e.get("risk") or "")
        verdict = e.get("verdict") if is_num(e.get("u_specified_w_m2k")) else None
        rows.append((_clip(element_label(e), 26), _clip(e.get("thermogram") or "", 18), u,
                     whole.value, risk, verdict))
    return rows


def summary_lines(results: Mapping, out_dir) -> dict:
    """The summary's content as plain strings (tested for width and wording)."""
    h = results.get("heat_loss") or {}
    heat = None
    if is_num(h.get("h_w_k")):
        H = value_text(h.get("h_w_k"), h.get("h_low95_w_k"), h.get("h_high95_w_k"), "W/K",
                       0.0, std=h.get("h_std_w_k"), default_decimals=1)
        annual = value_text(h.get("annual_kwh"), h.get("annual_kwh_low95"),
                            h.get("annual_kwh_high95"), "kWh", 0.0,
                            std=h.get("annual_kwh_std"), default_decimals=0)
        heat = (f"Heat loss H {H.value} W/K (95 %: {H.interval} W/K); about {annual.value} kWh "
                f"a year (95 %: {annual.interval} kWh), before the heating efficiency")
    defects = []
    for d in facts.defects_of(results)[:8]:
        kwh = d.get("annual_kwh")
        energy = facts.energy_text(d) if facts.warm_spot(d) or is_num(kwh) else ""
        defects.append((str(d.get("rank") or ""), _clip(d.get("id") or "", 5),
                        _clip(d.get("defect_class") or "", 24),
                        _clip(facts.label_of(results, d.get("element")), 20), energy,
                        str(d.get("risk") or "")))
    checked = [e for e in facts.elements_of(results) if is_num(e.get("u_specified_w_m2k"))]
    verdicts = [e.get("verdict") for e in checked]
    overall = next((w for w in ("fail", "inconclusive", "pass") if w in verdicts), None)
    if overall is None:
        builder = "Builder check: no element has a specified U"
    else:
        parts = []
        for w in ("fail", "inconclusive", "pass"):
            names = [element_label(e) for e in checked if e.get("verdict") == w]
            if names:
                more = f", and {len(names) - 4} more" if len(names) > 4 else ""
                parts.append(f"{w} {len(names)}: " + ", ".join(names[:4]) + more)
        builder = f"Builder check: {_WORD[overall]} — " + "; ".join(parts)
    night = facts.night_validity(results)
    night_line = f"Night: {night['headline']}"
    bad = [f"{facts.CHECK_WORDS.get(c.get('name'), c.get('name'))} {c.get('status')}"
           for c in night["survey_bad"]]
    views = [str(tid) for tid, _ in night["views_bad"]]
    detail = [f"{night['n_checks'] - len(night['survey_bad'])} of {night['n_checks']} survey "
              "checks pass"] + bad
    if views:
        detail.append("see " + ", ".join(views))
    night_line += " (" + "; ".join(detail) + ")"
    failures = [f"NOT ASSESSED {strip_control(f.get('thermogram'))}: {strip_control(f.get('error'))}"
                for f in results.get("failures") or []]
    notes = [f"Note: {strip_control(n)}" for n in results.get("notes") or []]
    return {"elements": _element_rows(results), "defects": defects, "notes": notes,
            "n_defects": len(results.get("defects") or []), "heat": heat,
            "outputs": f"Outputs in {strip_control(out_dir)}: report.html (auditor), check.html "
                       "(builder), summary.html and summary.pdf (homeowner)",
            "builder": builder, "builder_word": overall, "night": night_line,
            "night_word": night["worst"] if not night["views_bad"] else "warn",
            "failures": failures}


def print_summary(results: Mapping, out_dir, console=None) -> None:
    """Print the summary of an assessment on `console` (default: stdout, ≤ 100 columns)."""
    from rich import box
    from rich.console import Console
    from rich.table import Table
    from rich.text import Text

    if console is None:
        console = Console(highlight=False, soft_wrap=False)
        # a terminal narrower than 100 columns keeps its width; a pipe or file gets 100
        console.width = min(console.width if console.is_terminal else MAX_WIDTH, MAX_WIDTH)
    s = summary_lines(results, out_dir)
    width = min(console.width, MAX_WIDTH)
    t = Table(box=box.SIMPLE_HEAD, padding=(0, 1), pad_edge=False,
              title=Text(f"Elements ({len(s['elements'])}): U [W/(m²·K)] with its 95 % interval",
                         style="bold"),
              title_justify="left")
    for head, w in (("element", 21), ("view", 15), ("U undisturbed", 17), ("as built", 9),
                    ("risk", 12), ("check", 13)):
        t.add_column(head, overflow="ellipsis", no_wrap=True, width=w)
    for name, view, u, whole, risk, verdict in s["elements"]:
        t.add_row(Text(name), Text(view), Text(u, style="red" if u == "not valid" else ""),
                  Text(whole), Text(risk, style=_STYLE.get(risk, "")),
                  Text(_WORD.get(verdict, "–"), style=_STYLE.get(verdict, "")))
    console.print(t)
    if s["defects"]:
        d = Table(box=box.SIMPLE_HEAD, padding=(0, 1), pad_edge=False,
                  title=Text(f"Defects ({s['n_defects']}), health risk first, then energy",
                             style="bold"),
                  title_justify="left")
        for head, w in (("#", 3), ("id", 5), ("class", 24), ("element", 20), ("energy", 18),
                        ("risk", 12)):
            d.add_column(head, overflow="ellipsis", no_wrap=True, width=w)
        for row in s["defects"]:
            d.add_row(*(Text(x, style=_STYLE.get(x, "") if i == 5 else "")
                        for i, x in enumerate(row)))
        console.print(d)
    for f in s["failures"]:
        console.print(Text(_clip(f, width), style="bold red"))
    for line in (s["heat"], *s["notes"], s["outputs"]):
        if line:
            console.print(Text(line), width=width)
    console.print(Text(s["builder"], style=_STYLE.get(s["builder_word"], "bold")), width=width)
    console.print(Text(s["night"], style=_STYLE.get(s["night_word"], "bold")), width=width)


class ProgressBar:
    """A rich progress bar on stderr that advances by one per call (silent when quiet).

    Parameters
    ----------
    total : int
        Steps to come.
    quiet : bool
        No bar at all.
    description : str
        The first label.
    time_left : bool
        Also show the estimated time left (long runs of similar steps, e.g. houses).
    """

    def __init__(self, total: int, quiet: bool, description: str = "assessing",
                 time_left: bool = False):
        self.bar = None
        if not quiet:
            from rich.console import Console
            from rich.progress import (
                BarColumn,
                MofNCompleteColumn,
                Progress,
                TextColumn,
                TimeElapsedColumn,
                TimeRemainingColumn,
            )

            columns = [TextColumn("{task.description:<12}"), BarColumn(), MofNCompleteColumn(),
                       TimeElapsedColumn()]
            if time_left:
                columns += [TextColumn("left"), TimeRemainingColumn()]
            self.bar = Progress(*columns, console=Console(stderr=True), transient=True)
            self.task = self.bar.add_task(description, total=total)

    def __enter__(self):
        if self.bar:
            self.bar.__enter__()
        return self

    def __exit__(self, *exc):
        if self.bar:
            self.bar.__exit__(*exc)

    def advance(self, description: str) -> None:
        if self.bar:
            self.bar.update(self.task, advance=1, description=description)

    def __call__(self, stage: str) -> None:
        self.advance(stage)

