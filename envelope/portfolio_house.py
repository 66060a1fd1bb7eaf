"""One house of a portfolio: the task a Dask worker runs (edge: file system).

A task reads one survey folder and writes one output folder, ``OUT/<house id>``, exactly as
``envelope assess`` writes it (`envelope.folders.staged_folder`, `envelope.outputs.
write_outputs`, the manifest), plus ``inputs.json``: what the outputs were computed from (the
SHA-256 of ``survey.toml`` and of every file it names, the tool version and the options that
change numbers). A task whose record matches an existing output folder of the portfolio, with
``results.json`` and ``inputs.json`` unchanged since they were written (their SHA-256 in
``manifest.json``), is skipped: its row is read back from ``results.json``.

A task never raises for a survey's faults: user errors, file-system faults and bugs come back
as a failed `HouseOutcome` with a one-line message, so one broken survey cannot stop the
others. It reads nothing but its survey folder (the loader refuses files outside it) and its
own output folder.

Everything heavy (numpy, the pipeline, matplotlib) is imported inside the task, so the
process that sends the tasks stays light; a worker imports them once, on its first survey,
and keeps per-process caches (band fits, fonts) for the next ones.
"""

from __future__ import annotations

import dataclasses
import hashlib
import json
import os
import socket
import time
import warnings
from pathlib import Path

from .manifest import sha256

__all__ = [
    "DEFECT_CLASSES",
    "INPUTS_FILE",
    "INPUTS_FORMAT",
    "HouseOutcome",
    "HouseTask",
    "house_row",
    "inputs_record",
    "run_house",
    "survey_files",
    "worst_risk",
]

INPUTS_FILE = "inputs.json"
"""Record of what a house's outputs were computed from (beside ``results.json``)."""
INPUTS_FORMAT = "envelope-portfolio-inputs"
INPUTS_VERSION = 1
HOUSE_COMMAND = "portfolio"
"""Manifest ``command`` of a house folder written by ``envelope portfolio``."""
MAX_WARNINGS = 20

RISK_ORDER = ("none", "not assessed", "mould", "condensation")
"""Worst-risk scale, mildest first. A risk that could not be assessed ranks above "none":
unknown is not safe."""
CHECK_ORDER = ("pass", "warn", "fail")
DEFECT_CLASSES = ("linear thermal bridge", "repeating thermal bridge", "missing insulation",
                  "air leakage", "unexplained")
"""`envelope.defects.CLASSES`, repeated so that a skipped house does not import the defect
finder (checked equal by the tests)."""


@dataclasses.dataclass(frozen=True)
class HouseTask:
    """What a worker needs for one house (plain strings: it crosses process boundaries).

    Attributes
    ----------
    house_id : str
        Checked like survey identifiers; the output folder's name.
    survey : str
        Absolute path of the survey folder (or its ``.toml`` file), as the workers see it.
    out_dir : str
        Absolute path of ``OUT/<house id>``.
    draws, convection
        Overrides of ``analysis.monte_carlo_draws`` and ``analysis.interior_convection``.
    replace : bool
        Replace an output folder written by another command of envelope (``--replace``);
        folders written by the portfolio itself are always refreshed when stale.
    """

    house_id: str
    survey: str
    out_dir: str
    draws: int | None = None
    convection: str | None = None
    replace: bool = False


@dataclasses.dataclass(frozen=True)
class HouseOutcome:
    """What a task hands back: ``state`` is "assessed", "up to date" or "failed"."""

    house_id: str
    survey: str
    state: str
    error: str | None = None
    row: dict | None = None
    warnings: tuple[str, ...] = ()
    wall_s: float = 0.0
    cpu_s: float = 0.0
    peak_rss_mb: float = float("nan")
    """Peak resident memory of the worker process so far [MB] (``getrusage``)."""
    worker: str = ""
    """``host:pid`` of the process that ran the task."""


# --------------------------------------------------------------------------------------
# inputs
# --------------------------------------------------------------------------------------


def survey_files(survey) -> list[Path]:
    """``survey.toml`` and every file the loaded survey names (pixels, outlines, logs...).

    Walks the survey's dataclasses for paths that are regular files; the loader has
    already checked that each lies inside the survey folder.
    """
    from .survey import survey_paths

    return [p for p in survey_paths(survey) if p.is_file()]


def inputs_record(survey, draws: int | None = None, convection: str | None = None) -> dict:
    """What a house's outputs depend on: each input file's SHA-256, tool version, options.

    Parameters
    ----------
    survey : envelope.survey.Survey
        A loaded survey.
    draws, convection
        Command-line overrides (None: the survey's own settings, which its file holds).

    Returns
    -------
    dict
        ``{"format", "version", "tool_version", "files": {relative path: sha256},
        "inputs_sha256", "options"}``; ``inputs_sha256`` is the SHA-256 of the sorted
        ``path sha256`` lines.
    """
    from envelope import __version__

    root = Path(survey.root).resolve()
    files = {}
    for p in survey_files(survey):
        try:
            rel = p.resolve().relative_to(root).as_posix()
        except ValueError:  # the loader keeps files inside; name it plainly if not
            rel = str(p)
        files[rel] = sha256(p)
    files = dict(sorted(files.items()))
    joined = "".join(f"{k} {v}\n" for k, v in files.items()).encode("utf-8")
    return {"format": INPUTS_FORMAT, "version": INPUTS_VERSION, "tool_version": __version__,
            "files": files, "inputs_sha256": hashlib.sha256(joined).hexdigest(),
            "options": {"draws": draws, "convection": convection}}


def _up_to_date(out: Path, record: dict) -> bool:
    """Whether `out` holds this portfolio's outputs for exactly `record`."""
    from envelope.manifest import read_manifest

    manifest = read_manifest(out)
    if manifest is None or manifest.get("command") != HOUSE_COMMAND:
        return False
    for name in (INPUTS_FILE, "results.json"):
        p = out / name
        digest = manifest["files"].get(name)
        if digest is None or os.path.islink(p) or not p.is_file() or sha256(p) != digest:
            return False
    try:
        old = json.loads((out / INPUTS_FILE).read_text(encoding="utf-8"))
    except (OSError, ValueError):
        return False
    return old == record


def _manifest_command(out: Path) -> str | None:
    from envelope.manifest import read_manifest

    m = read_manifest(out)
    return None if m is None else m.get("command")


# --------------------------------------------------------------------------------------
# the row of the portfolio table
# --------------------------------------------------------------------------------------


def worst_risk(results: dict) -> str:
    """Worst condensation/mould risk over elements and defects (see `RISK_ORDER`).

    "not assessed" only when no element or defect had its risk assessed.
    """
    risks = [x.get("risk") for x in (results.get("elements") or []) + (results.get("defects") or [])]
    known = [r for r in risks if r in ("none", "mould", "condensation")]
    if known:
        return max(known, key=RISK_ORDER.index)
    return "not assessed"


def _envelope_area_m2(results: dict) -> float | None:
    """Net area of the elements in H [m²]: for each element of ``heat_loss.by_element``, the
    area of the result whose U·A is that element's H."""
    hl = results.get("heat_loss") or {}
    total, elements = 0.0, results.get("elements") or []
    for item in hl.get("by_element") or []:
        cands = [e for e in elements if e.get("name") == item.get("name")
                 and e.get("u_w_m2k") is not None and e.get("area_net_m2") is not None]
        if not cands or item.get("h_w_k") is None:
            return None
        best = min(cands, key=lambda e: abs(e["u_w_m2k"] * e["area_net_m2"] - item["h_w_k"]))
        total += best["area_net_m2"]
    return total if total > 0 else None


def _ratio(a, b):
    return None if a is None or b is None or b <= 0 else a / b


def house_row(house_id: str, survey: str, results: dict) -> dict:
    """One row of the portfolio table from a house's ``results.json`` dict.

    H and its 95 % interval come from ``heat_loss``; per m² means per m² of the assessed
    envelope (the net areas of the elements in H), since a survey holds no floor area. The
    best measure is the one saving the most energy a year (ties: shortest payback).
    """
    hl = results.get("heat_loss") or {}
    site = (results.get("survey") or {}).get("site") or {}
    area = _envelope_area_m2(results)
    checks = results.get("checks") or []
    statuses = [c.get("status") for c in checks if c.get("status") in CHECK_ORDER]
    measures = [m for m in (results.get("measures") or []) if m.get("annual_kwh_saved") is not None]
    best = max(measures, key=lambda m: (m["annual_kwh_saved"], -(m.get("payback_years") or 1e300)),
               default={})
    row = {
        "house_id": house_id, "survey": survey,
        "site": site.get("name"), "town": site.get("town"),
        "date": (results.get("survey") or {}).get("date"),
        "tool_version": results.get("tool_version"),
        "h_w_k": hl.get("h_w_k"), "h_low95_w_k": hl.get("h_low95_w_k"),
        "h_high95_w_k": hl.get("h_high95_w_k"),
        "envelope_area_m2": area,
        "h_per_envelope_m2_w_m2k": _ratio(hl.get("h_w_k"), area),
        "h_per_envelope_m2_low95_w_m2k": _ratio(hl.get("h_low95_w_k"), area),
        "h_per_envelope_m2_high95_w_m2k": _ratio(hl.get("h_high95_w_k"), area),
        "annual_kwh": hl.get("annual_kwh"), "annual_kwh_std": hl.get("annual_kwh_std"),
        "worst_risk": worst_risk(results),
    }
    defects = results.get("defects") or []
    for cls in DEFECT_CLASSES:
        row[f"defects_{cls.replace(' ', '_')}"] = sum(d.get("defect_class") == cls for d in defects)
    row.update({
        "best_measure": best.get("name"),
        "best_measure_annual_kwh_saved": best.get("annual_kwh_saved"),
        "best_measure_annual_kwh_saved_low95": best.get("annual_kwh_saved_low95"),
        "best_measure_annual_kwh_saved_high95": best.get("annual_kwh_saved_high95"),
        "best_measure_annual_money_saved": best.get("annual_money_saved"),
        "best_measure_cost": best.get("cost"),
        "best_measure_payback_years": best.get("payback_years"),
        "currency": (results.get("survey") or {}).get("currency"),
        "night_validity": max(statuses, key=CHECK_ORDER.index) if statuses else None,
        "night_checks_not_passed": "; ".join(
            f"{c.get('name')} {c.get('status')}" for c in checks if c.get("status") != "pass"),
        "failed_views": len(results.get("failures") or []),
    })
    return row


# --------------------------------------------------------------------------------------
# the task
# --------------------------------------------------------------------------------------


def _peak_rss_mb() -> float:
    try:
        import resource
    except ImportError:  # pragma: no cover - not POSIX
        return float("nan")
    return resource.getrusage(resource.RUSAGE_SELF).ru_maxrss / 1024.0  # kB on Linux


def _message(exc: BaseException) -> str:
    """One line for a failed house (the CLI's wording for the same faults)."""
    from envelope.errors import SurveyError, raised_at
    from envelope.faults import MAX_MESSAGE_CHARS, os_error_to_survey_error, terminal_text

    if isinstance(exc, OSError):
        exc = os_error_to_survey_error(exc, "read")
    if isinstance(exc, SurveyError):
        return terminal_text(exc, MAX_MESSAGE_CHARS)
    if isinstance(exc, RecursionError | MemoryError):
        return "an input is too large or nested too deeply for this worker"
    return (f"unexpected {type(exc).__name__} at {raised_at(exc)}; this is a bug of envelope: "
            "please report it")


def _assess_into(task: HouseTask, survey, record: dict, out: Path) -> dict:
    from envelope.assess import assess_survey
    from envelope.errors import SurveyError
    from envelope.folders import staged_folder
    from envelope.outputs import write_outputs

    command = _manifest_command(out) if out.exists() else None
    replace = task.replace or command == HOUSE_COMMAND
    with staged_folder(out, replace, inputs=[survey.root], command=HOUSE_COMMAND) as tmp:
        a = assess_survey(survey)
        if len(a.failures) == len(survey.thermograms) + len(survey.series):
            raise SurveyError("no thermogram could be assessed: " + "; ".join(
                f.error for f in a.failures))
        results = write_outputs(a, tmp)
        (tmp / INPUTS_FILE).write_text(json.dumps(record, indent=1, sort_keys=True) + "\n",
                                       encoding="utf-8")
    return results


def run_house(task: HouseTask) -> HouseOutcome:
    """Assess one house into its output folder, or skip it when up to date; never raises.

    Parameters
    ----------
    task : HouseTask

    Returns
    -------
    HouseOutcome
        ``state`` "assessed" (outputs written), "up to date" (skipped, row read back) or
        "failed" (``error`` says why; nothing written for this house).
    """
    t0, c0 = time.perf_counter(), time.process_time()
    caught: list[str] = []
    state, error, row = "failed", None, None
    try:
        from envelope.errors import EnvelopeWarning
        from envelope.survey import load_survey

        with warnings.catch_warnings(record=True) as seen:
            warnings.simplefilter("always", EnvelopeWarning)
            survey = load_survey(task.survey)
            if task.draws is not None or task.convection is not None:
                analysis = survey.analysis
                if task.draws is not None:
                    analysis = dataclasses.replace(analysis, monte_carlo_draws=task.draws)
                if task.convection is not None:
                    analysis = dataclasses.replace(analysis, interior_convection=task.convection)
                survey = dataclasses.replace(survey, analysis=analysis)
            record = inputs_record(survey, task.draws, task.convection)
            out = Path(task.out_dir)
            if _up_to_date(out, record):
                from envelope.results_file import read_results

                results, state = read_results(out), "up to date"
            else:
                results, state = _assess_into(task, survey, record, out), "assessed"
            row = house_row(task.house_id, task.survey, results)
        for w in seen:
            if issubclass(w.category, EnvelopeWarning):
                text = str(w.message)
                if text not in caught and len(caught) < MAX_WARNINGS:
                    caught.append(text)
    except Exception as exc:  # noqa: BLE001 - every fault of one house stays with it
        state, error, row = "failed", _message(exc), None
    return HouseOutcome(task.house_id, task.survey, state, error, row, tuple(caught),
                        time.perf_counter() - t0, time.process_time() - c0, _peak_rss_mb(),
                        f"{socket.gethostname()}:{os.getpid()}")
