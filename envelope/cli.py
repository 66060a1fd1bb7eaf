"""Command line (edge): parse, call, format. Exit codes: 0 done; 2 user error or file-system
fault (one line naming the path and what to do, no traceback, nothing written, inputs never
touched); 3 done but some thermograms failed (listed in the results); 128 + signal number when
stopped by SIGINT (130), SIGHUP (129) or SIGTERM (143), nothing written."""

from __future__ import annotations

import contextlib
import json
import os
import sys
import warnings
from enum import StrEnum
from pathlib import Path
from typing import Annotated

import click
import typer

from .errors import EnvelopeWarning, SurveyError, raised_at
from .faults import MAX_MESSAGE_CHARS, os_error_to_survey_error, terminal_json, terminal_text
from .interrupts import Interrupted, Interrupts

EXIT_USER_ERROR = 2
EXIT_PARTIAL = 3
EXIT_INTERRUPTED = 130
DRAWS_RANGE = (100, 1_000_000)
"""Allowed ``--draws``: the range of the survey key ``analysis.monte_carlo_draws``."""

app = typer.Typer(
    name="envelope",
    help="From a thermal-camera survey of a house to corrected surface temperatures, in-situ "
         "U-values with uncertainty, condensation and mould risk, ranked defects, a retrofit "
         "case and reports. Temperatures in °C, U in W/(m²·K).",
    no_args_is_help=True,
    add_completion=False,
    pretty_exceptions_enable=False,
    rich_markup_mode=None,  # plain help: units in [brackets] print as written
)

SurveyArg = Annotated[Path, typer.Argument(help="Survey folder (holding survey.toml) or the .toml file itself.", show_default=False)]
OutOpt = Annotated[Path, typer.Option("--out", "-o", help="New output folder, apart from the survey folder; must not exist or be empty.", show_default=False)]
QuietOpt = Annotated[bool, typer.Option("--quiet", "-q", help="No progress or summary on the terminal. Default: off.", show_default=False)]
ReplaceOpt = Annotated[bool, typer.Option("--replace", help="Replace an earlier output folder of envelope (one holding only files envelope wrote, see its manifest.json), once the new one is complete. Default: off.", show_default=False)]


def _version(value: bool) -> None:
    if value:
        from . import __version__

        typer.echo(f"envelope {__version__}")
        raise typer.Exit(0)


@app.callback()
def _main(
    version: Annotated[bool, typer.Option("--version", callback=_version, is_eager=True, help="Print the version and exit.", show_default=False)] = False,
):
    """From a thermal-camera survey of a house to corrected surface temperatures, in-situ
    U-values with uncertainty, condensation and mould risk, ranked defects, a retrofit case
    and reports. Temperatures in °C, U in W/(m²·K)."""


def _fail(exc: Exception) -> None:
    typer.echo(f"envelope: error: {terminal_text(exc, MAX_MESSAGE_CHARS)}", err=True)
    raise typer.Exit(EXIT_USER_ERROR)


def _t(value, limit: int = 40) -> str:
    """Survey text for the terminal: no control characters, at most `limit` characters."""
    return terminal_text(value, limit)


@contextlib.contextmanager
def guarded(on_stop: str = "nothing written"):
    """Run a command body so that every fault ends in one line and a defined exit code.

    `SurveyError` and file-system faults (`OSError`, mapped by `envelope.faults`) exit 2;
    SIGINT, SIGTERM and SIGHUP exit 128 + the signal number after the cleanup of the
    `with` blocks inside (the staging folder is removed); anything else is a bug, still
    reported on one line with exit 2 (``ENVELOPE_DEBUG=1`` shows the traceback). Yields the
    installed `envelope.interrupts.Interrupts` (its ``hold`` protects the final renames).
    """
    interrupts = Interrupts()
    with interrupts.installed():
        try:
            yield interrupts
        except (click.exceptions.Exit, click.exceptions.Abort, click.exceptions.ClickException):
            raise
        except Interrupted as exc:
            if exc.committed is not None:
                msg = (f"interrupted ({exc.signal_name}) after the outputs were complete; they "
                       f"are whole in {exc.committed}")
            else:
                msg = f"interrupted ({exc.signal_name}); {on_stop}"
            typer.echo(f"envelope: {terminal_text(msg, MAX_MESSAGE_CHARS)}", err=True)
            raise typer.Exit(exc.exit_code) from None
        except KeyboardInterrupt:
            typer.echo(f"envelope: interrupted; {on_stop}", err=True)
            raise typer.Exit(EXIT_INTERRUPTED) from None
        except SurveyError as exc:
            _fail(exc)
        except OSError as exc:
            _fail(os_error_to_survey_error(exc, "read"))
        except (RecursionError, MemoryError):
            _fail(SurveyError("an input is too large or nested too deeply for this machine; "
                              "check the survey files; nothing written"))
        except Exception as exc:
            if os.environ.get("ENVELOPE_DEBUG"):
                raise
            _fail(SurveyError(f"unexpected {type(exc).__name__} at {raised_at(exc)}; nothing "
                              "written. This is a bug of envelope: please report it "
                              "(ENVELOPE_DEBUG=1 shows the traceback)"))


def _check_draws(draws: int | None) -> None:
    lo, hi = DRAWS_RANGE
    if draws is not None and not lo <= draws <= hi:
        raise SurveyError(f"{draws} draws is outside {lo}…{hi}, the range of the survey key "
                          "analysis.monte_carlo_draws; choose a number in it", None, "--draws")


def _input_folders(s) -> list[Path]:
    """The survey folder and the folder of every file the survey names (links resolved):
    the places an output folder must stay apart from."""
    from .survey import survey_paths

    found: dict[str, Path] = {}
    for path in survey_paths(s):
        try:
            real = path.resolve()
            folder = real if real.is_dir() else real.parent
        except (OSError, RuntimeError, ValueError):
            continue
        found.setdefault(str(folder), folder)
    return [Path(s.root), *found.values()]


def _load(path: Path):
    from .survey import load_survey

    return load_survey(path)


def _warn_to_stderr(quiet: bool):
    def show(message, category, filename, lineno, file=None, line=None):
        if not quiet:
            typer.echo(f"envelope: warning: {terminal_text(message, MAX_MESSAGE_CHARS)}", err=True)
    warnings.showwarning = show
    warnings.simplefilter("default", EnvelopeWarning)


class Convection(StrEnum):
    """Interior convection: the ensemble of correlations that fit each surface, or one model
    (see envelope.convection)."""

    ensemble = "ensemble"
    iso6946 = "iso6946"
    churchill_chu = "churchill_chu"
    alamdari_hammond = "alamdari_hammond"
    khalifa_marshall = "khalifa_marshall"
    horizontal_plate = "horizontal_plate"
    iso15099 = "iso15099"


def _Progress(total: int, quiet: bool):
    """The progress bar of `assess` (stages), `terminal.ProgressBar`."""
    from .terminal import ProgressBar

    return ProgressBar(total, quiet)


@app.command()
def inspect(
    survey: SurveyArg,
    materials: Annotated[bool, typer.Option("--materials", help="Also list the emissivity table [-] with sources. Default: off.", show_default=False)] = False,
    json_out: Annotated[bool, typer.Option("--json", help="Print what was found as JSON. Default: off.", show_default=False)] = False,
):
    """Check a survey as `assess` would (TOML, pixel files, outlines, scales) and list what it
    holds and what is still needed before `assess`. Exit 0: loads (the list may still hold
    keys to fill in); 2: something `assess` would refuse."""
    from .checklist import survey_checklist

    try:
        cl = survey_checklist(survey)
    except SurveyError as exc:
        _fail(exc)
    s = cl.survey
    checks = []
    if not any(k.startswith("conditions.") for k in s.todo):
        from .assess import survey_checks

        checks = survey_checks(s.conditions)
    info = {"site": s.site.name, "date": s.date,
            "elements": [{"name": e.name, "kind": e.kind, "u_specified_w_m2k": e.u_specified_w_m2k}
                         for e in s.elements.values()],
            "thermograms": cl.views, "series": [sr.id for sr in s.series],
            "pressure_pairs": [[p.baseline, p.depressurised, p.pressure_difference_pa] for p in s.pressure_pairs],
            "measures": [m.name for m in s.measures],
            "checks": [{"name": c.name, "status": c.status, "rule": c.rule} for c in checks],
            "problems": cl.problems, "still_needed": cl.todo, "notes": cl.notes, "ready": cl.ready}
    if json_out:
        typer.echo(json.dumps(info, indent=2, ensure_ascii=False))
        if cl.problems:
            raise typer.Exit(EXIT_USER_ERROR)
        return
    c = s.conditions
    air = ("" if any(k.startswith("conditions.") for k in s.todo) else
           f"   indoor {c.indoor_air_c:.1f} °C, outdoor {c.outdoor_air_c:.1f} °C, wind {c.wind_m_s:.1f} m/s")
    typer.echo(f"Survey: {_plain(s.site.name) or '(site name still to fill in)'}"
               f"{', ' + _plain(s.site.town) if s.site.town else ''}  {_plain(s.date)}{air}")
    typer.echo(f"{len(s.elements)} elements:")
    for e in s.elements.values():
        spec = f"  specified U {e.u_specified_w_m2k:.2f} W/(m²·K)" if e.u_specified_w_m2k else ""
        typer.echo(f"  {e.name:<28} {e.kind:<8}{spec}")
    typer.echo(f"{len(cl.views)} thermograms:")
    for t in cl.views:
        size = (f"{t['shape_px'][1]}×{t['shape_px'][0]} px  {t['reading_range_c'][0]:.1f}…"
                f"{t['reading_range_c'][1]:.1f} °C" if t["shape_px"] else "(pixels not read)")
        typer.echo(f"  {t['id']:<28} {t['side'] or '?':<9} {size}  elements: "
                   f"{', '.join(t['elements']) or '-'}")
    if s.series:
        typer.echo("series: " + ", ".join(info["series"]))
    for p in s.pressure_pairs:
        typer.echo(f"pressure pair: {p.baseline} / {p.depressurised} at {p.pressure_difference_pa:g} Pa")
    if checks:
        typer.echo("validity of the night:")
        for ch in checks:
            typer.echo(f"  [{ch.status:^5}] {ch.name}: {ch.rule}")
    if materials:
        from .radiometry import MATERIALS

        typer.echo("emissivity table:")
        for key, m in MATERIALS.items():
            typer.echo(f"  {key:<32} {m.emissivity:.2f}  {m.source}")
    for n in cl.notes:
        typer.echo(f"note: {_plain(n)}")
    if cl.problems:
        typer.echo(f"Problems that `assess` would refuse ({len(cl.problems)}):")
        for p in cl.problems:
            typer.echo(f"  - {_plain(p)}")
    if cl.todo:
        typer.echo(f"Still needed before `envelope assess` ({len(cl.todo)}):")
        for t in cl.todo:
            typer.echo(f"  - {_plain(t)}")
    elif not cl.problems:
        typer.echo("Ready for `envelope assess`.")
    if cl.problems:
        typer.echo(f"envelope: error: {len(cl.problems)} problem{'s' if len(cl.problems) > 1 else ''} "
                   f"that `assess` would refuse (listed above); first: {_plain(cl.problems[0])}", err=True)
        raise typer.Exit(EXIT_USER_ERROR)


def _plain(text) -> str:
    """Text for the terminal: control characters replaced."""
    return "".join(ch if ch.isprintable() else "?" for ch in str(text))


@app.command()
def init(
    survey: Annotated[Path, typer.Argument(help="Survey folder to create (or extend with new exports).")],
    exports: Annotated[Path, typer.Option("--from", help="Folder of camera exports (read only: never written to).")],
    element: Annotated[list[str] | None, typer.Option("--element", help="Declare an element: NAME:KIND or NAME:KIND:HOST (repeatable).")] = None,
    view: Annotated[list[str] | None, typer.Option("--view", help="Elements a view shows: EXPORT=ELEMENT,ELEMENT (repeatable).")] = None,
    side: Annotated[str | None, typer.Option("--side", help="Side of the new thermograms: interior or exterior.")] = None,
    site: Annotated[str | None, typer.Option("--site", help="Site name of a new survey.")] = None,
    indoor_air_c: Annotated[float | None, typer.Option("--indoor-air-c", help="Indoor air temperature on the night [°C].")] = None,
    outdoor_air_c: Annotated[float | None, typer.Option("--outdoor-air-c", help="Outdoor air temperature on the night [°C].")] = None,
    export_emissivity: Annotated[float | None, typer.Option("--export-emissivity", min=0.05, max=1.0, help="Emissivity the camera used for exports whose header does not say.")] = None,
    export_reflected_c: Annotated[float | None, typer.Option("--export-reflected-c", min=-60.0, max=200.0, help="Reflected temperature [°C] the camera used for exports whose header does not say.")] = None,
    quiet: QuietOpt = False,
):
    """Start a survey from a folder of camera exports: reads and checks each export, copies it
    into SURVEY/thermograms, writes empty outline files and a survey.toml with every required
    key (from the exports' headers and the options, the rest as "fill in" placeholders). Run
    again with new exports: they are added; nothing already in survey.toml is changed."""
    from .scaffold import init_survey, parse_element_option, parse_view_option

    try:
        if side is not None and side not in ("interior", "exterior"):
            raise SurveyError(f"expected interior or exterior, got '{side[:20]}'", None, "--side")
        for name, v in (("--indoor-air-c", indoor_air_c), ("--outdoor-air-c", outdoor_air_c)):
            if v is not None and not -50.0 <= v <= 45.0:
                raise SurveyError(f"expected a temperature in [-50, 45] °C, got {v:g}", None, name)
        els = [parse_element_option(e) for e in element or []]
        views = [parse_view_option(v) for v in view or []]
        rep = init_survey(survey, exports, els, views, side, site, indoor_air_c, outdoor_air_c,
                          {"emissivity": export_emissivity, "reflected_c": export_reflected_c})
    except SurveyError as exc:
        _fail(exc)
    except OSError as exc:
        _fail(SurveyError(f"cannot write ({exc.strerror or type(exc).__name__}); check the "
                          "folder's permissions and free space", str(getattr(exc, "filename", None) or survey)))
    if not quiet:
        typer.echo(f"{'wrote' if rep.created else 'extended'} {rep.survey_file}")
        for tid, name, how in rep.added:
            typer.echo(f"  added {tid:<24} from {_plain(name)}: {_plain(how)[:160]}")
        for name, tid in rep.already:
            typer.echo(f"  already in the survey: {_plain(name)} (thermogram {tid})")
        for name in rep.elements_added:
            typer.echo(f"  element {name}")
        for name, why in rep.refused:
            typer.echo(f"  REFUSED {_plain(name)}: {_plain(why)}", err=True)
        typer.echo(f"next: fill in what `envelope inspect {survey}` lists, then draw the outlines "
                   f"with `envelope outline {survey} ID`")
    if rep.refused:
        raise typer.Exit(EXIT_PARTIAL)


@app.command()
def correct(
    survey: SurveyArg, out: OutOpt, replace: ReplaceOpt = False, quiet: QuietOpt = False,
    metric_cm: Annotated[float | None, typer.Option("--metric-cm", min=0.1, max=100.0, help="Also write each image resampled onto the element plane at this grid step [cm per pixel], 0.1 to 100. Default: not written.", show_default=False)] = None,
):
    """Write the corrected surface-temperature image [°C, float32 TIFF] of every thermogram
    (and, with --metric-cm, the same resampled onto a metric grid on the element plane).
    Exit 3 when some thermograms failed: the others are written, the failures listed."""
    import numpy as np
    import tifffile

    from .folders import staged_folder
    from .outputs import inside
    from .stages.correct import correct_view
    from .views import SurveyFolder

    _warn_to_stderr(quiet)
    notes: list[str] = []
    failed: list[dict] = []
    with guarded() as interrupts:
        s = _load(survey)
        with staged_folder(out, replace, inputs=_input_folders(s), command="correct",
                           hold=interrupts.hold, notes=notes) as tmp:
            index = []
            for t in s.thermograms:
                try:  # one broken view is listed, the others are still written
                    cor = correct_view(SurveyFolder(s).open_view(t), s.elements, s.camera,
                                       s.conditions, s.file.name)
                    if metric_cm is not None:
                        from .geometry import rectify

                        rec = rectify(cor.object_c, cor.homography, metric_cm)
                except SurveyError as exc:
                    failed.append({"id": t.id, "error": str(exc)})
                    continue
                name = f"{t.id}-surface-c.tif"
                tifffile.imwrite(inside(tmp, name), cor.object_c.astype(np.float32),
                                 compression="zlib", metadata=None)
                entry = {"id": t.id, "file": name,
                         "transmittance": float(cor.transmittance),
                         "camera_offset_k": cor.offset.value_k, "unit": "°C"}
                if metric_cm is not None:
                    metric_name = f"{t.id}-metric-c.tif"
                    tifffile.imwrite(inside(tmp, metric_name), rec.image.astype(np.float32),
                                     compression="zlib", metadata=None)
                    entry["metric"] = {"file": metric_name, "cm_per_px": rec.cm_per_px,
                                       "origin_m": list(rec.origin_m), "extent_m": list(rec.extent_m),
                                       "row_0_at_top": not rec.y_down}
                index.append(entry)
                if not quiet:
                    typer.echo(f"corrected {_t(t.id)}  (τ = {cor.transmittance:.4f})", err=True)
            if not index:
                raise SurveyError("no thermogram could be corrected: " + "; ".join(
                    f["error"] for f in failed))
            (tmp / "corrected.json").write_text(json.dumps(index + [
                {"id": f["id"], "failed": f["error"]} for f in failed], indent=2,
                sort_keys=True) + "\n")
    for note in notes:
        typer.echo(f"envelope: note: {terminal_text(note, MAX_MESSAGE_CHARS)}", err=True)
    if not quiet:
        for f in failed:
            typer.echo(f"envelope: not corrected: {_t(f['id'])}: "
                       f"{terminal_text(f['error'], MAX_MESSAGE_CHARS)}", err=True)
        typer.echo(f"wrote {len(index)} corrected images to {_t(out, 300)}"
                   + (f"; {len(failed)} thermogram{'s' if len(failed) > 1 else ''} failed "
                      "(listed above and in corrected.json)" if failed else ""))
    if failed:
        raise typer.Exit(EXIT_PARTIAL)


@app.command()
def assess(
    survey: SurveyArg,
    out: OutOpt,
    replace: ReplaceOpt = False,
    quiet: QuietOpt = False,
    json_out: Annotated[bool, typer.Option("--json", help="Print a summary as JSON on stdout (for scripts) instead of the table. Default: off.", show_default=False)] = False,
    draws: Annotated[int | None, typer.Option("--draws", help=f"Monte Carlo draws per element [-], {DRAWS_RANGE[0]}…{DRAWS_RANGE[1]}. Default: analysis.monte_carlo_draws of the survey (20000 when the survey does not set it).", show_default=False)] = None,
    convection: Annotated[Convection | None, typer.Option("--convection", metavar="MODEL", help="Interior convective coefficient h_c [W/(m²·K)]: ensemble (the correlations that fit each surface, drawn in the Monte Carlo) or one model fixed: iso6946, churchill_chu, alamdari_hammond, khalifa_marshall, horizontal_plate, iso15099. Default: analysis.interior_convection of the survey (ensemble when unset).", show_default=False)] = None,
):
    """Assess a survey: corrected temperatures, U-values with 95 % intervals, fRsi and mould/condensation risk, ranked defects, heat loss, retrofit case and the reports."""
    import dataclasses

    from .assess import assess_survey
    from .folders import staged_folder
    from .outputs import write_outputs

    _warn_to_stderr(quiet or json_out)
    notes: list[str] = []
    with guarded("no output folder written") as interrupts:
        _check_draws(draws)
        s = _load(survey)
        if draws is not None:
            s = dataclasses.replace(s, analysis=dataclasses.replace(s.analysis, monte_carlo_draws=draws))
        if convection is not None:
            s = dataclasses.replace(s, analysis=dataclasses.replace(
                s.analysis, interior_convection=convection.value))
        steps = len(s.thermograms) * 2 + len(s.series) + 2
        with _Progress(steps, quiet or json_out) as progress, \
                staged_folder(out, replace, inputs=_input_folders(s), command="assess",
                              hold=interrupts.hold, notes=notes) as tmp:
            a = assess_survey(s, progress=progress)
            if len(a.failures) == len(s.thermograms) + len(s.series):
                raise SurveyError("no thermogram could be assessed: " + "; ".join(
                    f.error for f in a.failures))
            results = write_outputs(a, tmp, progress)
    for note in notes:
        typer.echo(f"envelope: note: {terminal_text(note, MAX_MESSAGE_CHARS)}", err=True)
    summary = _summary(results, out)
    if json_out:
        typer.echo(terminal_json(summary))
    elif not quiet:
        from .terminal import print_summary

        print_summary(results, out)
    if results["failures"]:
        raise typer.Exit(EXIT_PARTIAL)


def _summary(results: dict, out: Path) -> dict:
    hl = results.get("heat_loss") or {}
    return {
        "out": str(out),
        "elements": [{k: e.get(k) for k in ("name", "thermogram", "u_w_m2k", "u_low95_w_m2k",
                                            "u_high95_w_m2k", "u_valid", "risk", "verdict")}
                     for e in results["elements"]],
        "defects": [{k: d.get(k) for k in ("rank", "id", "defect_class", "element", "annual_kwh", "risk")}
                    for d in results["defects"]],
        "h_w_k": hl.get("h_w_k"), "annual_kwh": hl.get("annual_kwh"),
        "failures": results["failures"],
    }


@app.command()
def rerender(
    out_dir: Annotated[Path, typer.Argument(help="An output folder written by `envelope assess`.", show_default=False)],
    quiet: QuietOpt = False,
    single_file: Annotated[bool, typer.Option("--single-file", help="Embed the figures in the pages, so that report.html, check.html and summary.html each stand alone. Default: off (figures linked from figures/).", show_default=False)] = False,
):
    """Rewrite the reports of an existing output folder from its results.json (no recomputing)."""
    from .outputs import rerender_reports

    with guarded("the reports were left as they were") as interrupts:
        rerender_reports(out_dir, hold=interrupts.hold, embed=single_file)
    if not quiet:
        typer.echo(f"reports rewritten in {_t(out_dir, 300)}")


@app.command()
def outline(
    survey: SurveyArg,
    thermogram: Annotated[str, typer.Argument(help="Id of the thermogram to draw on.", show_default=False)],
    outlines: Annotated[Path | None, typer.Option("--file", help="GeoJSON to write. Default: the thermogram's outlines file.", show_default=False)] = None,
):
    """Draw element outlines and reference zones on a thermogram and pick its scale (opens a
    window; works on a survey that still has keys to fill in)."""
    import math

    from .editor import run_editor
    from .loader import load
    from .readers import load_pixels
    from .stages.correct import correct_image

    try:
        s = load(survey, incomplete=True)
        try:
            index, tg = next((i, t) for i, t in enumerate(s.thermograms) if t.id == thermogram)
        except StopIteration:
            raise SurveyError(f"no thermogram '{_plain(thermogram)[:64]}'; ids: "
                              f"{', '.join(t.id for t in s.thermograms)}", s.file.name, "thermograms.id") from None
        if tg.file is None:
            raise SurveyError("set the thermogram's file first", s.file.name, f"thermograms[{index}].file")
        target = outlines or tg.outlines or (s.root / "outlines" / f"{tg.id}.geojson")
        img = load_pixels(tg.file, str(tg.file.relative_to(s.root)), tg.export)
        ready = not any(k.startswith(("conditions.", f"thermograms[{index}].")) for k in s.todo)
        note = "corrected surface temperatures"
        if ready and not math.isnan(tg.reflected_c):
            import numpy as np

            eps = np.full(img.shape, tg.emissivity_default or 0.93, np.float32)
            img = correct_image(img, tg, s.camera, s.conditions, eps, s.file.name)[0]
        else:
            note = "readings as exported (fill in the survey's conditions for corrected temperatures)"
    except SurveyError as exc:
        _fail(exc)
    try:
        run_editor(img, target, element_names=tuple(s.elements), title=tg.id,
                   view_elements=tg.elements or None, survey_file=s.file, thermogram_id=tg.id,
                   note=note)
    except RuntimeError as exc:  # no interactive matplotlib backend (no display)
        _fail(SurveyError(f"cannot open a window here ({exc}); run on a machine with a display"))


@app.command()
def portfolio(
    surveys: Annotated[list[Path] | None, typer.Argument(help="Survey folders, or folders whose sub-folders are surveys (the sub-folder name is the house id).")] = None,
    out: Annotated[Path, typer.Option("--out", "-o", help="Root of the output folders: OUT/<house id> per house and OUT/portfolio for the table; apart from every survey folder; an earlier run there is resumed.")] = ...,
    house_list: Annotated[Path | None, typer.Option("--list", help="CSV list of houses: a header with the columns house_id and survey (paths relative to the list).")] = None,
    scheduler: Annotated[str | None, typer.Option("--scheduler", help="Address of a running Dask scheduler (e.g. tcp://host:8786); default: a local cluster on this machine.")] = None,
    workers: Annotated[int | None, typer.Option("--workers", min=1, max=1024, help="Worker processes of the local cluster (default: one per core).")] = None,
    replace: Annotated[bool, typer.Option("--replace", help="Also replace house folders written by `envelope assess` (folders of the portfolio are refreshed anyway when their survey changed).")] = False,
    quiet: QuietOpt = False,
    json_out: Annotated[bool, typer.Option("--json", help="Print a summary as JSON on stdout (for scripts).")] = False,
    draws: Annotated[int | None, typer.Option("--draws", help=f"Monte Carlo draws per element, {DRAWS_RANGE[0]}…{DRAWS_RANGE[1]} (overrides every survey's analysis.monte_carlo_draws).")] = None,
    convection: Annotated[Convection | None, typer.Option("--convection", help="Interior convection model for every survey (overrides analysis.interior_convection).")] = None,
):
    """Assess many surveys as tasks on Dask, one output folder per house under --out (as
    `assess` writes it), skipping houses whose inputs have not changed, then write the
    portfolio table (OUT/portfolio: Parquet, CSV, HTML pages) ranked risk first, then
    savings. Exit 3 when some houses failed (listed) or had failed thermograms."""
    from .portfolio import HouseProgress, collect_entries, run_portfolio

    notes: list[str] = []
    with guarded("houses already finished keep their outputs; the portfolio table was not "
                 "written") as interrupts:
        _check_draws(draws)
        entries = collect_entries(surveys or [], house_list)
        with HouseProgress(len(entries), quiet or json_out) as progress:
            run = run_portfolio(entries, out, scheduler=scheduler, workers=workers, draws=draws,
                                convection=None if convection is None else convection.value,
                                replace=replace, progress=progress, hold=interrupts.hold,
                                notes=notes)
    for note in notes:
        typer.echo(f"envelope: note: {terminal_text(note, MAX_MESSAGE_CHARS)}", err=True)
    states = {s: sum(o.state == s for o in run.outcomes) for s in ("assessed", "up to date", "failed")}
    peak = max(run.peak_rss_mb_per_worker.values(), default=float("nan"))
    summary = {"out": str(out), "table": str(run.folder), "houses": len(run.outcomes), **{
        k.replace(" ", "_"): v for k, v in states.items()},
        "failed": [{"house_id": o.house_id, "survey": o.survey,
                    "error": o.error or f"{o.row.get('failed_views')} thermogram(s) failed"}
                   for o in run.failed],
        "cluster": run.cluster, "wall_s": round(run.wall_s, 1),
        "peak_memory_per_worker_mb": None if peak != peak else round(peak)}
    if json_out:
        typer.echo(terminal_json(summary))
    elif not quiet:
        typer.echo(f"{summary['houses']} houses on a {_t(run.cluster, 200)}: {states['assessed']} "
                   f"assessed, {states['up to date']} up to date (skipped), {states['failed']} "
                   f"failed; {run.wall_s:.0f} s")
        if summary["peak_memory_per_worker_mb"] is not None:
            typer.echo(f"peak memory of a worker process: {summary['peak_memory_per_worker_mb']} MB")
        for f in summary["failed"]:
            typer.echo(f"FAILED {_t(f['house_id'])} ({_t(f['survey'], 200)}): "
                       f"{terminal_text(f['error'], MAX_MESSAGE_CHARS)}", err=True)
        typer.echo(f"Portfolio table and pages in {_t(run.folder, 300)} (index.html, "
                   "portfolio.csv, portfolio.parquet)")
    if run.failed:
        raise typer.Exit(EXIT_PARTIAL)


def main() -> None:  # pragma: no cover - console entry
    try:
        app()
    except KeyboardInterrupt:
        sys.exit(EXIT_INTERRUPTED)


if __name__ == "__main__":  # pragma: no cover
    main()
