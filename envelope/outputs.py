"""Writing the outputs of a run (edge: file system): tables, figures, reports.

Everything is written into a staging folder (`envelope.folders.staged_folder`) that is moved
into place only when complete (SPEC §6). CSV text cells that a spreadsheet would run as a
formula are neutralised here; numbers stay numbers. Every file name built from an
identifier is checked to stay inside the output folder.
"""

from __future__ import annotations

import os
import shutil
from pathlib import Path, PurePosixPath

from .errors import SurveyError
from .folders import refreshed_folder, staged_folder
from .interrupts import Interrupted, Interrupts
from .results import defects_table, dumps, elements_table, measures_table

__all__ = [
    "FORMULA_START",
    "REPORT_FILES",
    "Interrupted",
    "Interrupts",
    "inside",
    "neutralise_cell",
    "rerender_reports",
    "staged_folder",
    "write_figures",
    "write_outputs",
    "write_tables",
]

REPORT_FILES = ("report.html", "check.html", "summary.html", "summary.pdf",
                "figures/heat-loss.png", "figures/savings.png")
"""Files `envelope.report.write_reports` writes, relative to the output folder."""

FORMULA_START = ("=", "+", "-", "@", "\t", "\r")
"""First characters that make a spreadsheet read a text cell as a formula (OWASP, "CSV
Injection"); such cells get a leading apostrophe."""


def neutralise_cell(value):
    """A CSV cell a spreadsheet shows as text: text starting with `FORMULA_START` gets a
    leading ``'``; numbers, booleans and missing values are returned unchanged.

    Examples
    --------
    >>> neutralise_cell("=HYPERLINK(\\"x\\")"), neutralise_cell(-0.5), neutralise_cell("wall")
    ('\\'=HYPERLINK("x")', -0.5, 'wall')
    """
    if isinstance(value, str) and value.startswith(FORMULA_START):
        return "'" + value
    return value


def inside(folder: Path, rel: str) -> Path:
    """``folder / rel``, refused unless it stays inside `folder` (no ``..``, not absolute)."""
    p = PurePosixPath(rel)
    if p.is_absolute() or any(part in ("", ".", "..") for part in p.parts) or "\\" in rel \
            or "\x00" in rel:
        raise SurveyError("a file name built from this identifier would leave the output "
                          "folder; use letters, digits, '-', '_' and '.' only", rel)
    return Path(folder).joinpath(*p.parts)


def write_tables(results: dict, out_dir: Path) -> None:
    """``results.json``, ``elements.csv``, ``defects.csv``, ``measures.csv`` in `out_dir`.

    Text cells of the CSV tables pass through `neutralise_cell`; numeric columns are written
    as numbers (6 significant digits).
    """
    from pandas.api.types import is_bool_dtype, is_numeric_dtype

    out_dir = Path(out_dir)
    (out_dir / "results.json").write_text(dumps(results), encoding="utf-8")
    for name, table in (("elements", elements_table), ("defects", defects_table),
                        ("measures", measures_table)):
        frame = table(results)
        for col in frame.columns:
            if not (is_numeric_dtype(frame[col]) or is_bool_dtype(frame[col])):
                frame[col] = frame[col].map(neutralise_cell)
        frame.to_csv(out_dir / f"{name}.csv", index=False, float_format="%.6g",
                     lineterminator="\n")


def write_figures(assessment, out_dir: Path, progress=None) -> None:
    """PNG figures of every view and series into ``out_dir/figures`` (`plots.plan`)."""
    from .plots.draw import draw_figures

    draw_figures(assessment, out_dir, progress)


def write_outputs(assessment, out_dir: Path, progress=None) -> dict:
    """Everything of `envelope assess` into `out_dir` (normally a staged folder)."""
    from .report import write_reports
    from .results import to_results

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


def rerender_reports(out_dir: str | Path, hold=None, embed: bool = False) -> dict:
    """Rewrite the reports of an output folder from its ``results.json`` (no recomputing).

    The results are checked (`envelope.results_file.read_results`); the figures they name are
    embedded only from inside ``out_dir/figures``; the new reports replace the old ones file
    by file, and only files this tool wrote (`envelope.folders.refreshed_folder`). With
    `embed` the figures are embedded in the pages (each page stands alone).

    Returns
    -------
    dict
        The results read.
    """
    from .report import write_reports
    from .results_file import checked_figures, read_results

    out_dir = Path(out_dir)
    results = read_results(out_dir)
    figures = checked_figures(results, out_dir)
    with refreshed_folder(out_dir, hold=hold, expected=REPORT_FILES) as tmp:
        for rel in figures:  # read-only copies for the lookup; unchanged, so not written back
            dst = tmp.joinpath(*rel.parts)
            dst.parent.mkdir(parents=True, exist_ok=True)
            with open(out_dir.joinpath(*rel.parts), "rb", opener=_no_follow) as src, \
                    open(dst, "wb") as f:
                shutil.copyfileobj(src, f)
        write_reports(results, tmp, tmp / "figures", embed=embed)
    return results


def _no_follow(path, flags):
    return os.open(path, flags | getattr(os, "O_NOFOLLOW", 0))
