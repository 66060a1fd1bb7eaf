"""Command line (edge): parse, call, format. Exit codes: 0 done; 2 user error (one line, no
traceback, nothing written); 3 done but some thermograms failed (listed in the results);
130 interrupted (nothing written)."""

from __future__ import annotations

import json
import sys
import warnings
from enum import StrEnum
from pathlib import Path
from typing import Annotated

import typer

from .errors import EnvelopeWarning, SurveyError

EXIT_USER_ERROR = 2
EXIT_PARTIAL = 3
EXIT_INTERRUPTED = 130

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
OutOpt = Annotated[Path, typer.Option("--out", "-o", help="New output folder; must not exist or be empty.", show_default=False)]
QuietOpt = Annotated[bool, typer.Option("--quiet", "-q", help="No progress or summary on the terminal. Default: off.", show_default=False)]
ReplaceOpt = Annotated[bool, typer.Option("--replace", help="Replace an existing output folder (only once the new one is complete). Default: off.", show_default=False)]


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
    typer.echo(f"envelope: error: {exc}", err=True)
    raise typer.Exit(EXIT_USER_ERROR)


def _load(path: Path):
    from .survey import load_survey

    return load_survey(path)


def _warn_to_stderr(quiet: bool):
    def show(message, category, filename, lineno, file=None, line=None):
        if not quiet:
            typer.echo(f"envelope: warning: {message}", err=True)
    warnings.showwarning = show
    warnings.simplefilter("default", EnvelopeWarning)


class Convection(StrEnum):
    """Interior convective coefficient model (see envelope.films.convective_coefficient)."""

    iso6946 = "iso6946"
    churchill_chu = "churchill_chu"


class _Progress:
    """A rich progress bar on stderr (silent when quiet)."""

    def __init__(self, total: int, quiet: bool):
        self.quiet = quiet
        self.bar = None
        if not quiet:
            from rich.console import Console
            from rich.progress import BarColumn, Progress, TextColumn, TimeElapsedColumn

            self.bar = Progress(TextColumn("{task.description:<12}"), BarColumn(),
                                TextColumn("{task.completed}/{task.total}"), TimeElapsedColumn(),
                                console=Console(stderr=True), transient=True)
            self.task = self.bar.add_task("assessing", total=total)

    def __enter__(self):
        if self.bar:
            self.bar.__enter__()
        return self

    def __exit__(self, *exc):
        if self.bar:
            self.bar.__exit__(*exc)

    def __call__(self, stage: str):
        if self.bar:
            self.bar.update(self.task, advance=1, description=stage)


@app.command()
def inspect(
    survey: SurveyArg,
    materials: Annotated[bool, typer.Option("--materials", help="Also list the emissivity table [-] with sources. Default: off.", show_default=False)] = False,
    json_out: Annotated[bool, typer.Option("--json", help="Print what was found as JSON. Default: off.", show_default=False)] = False,
):
    """Load and validate a survey (TOML, pixel files, outlines) and print what it holds."""
    import numpy as np

    from . import geometry
    from .survey import load_pixels

    try:
        s = _load(survey)
        thermos = []
        for t in s.thermograms:
            img = load_pixels(t.file, str(t.file.relative_to(s.root)))
            outl = geometry.read_outlines(t.outlines, img.shape, tuple(s.elements))
            thermos.append({"id": t.id, "side": t.side, "shape_px": list(img.shape),
                            "elements": sorted({o.element for o in outl if o.role == "element"}),
                            "reference_zones": sorted({o.element for o in outl if o.role == "reference"}),
                            "reading_range_c": [round(float(np.nanmin(img)), 2),
                                                round(float(np.nanmax(img)), 2)]})
    except SurveyError as exc:
        _fail(exc)
    from .assess import survey_checks

    checks = survey_checks(s.conditions)
    info = {"site": s.site.name, "date": s.date,
            "elements": [{"name": e.name, "kind": e.kind, "u_specified_w_m2k": e.u_specified_w_m2k}
                         for e in s.elements.values()],
            "thermograms": thermos, "series": [sr.id for sr in s.series],
            "pressure_pairs": [[p.baseline, p.depressurised, p.pressure_difference_pa] for p in s.pressure_pairs],
            "measures": [m.name for m in s.measures],
            "checks": [{"name": c.name, "status": c.status, "rule": c.rule} for c in checks]}
    if json_out:
        typer.echo(json.dumps(info, indent=2, ensure_ascii=False))
        return
    c = s.conditions
    typer.echo(f"Survey: {s.site.name}, {s.site.town}  {s.date}   indoor {c.indoor_air_c:.1f} °C, "
               f"outdoor {c.outdoor_air_c:.1f} °C, wind {c.wind_m_s:.1f} m/s")
    typer.echo(f"{len(s.elements)} elements:")
    for e in s.elements.values():
        spec = f"  specified U {e.u_specified_w_m2k:.2f} W/(m²·K)" if e.u_specified_w_m2k else ""
        typer.echo(f"  {e.name:<28} {e.kind:<8}{spec}")
    typer.echo(f"{len(thermos)} thermograms:")
    for t in thermos:
        typer.echo(f"  {t['id']:<28} {t['side']:<9} {t['shape_px'][1]}×{t['shape_px'][0]} px  "
                   f"{t['reading_range_c'][0]:.1f}…{t['reading_range_c'][1]:.1f} °C  "
                   f"elements: {', '.join(t['elements'])}")
    if s.series:
        typer.echo("series: " + ", ".join(info["series"]))
    for p in s.pressure_pairs:
        typer.echo(f"pressure pair: {p.baseline} / {p.depressurised} at {p.pressure_difference_pa:g} Pa")
    typer.echo("validity of the night:")
    for ch in checks:
        typer.echo(f"  [{ch.status:^5}] {ch.name}: {ch.rule}")
    if materials:
        from .radiometry import MATERIALS

        typer.echo("emissivity table:")
        for key, m in MATERIALS.items():
            typer.echo(f"  {key:<32} {m.emissivity:.2f}  {m.source}")


@app.command()
def correct(
    survey: SurveyArg, out: OutOpt, replace: ReplaceOpt = False, quiet: QuietOpt = False,
    metric_cm: Annotated[float | None, typer.Option("--metric-cm", min=0.1, max=100.0, help="Also write each image resampled onto the element plane at this grid step [cm per pixel], 0.1 to 100. Default: not written.", show_default=False)] = None,
):
    """Write the corrected surface-temperature image [°C, float32 TIFF] of every thermogram
    (and, with --metric-cm, the same resampled onto a metric grid on the element plane)."""
    import numpy as np
    import tifffile

    from .outputs import staged_folder
    from .stages.correct import correct_view
    from .views import SurveyFolder

    _warn_to_stderr(quiet)
    try:
        s = _load(survey)
        with staged_folder(out, replace) as tmp:
            index = []
            for t in s.thermograms:
                cor = correct_view(SurveyFolder(s).open_view(t), s.elements, s.camera,
                                   s.conditions, s.file.name)
                tifffile.imwrite(tmp / f"{t.id}-surface-c.tif", cor.object_c.astype(np.float32),
                                 compression="zlib", metadata=None)
                entry = {"id": t.id, "file": f"{t.id}-surface-c.tif",
                         "transmittance": float(cor.transmittance),
                         "camera_offset_k": cor.offset.value_k, "unit": "°C"}
                if metric_cm is not None:
                    from .geometry import rectify

                    rec = rectify(cor.object_c, cor.homography, metric_cm)
                    tifffile.imwrite(tmp / f"{t.id}-metric-c.tif", rec.image.astype(np.float32),
                                     compression="zlib", metadata=None)
                    entry["metric"] = {"file": f"{t.id}-metric-c.tif", "cm_per_px": rec.cm_per_px,
                                       "origin_m": list(rec.origin_m), "extent_m": list(rec.extent_m),
                                       "row_0_at_top": not rec.y_down}
                index.append(entry)
                if not quiet:
                    typer.echo(f"corrected {t.id}  (τ = {cor.transmittance:.4f})", err=True)
            (tmp / "corrected.json").write_text(json.dumps(index, indent=2, sort_keys=True) + "\n")
    except SurveyError as exc:
        _fail(exc)
    except KeyboardInterrupt:
        typer.echo("envelope: interrupted; nothing written", err=True)
        raise typer.Exit(EXIT_INTERRUPTED) from None
    if not quiet:
        typer.echo(f"wrote {len(index)} corrected images to {out}")


@app.command()
def assess(
    survey: SurveyArg,
    out: OutOpt,
    replace: ReplaceOpt = False,
    quiet: QuietOpt = False,
    json_out: Annotated[bool, typer.Option("--json", help="Print a summary as JSON on stdout (for scripts) instead of the table. Default: off.", show_default=False)] = False,
    draws: Annotated[int | None, typer.Option("--draws", min=100, help="Monte Carlo draws per element [-], at least 100. Default: analysis.monte_carlo_draws of the survey (20000 when the survey does not set it).", show_default=False)] = None,
    convection: Annotated[Convection | None, typer.Option("--convection", help="Interior convective coefficient h_c [W/(m²·K)]: iso6946 (conventional values) or churchill_chu (natural convection). Default: analysis.interior_convection of the survey (iso6946 when unset).", show_default=False)] = None,
):
    """Assess a survey: corrected temperatures, U-values with 95 % intervals, fRsi and mould/condensation risk, ranked defects, heat loss, retrofit case and the reports."""
    import dataclasses

    from .assess import assess_survey
    from .outputs import staged_folder, write_outputs

    _warn_to_stderr(quiet or json_out)
    try:
        s = _load(survey)
        if draws is not None:
            s = dataclasses.replace(s, analysis=dataclasses.replace(s.analysis, monte_carlo_draws=draws))
        if convection is not None:
            s = dataclasses.replace(s, analysis=dataclasses.replace(
                s.analysis, interior_convection=convection.value))
        steps = len(s.thermograms) * 2 + len(s.series) + 2
        with _Progress(steps, quiet or json_out) as progress, staged_folder(out, replace) as tmp:
            a = assess_survey(s, progress=progress)
            if len(a.failures) == len(s.thermograms) + len(s.series):
                raise SurveyError("no thermogram could be assessed: " + "; ".join(
                    f.error for f in a.failures))
            results = write_outputs(a, tmp, progress)
    except SurveyError as exc:
        _fail(exc)
    except KeyboardInterrupt:
        typer.echo("envelope: interrupted; no output folder written", err=True)
        raise typer.Exit(EXIT_INTERRUPTED) from None
    summary = _summary(results, out)
    if json_out:
        typer.echo(json.dumps(summary, indent=2, sort_keys=True, ensure_ascii=False))
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
    from .report import write_reports

    try:
        res_path = Path(out_dir) / "results.json"
        if not res_path.is_file():
            raise SurveyError("no results.json here; expected a folder written by `envelope assess`", str(out_dir))
        try:
            results = json.loads(res_path.read_text(encoding="utf-8"))
        except (json.JSONDecodeError, UnicodeDecodeError) as exc:
            raise SurveyError(f"not valid JSON ({exc})", str(res_path)) from None
        if results.get("schema") != "envelope-results":
            raise SurveyError("not an envelope results file", str(res_path), "schema")
        write_reports(results, Path(out_dir), Path(out_dir) / "figures", embed=single_file)
    except SurveyError as exc:
        _fail(exc)
    if not quiet:
        typer.echo(f"reports rewritten in {out_dir}")


@app.command()
def outline(
    survey: SurveyArg,
    thermogram: Annotated[str, typer.Argument(help="Id of the thermogram to draw on.", show_default=False)],
    outlines: Annotated[Path | None, typer.Option("--file", help="GeoJSON to write. Default: the thermogram's outlines file.", show_default=False)] = None,
):
    """Draw element outlines and reference zones on a corrected thermogram (opens a window)."""
    from .editor import run_editor
    from .stages.correct import correct_image
    from .survey import load_pixels

    try:
        s = _load(survey)
        try:
            tg = s.thermogram(thermogram)
        except KeyError:
            raise SurveyError(f"no thermogram '{thermogram}'; ids: {', '.join(t.id for t in s.thermograms)}",
                              s.file.name, "thermograms.id") from None
        import numpy as np

        img = load_pixels(tg.file, str(tg.file.relative_to(s.root)))
        eps = np.full(img.shape, tg.emissivity_default or 0.93, np.float32)
        obj = correct_image(img, tg, s.camera, s.conditions, eps, s.file.name)[0]
    except SurveyError as exc:
        _fail(exc)
    try:
        run_editor(obj, outlines or tg.outlines, element_names=tuple(s.elements), title=tg.id)
    except RuntimeError as exc:  # no interactive matplotlib backend (no display)
        _fail(SurveyError(f"cannot open a window here ({exc}); run on a machine with a display"))


def main() -> None:  # pragma: no cover - console entry
    try:
        app()
    except KeyboardInterrupt:
        sys.exit(EXIT_INTERRUPTED)


if __name__ == "__main__":  # pragma: no cover
    main()
