"""Output folders that appear whole or not at all (edge: file system).

Outputs are written into a hidden temporary folder beside the target and moved into place
only when everything is written (SPEC §6): an error or an interruption (SIGINT) leaves no
half-written output folder, and an existing folder is never touched unless replacing it was
asked for.
"""

from __future__ import annotations

import contextlib
import os
import shutil
import tempfile
from pathlib import Path

from .errors import SurveyError


def check_target(out_dir: Path, replace: bool = False) -> None:
    """Refuse an output folder that exists and is not empty (unless `replace`)."""
    out_dir = Path(out_dir)
    if out_dir.exists() and not out_dir.is_dir():
        raise SurveyError("output path exists and is not a folder", str(out_dir), "--out")
    if out_dir.exists() and any(out_dir.iterdir()) and not replace:
        raise SurveyError("output folder exists and is not empty; choose a new one or pass "
                          "--replace", str(out_dir), "--out")


@contextlib.contextmanager
def staged_folder(out_dir: str | Path, replace: bool = False):
    """Yield a temporary folder; on success move it to `out_dir`, on any failure delete it.

    Examples
    --------
    >>> with staged_folder("out") as tmp:          # doctest: +SKIP
    ...     (tmp / "results.json").write_text("{}")
    """
    out_dir = Path(out_dir).absolute()
    check_target(out_dir, replace)
    out_dir.parent.mkdir(parents=True, exist_ok=True)
    tmp = Path(tempfile.mkdtemp(prefix=f".{out_dir.name}.partial-", dir=out_dir.parent))
    try:
        yield tmp
    except BaseException:
        shutil.rmtree(tmp, ignore_errors=True)
        raise
    old = None
    if out_dir.exists():
        old = out_dir.with_name(f".{out_dir.name}.old-{os.getpid()}")
        out_dir.rename(old)
    try:
        tmp.rename(out_dir)
    except BaseException:
        if old is not None:
            old.rename(out_dir)
        shutil.rmtree(tmp, ignore_errors=True)
        raise
    if old is not None:
        shutil.rmtree(old, ignore_errors=True)


def write_figures(assessment, out_dir: Path, progress=None) -> None:
    """PNG figures of every thermogram into ``out_dir/figures`` (paths of `results.figure_paths`)."""
    from .plots.common import image_axes, save
    from .plots.defects import defects_figure
    from .plots.frsi import frsi_figure
    from .plots.overlay import overlay_figure
    from .plots.umap import u_map_figure
    from .results import figure_paths

    limit = assessment.limit_mould
    for t in assessment.views:
        tg = t.thermogram
        paths = figure_paths(tg.id, tg.side, t.status)
        if not paths:
            continue
        title = f"{tg.id} ({tg.side}) — corrected surface temperature"
        fig, _ = image_axes(t.object_c, title=title)
        save(fig, out_dir / paths["corrected"])
        if "overlay" in paths:
            overlay_figure(t.object_c, t.regions, out_dir / paths["overlay"],
                           title=f"{tg.id} — elements and reference zones")
            defects_figure(t.object_c, [d for d in assessment.defects if d.thermogram == tg.id],
                           out_dir / paths["defects"], regions=t.regions,
                           title=f"{tg.id} — defects, numbered by rank")
        if "u_map" in paths:
            u_map_figure(t.u_map_w_m2k, t.regions, out_dir / paths["u_map"],
                         title=f"{tg.id} — U per pixel ({tg.side} method)")
        if "frsi" in paths:
            frsi_figure(t.frsi, out_dir / paths["frsi"], limit=limit,
                        title=f"{tg.id} — temperature factor fRsi",
                        outlines=[r.polygon_net for r in t.regions.values()])
        if progress:
            progress("figures")
    import dataclasses

    from .plots.series import series_figure

    for sr in assessment.series:
        series_figure(dataclasses.asdict(sr), out_dir / f"figures/series-{sr.id}.png")


def write_outputs(assessment, out_dir: Path, progress=None) -> dict:
    """Everything of `envelope assess` into `out_dir` (normally a staged folder)."""
    from .report import write_reports
    from .results import to_results, write_tables

    out_dir = Path(out_dir)
    results = to_results(assessment)
    write_tables(results, out_dir)
    if progress:
        progress("tables")
    write_figures(assessment, out_dir, progress)
    write_reports(results, out_dir, out_dir / "figures")
    if progress:
        progress("reports")
    return results
