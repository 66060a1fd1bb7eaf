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
    """PNG figures of every view and series into ``out_dir/figures`` (`plots.plan`)."""
    from .plots.draw import draw_figures

    draw_figures(assessment, out_dir, progress)


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
