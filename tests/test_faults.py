"""Every fault a one-line error with exit 2; outputs safe to open; bounded resources;
survey text never parsed as math (issue 12).

File-system faults that need privileges (disk full, read-only, permission denied as root) are
simulated by patching the write calls, as the issue allows; a parent that is a file and a
path too long are real. Each command-line case asserts the exit code, the message (path and
field), byte-identical inputs and nothing left beside --out. The expectations are the rules
of issue 12 and SPEC §6; the formula characters are those of the OWASP "CSV Injection" page.
"""

from __future__ import annotations

import csv
import errno
import io
import json
import os
import re
from pathlib import Path

import pytest
from conftest import SURVEY_TOML, outlines_geojson, write_survey
from safety_support import DRAWS, cli, digest, error_line, names, shared_output

from envelope.cli import DRAWS_RANGE
from envelope.errors import SurveyError
from envelope.faults import terminal_json, terminal_text
from envelope.outputs import neutralise_cell

# --------------------------------------------------------------------------------------
# file-system faults
# --------------------------------------------------------------------------------------


def _fail_paths(monkeypatch, module, name, err, match, with_filename=True):
    """Make ``module.name(path, ...)`` raise OSError(`err`) for paths containing `match`."""
    real = getattr(module, name)

    def fake(path, *args, **kwargs):
        if match in str(path):
            raise OSError(err, os.strerror(err), str(path) if with_filename else None)
        return real(path, *args, **kwargs)

    monkeypatch.setattr(module, name, fake)


def _refused(res, tmp_path, inputs_before, survey_dir, *expected) -> str:
    assert res.exit_code == 2, res.output
    line = error_line(res)
    for part in expected:
        assert part in line, line
    assert digest(survey_dir) == inputs_before
    assert names(tmp_path) == ["survey"], names(tmp_path)
    return line


@pytest.mark.parametrize("command", ["assess", "correct", "rerender"])
@pytest.mark.parametrize("call, err, words", [
    ("mkdir", errno.EACCES, "permission denied; "),
    ("open", errno.EROFS, "read-only file system; "),
    ("open", errno.ENOSPC, "disk full; free some space"),
    ("mkdir", errno.EDQUOT, "disk quota exceeded; free some space"),
])
def test_fault_at_the_start_is_one_line(assessed, survey_dir, tmp_path, monkeypatch, command,
                                        call, err, words):
    """The staging folder (mkdir) or the lock (open) beside the output cannot be written."""
    out = tmp_path / "out"
    if command == "rerender":
        import shutil

        shutil.copytree(assessed, out)
        args, field = ("rerender", out, "--quiet"), ""
    else:
        extra = DRAWS if command == "assess" else ()
        args, field = (command, survey_dir, "--out", out, "--quiet", *extra), "--out: "
    watched = out if command == "rerender" else survey_dir
    before = digest(watched)
    _fail_paths(monkeypatch, os, call, err, str(tmp_path / ".out."))
    res = cli(*args)
    assert res.exit_code == 2, res.output
    assert f"{out}: {field}{words}" in error_line(res)
    assert digest(watched) == before
    assert names(tmp_path) == (["out", "survey"] if command == "rerender" else ["survey"])


def test_disk_full_while_writing_figures(survey_dir, tmp_path, monkeypatch):
    import PIL.Image

    def save(self, *args, **kwargs):
        raise OSError(errno.ENOSPC, "No space left on device")  # a failed write(): no file name

    monkeypatch.setattr(PIL.Image.Image, "save", save)  # figures are written through Pillow
    inputs = digest(survey_dir)
    out = tmp_path / "out"
    res = cli("assess", survey_dir, "--out", out, "--quiet", *DRAWS)
    _refused(res, tmp_path, inputs, survey_dir, f"{out}: --out: disk full; free some space")


@pytest.mark.parametrize("with_filename", [True, False])
def test_disk_full_writing_the_index(survey_dir, tmp_path, monkeypatch, with_filename):
    real = Path.write_text

    def write_text(self, *args, **kwargs):
        if self.name == "corrected.json":
            raise OSError(errno.ENOSPC, "No space left on device",
                          str(self) if with_filename else None)
        return real(self, *args, **kwargs)

    monkeypatch.setattr(Path, "write_text", write_text)
    inputs = digest(survey_dir)
    out = tmp_path / "out"
    res = cli("correct", survey_dir, "--out", out, "--quiet")
    named = out / "corrected.json" if with_filename else out  # as the user knows it
    line = _refused(res, tmp_path, inputs, survey_dir, f"{named}: --out: disk full")
    assert ".partial-" not in line


def test_permission_denied_creating_the_output(survey_dir, tmp_path, monkeypatch):
    _fail_paths(monkeypatch, os, "mkdir", errno.EACCES, str(tmp_path / "new"))
    inputs = digest(survey_dir)
    res = cli("correct", survey_dir, "--out", tmp_path / "new" / "out", "--quiet")
    _refused(res, tmp_path, inputs, survey_dir, f"{tmp_path / 'new'}: --out: permission denied; "
             "choose an --out in a folder you can write to")


def test_read_only_file_system(survey_dir, tmp_path, monkeypatch):
    _fail_paths(monkeypatch, os, "open", errno.EROFS, str(tmp_path / ".out."))
    inputs = digest(survey_dir)
    out = tmp_path / "out"
    res = cli("correct", survey_dir, "--out", out, "--quiet")
    _refused(res, tmp_path, inputs, survey_dir,
             f"{out}: --out: read-only file system; choose an --out on a writable disk")


def test_parent_is_a_file(survey_dir, tmp_path):
    blocker = tmp_path / "notes.txt"
    blocker.write_text("not a folder\n")
    inputs = digest(survey_dir)
    out = blocker / "out"
    res = cli("assess", survey_dir, "--out", out, "--quiet", *DRAWS)
    assert res.exit_code == 2, res.output
    assert f"{out}: --out: a part of this path is a file, not a folder" in error_line(res)
    assert blocker.read_text() == "not a folder\n"
    assert names(tmp_path) == ["notes.txt", "survey"] and digest(survey_dir) == inputs


def test_name_too_long(survey_dir, tmp_path):
    inputs = digest(survey_dir)
    out = tmp_path / ("x" * 250)
    res = cli("correct", survey_dir, "--out", out, "--quiet")
    _refused(res, tmp_path, inputs, survey_dir, "--out: path or file name too long",
             "choose a shorter path")


def test_path_too_long_leaves_no_folders_behind(survey_dir, tmp_path):
    inputs = digest(survey_dir)
    deep = tmp_path.joinpath(*(["d" * 200] * 25)) / "out"  # > PATH_MAX (4096) on Linux
    res = cli("correct", survey_dir, "--out", deep, "--quiet")
    _refused(res, tmp_path, inputs, survey_dir, "--out: path or file name too long")


def test_final_move_failing_leaves_nothing(survey_dir, tmp_path, monkeypatch):
    _fail_paths(monkeypatch, os, "rename", errno.EIO, ".out.partial-")
    inputs = digest(survey_dir)
    out = tmp_path / "out"
    res = cli("correct", survey_dir, "--out", out, "--quiet")
    _refused(res, tmp_path, inputs, survey_dir, f"{out}: --out: input/output error of the disk")


def test_unreadable_survey_file(survey_dir, tmp_path, monkeypatch):
    inputs = digest(survey_dir)
    _fail_paths(monkeypatch, Path, "read_text", errno.EACCES, "survey.toml")
    _fail_paths(monkeypatch, Path, "read_bytes", errno.EACCES, "survey.toml")
    res = cli("assess", survey_dir, "--out", tmp_path / "out", "--quiet", *DRAWS)
    monkeypatch.undo()
    _refused(res, tmp_path, inputs, survey_dir, "survey.toml", "ermission denied")


def test_survey_file_that_is_a_folder(tmp_path):
    root = write_survey(tmp_path / "survey")
    (root / "survey.toml").unlink()
    (root / "survey.toml").mkdir()
    inputs = digest(root)
    res = cli("assess", root, "--out", tmp_path / "out", "--quiet", *DRAWS)
    _refused(res, tmp_path, inputs, root, "survey.toml")


def test_unexpected_failure_is_one_line(survey_dir, tmp_path, monkeypatch):
    def broken(*args, **kwargs):
        raise TypeError("SECRET-BYTES")

    import envelope.stages.correct as stage

    monkeypatch.setattr(stage, "correct_view", broken)
    inputs = digest(survey_dir)
    res = cli("correct", survey_dir, "--out", tmp_path / "out", "--quiet")
    line = _refused(res, tmp_path, inputs, survey_dir, "unexpected TypeError at test_faults.py:",
                    "nothing written", "bug of envelope")
    assert "SECRET" not in line  # the exception's text may hold bytes of an input: not echoed


@pytest.fixture(scope="module")
def assessed(tmp_path_factory):
    return shared_output(tmp_path_factory)[1]


def test_rerender_disk_full_keeps_the_old_reports(assessed, tmp_path, monkeypatch):
    import shutil

    out = Path(shutil.copytree(assessed, tmp_path / "out"))
    before = digest(out)
    real = Path.write_text

    def write_text(self, *args, **kwargs):
        if self.name == "check.html":
            raise OSError(errno.ENOSPC, "No space left on device")
        return real(self, *args, **kwargs)

    monkeypatch.setattr(Path, "write_text", write_text)
    res = cli("rerender", out, "--quiet")
    assert res.exit_code == 2, res.output
    assert f"{out}: disk full; free some space or move the output folder" in error_line(res)
    assert digest(out) == before
    assert names(tmp_path) == ["out"]


@pytest.mark.parametrize("name", ["results.json", "report.html"])
def test_folder_where_a_file_is_expected(assessed, tmp_path, name):
    import shutil

    out = Path(shutil.copytree(assessed, tmp_path / "out"))
    (out / name).unlink()
    (out / name).mkdir()
    before = digest(out)
    res = cli("rerender", out, "--quiet")
    assert res.exit_code == 2, res.output
    line = error_line(res)
    assert f"{out / name}:" in line
    assert ("is not a regular file" if name == "results.json" else "not overwritten") in line
    assert digest(out) == before and names(tmp_path) == ["out"]


# --------------------------------------------------------------------------------------
# outputs safe to open
# --------------------------------------------------------------------------------------

HOSTILE_MEASURES = ("=HYPERLINK(\"http://example.invalid\",\"x\")", "+1+1", "-2+3",
                    "@SUM(A1:A2)", "Loft $\\frac{1}{$ insulation")


@pytest.fixture(scope="module")
def hostile(tmp_path_factory):
    """A survey whose retrofit measures carry spreadsheet formulas and broken math."""
    base = tmp_path_factory.mktemp("hostile")
    measure = SURVEY_TOML[SURVEY_TOML.index("[[measures]]"):]
    text = SURVEY_TOML[: SURVEY_TOML.index("[[measures]]")] + "".join(
        measure.replace('"Insulate the wall"', json.dumps(n)) for n in HOSTILE_MEASURES)
    root = write_survey(base / "survey", text)
    inputs = digest(root)
    res = cli("assess", root, "--out", base / "out", "--quiet", *DRAWS)
    return root, base / "out", res, inputs


def test_csv_formula_cells_are_neutralised(hostile):
    root, out, res, inputs = hostile
    assert res.exit_code == 0, res.output
    rows = list(csv.DictReader(io.StringIO((out / "measures.csv").read_text(encoding="utf-8"))))
    got = {r["name"] for r in rows}
    for name in HOSTILE_MEASURES[:4]:
        assert "'" + name in got, got
    assert HOSTILE_MEASURES[4] in got  # not a formula: unchanged
    for r in rows:
        float(r["cost"])  # numbers stay numbers
    assert digest(root) == inputs
    # results.json keeps the names as typed: only the CSV cells are neutralised
    r = json.loads((out / "results.json").read_text(encoding="utf-8"))
    assert {m["name"] for m in r["measures"]} == set(HOSTILE_MEASURES)


def test_negative_numbers_stay_numbers_in_csv(hostile):
    _, out, res, _ = hostile
    assert res.exit_code == 0, res.output
    rows = list(csv.DictReader(io.StringIO((out / "elements.csv").read_text(encoding="utf-8"))))
    values = [r["u_low95_w_m2k"] for r in rows] + [r["u_w_m2k"] for r in rows]
    assert all(re.fullmatch(r"-?[0-9.eE+-]+", v) for v in values), values
    assert not any(v.startswith("'") for r in rows for v in r.values())


def test_dollar_in_a_name_prints_as_is(hostile):
    """The savings chart labels each measure by name; '$\\frac{1}{$' would not parse as math."""
    _, out, res, _ = hostile
    assert res.exit_code == 0, res.output
    assert (out / "figures" / "savings.png").stat().st_size > 0


def test_figure_text_is_never_mathtext(tmp_path):
    from envelope.plots.common import new_figure, save

    fig = new_figure(60.0, 40.0)
    ax = fig.add_subplot()
    ax.set_title("wall $\\frac{1}{$ north")
    label = ax.text(0, 0, "$\\undefined$")
    save(fig, tmp_path / "f.png")  # would raise ValueError on a mathtext parse
    assert ax.title.get_parse_math() is False and label.get_parse_math() is False
    assert ax.title.get_text() == "wall $\\frac{1}{$ north"


@pytest.mark.parametrize("value, expected", [
    ("=1+1", "'=1+1"), ("+1", "'+1"), ("-1+1", "'-1+1"), ("@SUM(A1)", "'@SUM(A1)"),
    ("\tx", "'\tx"), ("\rx", "'\rx"), ("wall", "wall"), ("", ""), (-0.5, -0.5), (3, 3),
    (None, None), (True, True),
])
def test_neutralise_cell(value, expected):
    assert neutralise_cell(value) == expected


@pytest.mark.parametrize("value, expected", [
    ("wall\x1b[2J\x1b]0;title\x07", "wall[2J]0;title"),  # ESC and BEL removed
    ("csi\x9b31m", "csi31m"),  # C1 control (8-bit CSI)
    ("abc\u202edcba", "abcdcba"),  # right-to-left override
    ("two\nlines\tand tab", "two lines and tab"),
    ("nul\x00byte\x7f", "nulbyte"),
    ("x" * 500, "x" * 119 + "…"),
])
def test_terminal_text(value, expected):
    assert terminal_text(value) == expected


def test_terminal_json_round_trips_without_raw_controls():
    obj = {"name": "wall\x1b[31m\x9b\u202e\u00e9"}
    text = terminal_json(obj)
    assert not re.search("[\x00-\x1f\x7f-\x9f\u202e]", text.replace("\n", ""))
    assert json.loads(text) == obj


def test_control_characters_in_paths_never_reach_the_terminal(survey_dir, tmp_path):
    out = tmp_path / "out\x1b]0;pwned\x07\x1b[2J"
    inputs = digest(survey_dir)
    res = cli("correct", survey_dir, "--out", out)
    assert res.exit_code == 0, res.output
    assert "wrote 1 corrected images to" in res.output
    res = cli("correct", survey_dir, "--out", out)  # now not empty: the error names it
    assert res.exit_code == 2
    line = error_line(res)
    assert "output folder exists and is not empty" in line
    assert not re.search("[\x00-\x1f\x7f-\x9f]", res.output.replace("\n", ""))
    assert digest(survey_dir) == inputs and names(tmp_path) == sorted(["survey", out.name])


def test_control_characters_in_names_never_reach_the_terminal(tmp_path):
    evil = "wall\x1b[2J\x1b]0;pwned\x07\u202e"
    root = write_survey(tmp_path / "survey", SURVEY_TOML.replace('"test-wall"', json.dumps(evil)))
    geo = outlines_geojson()
    for f in geo["features"]:
        if f["properties"]["element"] == "test-wall":
            f["properties"]["element"] = evil
    (root / "outlines" / "room-north.geojson").write_text(json.dumps(geo))
    inputs = digest(root)
    res = cli("assess", root, "--out", tmp_path / "out", *DRAWS)
    # the loader may refuse such a name (exit 2 naming survey.toml) or keep it (exit 0):
    # either way no control character reaches the terminal
    if res.exit_code == 2:
        assert "survey.toml" in error_line(res)
    else:
        assert res.exit_code == 0, res.output
        assert "wall[2J]0;pwned" in res.output
    assert not re.search("[\x00-\x1f\x7f-\x9f\u202e]", res.output.replace("\n", ""))
    assert digest(root) == inputs


# --------------------------------------------------------------------------------------
# bounded resources
# --------------------------------------------------------------------------------------


@pytest.mark.parametrize("draws", ["50000000", "1000001", "99", "0", "-5"])
def test_draws_outside_the_survey_range_are_refused(survey_dir, tmp_path, draws):
    inputs = digest(survey_dir)
    res = cli("assess", survey_dir, "--out", tmp_path / "out", "--quiet", "--draws", draws)
    _refused(res, tmp_path, inputs, survey_dir, "--draws:", "outside 100…1000000",
             "analysis.monte_carlo_draws")


@pytest.mark.parametrize("draws, ok", [(DRAWS_RANGE[1], True), (DRAWS_RANGE[1] + 1, False),
                                       (DRAWS_RANGE[0], True), (DRAWS_RANGE[0] - 1, False)])
def test_draws_cap_matches_the_survey_key(tmp_path, draws, ok):
    from envelope.survey import load_survey

    text = SURVEY_TOML.replace("monte_carlo_draws = 2000", f"monte_carlo_draws = {draws}")
    root = write_survey(tmp_path / "survey", text)
    if ok:
        assert load_survey(root).analysis.monte_carlo_draws == draws
    else:
        with pytest.raises(SurveyError, match="monte_carlo_draws"):
            load_survey(root)


# --------------------------------------------------------------------------------------
# the command as a process
# --------------------------------------------------------------------------------------


def test_python_dash_m_runs_the_command_line(tmp_path):
    """``python -m envelope`` is the command line: real exit codes, one line, no traceback."""
    import subprocess
    import sys

    env = {k: v for k, v in os.environ.items() if k != "ENVELOPE_DEBUG"}
    env["PYTHONPATH"] = os.pathsep.join([str(Path(__file__).resolve().parents[1]),
                                         env.get("PYTHONPATH", "")])
    ok = subprocess.run([sys.executable, "-m", "envelope", "--version"], capture_output=True,
                        text=True, env=env, cwd=tmp_path)
    assert ok.returncode == 0 and ok.stdout.startswith("envelope "), ok.stderr
    bad = subprocess.run([sys.executable, "-m", "envelope", "assess", str(tmp_path / "none"),
                          "--out", str(tmp_path / "out")], capture_output=True, text=True,
                         env=env, cwd=tmp_path)
    assert bad.returncode == 2
    assert bad.stderr.splitlines() == [
        f"envelope: error: {tmp_path / 'none'}: survey folder does not exist; start one with "
        "`envelope init SURVEY --from EXPORTS`"]
    assert names(tmp_path) == []
