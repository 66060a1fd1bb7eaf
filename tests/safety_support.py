"""Helpers of the output-safety and fault tests (tests/test_outputs.py, tests/test_faults.py).

Every command-line case checks four things: the exit code, the one-line message (file and
field), that the inputs are byte-identical afterwards and that nothing is left beside the
output folder.
"""

from __future__ import annotations

import hashlib
import os
import shutil
import stat
from pathlib import Path

from typer.testing import CliRunner

from envelope.cli import app

runner = CliRunner()
DRAWS = ("--draws", "200")  # few Monte Carlo draws: these tests check files, not numbers


def cli(*args):
    """Run the command line in-process with `args` (paths turned into strings)."""
    return runner.invoke(app, [str(a) for a in args])


def digest(root: Path) -> dict:
    """Every entry under `root` (itself included): content hash, link target or 'dir', and mode."""
    root = Path(root)
    out = {}
    for dirpath, dirnames, filenames in os.walk(root):
        for name in [".", *dirnames, *filenames]:
            p = Path(dirpath) / name if name != "." else Path(dirpath)
            rel = p.relative_to(root).as_posix()
            st = os.lstat(p)
            if stat.S_ISLNK(st.st_mode):
                what = "link:" + os.readlink(p)
            elif stat.S_ISDIR(st.st_mode):
                what = "dir"
            else:
                what = hashlib.sha256(p.read_bytes()).hexdigest()
            out[rel] = (what, stat.S_IMODE(st.st_mode))
    return out


def names(folder: Path) -> list[str]:
    """Sorted entries of `folder` (hidden ones too)."""
    return sorted(os.listdir(folder))


def error_line(res) -> str:
    """The single error line of a failed run; fails on a traceback or a multi-line error."""
    assert "Traceback" not in res.output, res.output
    assert res.exception is None or isinstance(res.exception, SystemExit), repr(res.exception)
    lines = [ln for ln in res.output.splitlines() if ln.startswith("envelope: error:")]
    assert len(lines) == 1, res.output
    return lines[0]


_SHARED: dict = {}


def shared_output(tmp_path_factory) -> tuple[Path, Path]:
    """``(survey, out)``: the test survey assessed once per test session (read or copy only)."""
    if "assessed" not in _SHARED:
        from conftest import write_survey

        base = tmp_path_factory.mktemp("assessed")
        root = write_survey(base / "survey")
        res = cli("assess", root, "--out", base / "out", "--quiet", *DRAWS)
        assert res.exit_code == 0, res.output
        _SHARED["assessed"] = (root, base / "out")
    return _SHARED["assessed"]


def copy_output(src: Path, dst: Path) -> Path:
    """A private copy of a shared output folder (links kept as links)."""
    shutil.copytree(src, dst, symlinks=True)
    return dst
