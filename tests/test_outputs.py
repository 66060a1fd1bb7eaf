"""Output folders that cannot hurt inputs: refused targets, --replace, the lock, leftovers of
killed runs, signals, umask and `rerender` (issue 12).

Each command-line case asserts the exit code, the one-line message (file and field), that the
survey tree is byte-identical afterwards and that nothing is left beside --out. The survey is
the synthetic one of tests/conftest.py; `correct` (no Monte Carlo) is used where the command
does not matter, `assess` with 200 draws where it does. The expectations are the rules of
issue 12 and SPEC §6, not physics.
"""

from __future__ import annotations

import json
import os
import signal
import socket
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest
from conftest import SURVEY_TOML, readings, write_survey
from safety_support import DRAWS, cli, copy_output, digest, error_line, names, shared_output

import envelope.assess
import envelope.folders
from envelope.interrupts import Interrupted, Interrupts
from envelope.manifest import MANIFEST, PARTIAL_MARKER, read_manifest, strangers


@pytest.fixture(scope="module")
def assessed(tmp_path_factory):
    """One assessed output folder shared by the tests that only read or copy it."""
    return shared_output(tmp_path_factory)


def _dead_pid() -> int:
    proc = subprocess.Popen([sys.executable, "-c", "pass"])
    proc.wait()
    return proc.pid


# --------------------------------------------------------------------------------------
# --out overlapping the survey
# --------------------------------------------------------------------------------------


def test_replace_never_deletes_the_survey_when_out_is_the_survey(survey_dir, tmp_path):
    before = digest(survey_dir)
    res = cli("assess", survey_dir, "--out", survey_dir, "--replace", "--quiet", *DRAWS)
    assert res.exit_code == 2, res.output
    line = error_line(res)
    assert f"{survey_dir}: --out: the output folder is the input folder" in line
    assert digest(survey_dir) == before
    assert names(tmp_path) == ["survey"]


def test_out_as_parent_of_survey_is_refused(survey_dir, tmp_path):
    before = digest(survey_dir)
    res = cli("assess", survey_dir, "--out", tmp_path, "--replace", "--quiet", *DRAWS)
    assert res.exit_code == 2, res.output
    assert "--out: the output folder contains the input folder" in error_line(res)
    assert digest(survey_dir) == before
    assert names(tmp_path) == ["survey"]


def test_out_dot_from_the_parent_is_refused(survey_dir, tmp_path, monkeypatch):
    monkeypatch.chdir(tmp_path)
    before = digest(survey_dir)
    res = cli("assess", "survey", "--out", ".", "--replace", "--quiet", *DRAWS)
    assert res.exit_code == 2, res.output
    line = error_line(res)
    assert line.startswith("envelope: error: .: --out: the output folder contains the input")
    assert digest(survey_dir) == before
    assert names(tmp_path) == ["survey"]


@pytest.mark.parametrize("command", ["assess", "correct"])
@pytest.mark.parametrize("where", ["inside", "inside-via-link", "link-to-survey", "dotdot"])
def test_out_overlapping_the_survey_is_refused(survey_dir, tmp_path, command, where):
    link = tmp_path / "link"
    if where == "inside":
        out = survey_dir / "thermograms" / "out"
    elif where == "inside-via-link":
        link.symlink_to(survey_dir, target_is_directory=True)
        out = link / "out"
    elif where == "link-to-survey":
        link.symlink_to(survey_dir, target_is_directory=True)
        out = link
    else:  # the survey written the long way round
        out = survey_dir / "outlines" / ".."
    before = digest(survey_dir)
    extra = DRAWS if command == "assess" else ()
    res = cli(command, survey_dir, "--out", out, "--replace", "--quiet", *extra)
    assert res.exit_code == 2, res.output
    line = error_line(res)
    assert f"{out}: --out: the output folder" in line and str(survey_dir) in line
    assert digest(survey_dir) == before
    assert names(tmp_path) == (["link", "survey"] if link.is_symlink() else ["survey"])


def test_out_inside_the_folder_of_a_linked_input_is_refused(survey_dir, tmp_path):
    """A thermogram linked from an exports folder makes that folder an input too."""
    exports = tmp_path / "exports"
    exports.mkdir()
    npy = survey_dir / "thermograms" / "room-north.npy"
    (exports / "room-north.npy").write_bytes(npy.read_bytes())
    npy.unlink()
    npy.symlink_to(exports / "room-north.npy")
    before, inputs = digest(exports), digest(survey_dir)
    res = cli("correct", survey_dir, "--out", exports / "out", "--quiet")
    assert res.exit_code == 2, res.output
    line = error_line(res)
    # refused here as an output inside an input folder, or by the loader as a link leaving
    # the survey: either way nothing is written
    assert f"{exports / 'out'}: --out: the output folder lies inside the input folder" in line \
        or "room-north.npy" in line, line
    assert digest(exports) == before and digest(survey_dir) == inputs
    assert names(tmp_path) == ["exports", "survey"]


def test_out_that_is_a_file_is_refused(survey_dir, tmp_path):
    target = tmp_path / "out"
    target.write_text("my notes\n")
    before = digest(tmp_path)
    res = cli("correct", survey_dir, "--out", target, "--replace", "--quiet")
    assert res.exit_code == 2, res.output
    assert f"{target}: --out: exists and is not a folder" in error_line(res)
    assert digest(tmp_path) == before


# --------------------------------------------------------------------------------------
# existing output folders and --replace
# --------------------------------------------------------------------------------------


def test_existing_out_is_never_touched_without_replace(survey_dir, tmp_path):
    out = tmp_path / "out"
    out.mkdir()
    (out / "mine.txt").write_text("keep me\n")
    before = digest(tmp_path)
    res = cli("correct", survey_dir, "--out", out, "--quiet")
    assert res.exit_code == 2, res.output
    line = error_line(res)
    assert f"{out}: --out: output folder exists and is not empty" in line and "--replace" in line
    assert digest(tmp_path) == before


def test_user_file_in_out_survives_replace(assessed, survey_dir, tmp_path):
    out = copy_output(assessed[1], tmp_path / "out")
    (out / "notes.txt").write_text("site visit notes\n")
    before, inputs = digest(tmp_path), digest(survey_dir)
    res = cli("correct", survey_dir, "--out", out, "--replace", "--quiet")
    assert res.exit_code == 2, res.output
    line = error_line(res)
    assert f"{out}: --out: not replaced" in line and "notes.txt" in line
    assert digest(tmp_path) == before and digest(survey_dir) == inputs


def test_replace_refuses_a_folder_envelope_did_not_write(assessed, survey_dir, tmp_path):
    out = copy_output(assessed[1], tmp_path / "out")
    (out / MANIFEST).unlink()  # an earlier output without its manifest looks like any folder
    before = digest(tmp_path)
    res = cli("correct", survey_dir, "--out", out, "--replace", "--quiet")
    assert res.exit_code == 2, res.output
    assert f"--out: not replaced: this folder was not written by envelope (no valid {MANIFEST})" \
        in error_line(res)
    assert digest(tmp_path) == before


def test_replace_never_deletes_a_file_changed_since_it_was_written(assessed, survey_dir, tmp_path):
    out = copy_output(assessed[1], tmp_path / "out")
    with open(out / "report.html", "a", encoding="utf-8") as f:
        f.write("<!-- my remarks -->\n")
    before = digest(tmp_path)
    res = cli("correct", survey_dir, "--out", out, "--replace", "--quiet")
    assert res.exit_code == 2, res.output
    assert "report.html (changed)" in error_line(res)
    assert digest(tmp_path) == before


def test_forged_manifest_cannot_reach_the_survey(survey_dir, tmp_path):
    """A manifest naming ../survey/survey.toml (with its true hash) does not make it ours."""
    import hashlib

    out = tmp_path / "out"
    out.mkdir()
    toml_hash = hashlib.sha256((survey_dir / "survey.toml").read_bytes()).hexdigest()
    (out / MANIFEST).write_text(json.dumps({
        "format": "envelope-output", "version": 1, "command": "assess", "folders": [],
        "files": {"../survey/survey.toml": toml_hash}}))
    before, inputs = digest(tmp_path / "out"), digest(survey_dir)
    res = cli("correct", survey_dir, "--out", out, "--replace", "--quiet")
    assert res.exit_code == 2, res.output
    assert "not written by envelope" in error_line(res)
    assert digest(survey_dir) == inputs and digest(out) == before
    assert read_manifest(out) is None


def test_replace_swaps_an_earlier_output_whole(assessed, survey_dir, tmp_path):
    out = copy_output(assessed[1], tmp_path / "out")
    inputs = digest(survey_dir)
    res = cli("correct", survey_dir, "--out", out, "--replace", "--quiet")
    assert res.exit_code == 0, res.output
    assert names(out) == ["corrected.json", MANIFEST, "room-north-surface-c.tif"]
    m = read_manifest(out)
    assert m["command"] == "correct" and set(m["files"]) == {"corrected.json",
                                                             "room-north-surface-c.tif"}
    assert strangers(out, m) == []
    assert digest(survey_dir) == inputs
    assert names(tmp_path) == ["out", "survey"]


def _during_the_run(monkeypatch, action):
    """Call `action` once while the correction runs (the output is being staged)."""
    import envelope.stages.correct as stage

    real = stage.correct_view

    def correct_thermogram(*args, **kwargs):
        action()
        return real(*args, **kwargs)

    monkeypatch.setattr(stage, "correct_view", correct_thermogram)


def test_user_file_added_during_run_survives_replace(assessed, survey_dir, tmp_path, monkeypatch):
    out = copy_output(assessed[1], tmp_path / "out")
    _during_the_run(monkeypatch, lambda: (out / "notes.txt").write_text("written meanwhile\n"))
    res = cli("correct", survey_dir, "--out", out, "--replace", "--quiet")
    assert res.exit_code == 0, res.output
    kept = [n for n in names(tmp_path) if n not in ("out", "survey")]
    assert kept == [f"out.old-{os.getpid()}"], names(tmp_path)
    assert names(tmp_path / kept[0]) == ["notes.txt"]  # envelope's old files removed, not it
    assert (tmp_path / kept[0] / "notes.txt").read_text() == "written meanwhile\n"
    assert "envelope: note: the previous output folder held files envelope did not write" \
           in res.output and kept[0] in res.output
    assert "corrected.json" in names(out)


def test_user_file_appearing_in_empty_out_during_run_is_kept(survey_dir, tmp_path, monkeypatch):
    out = tmp_path / "out"

    def create():
        out.mkdir()
        (out / "mine.txt").write_text("mine\n")

    _during_the_run(monkeypatch, create)
    inputs = digest(survey_dir)
    res = cli("correct", survey_dir, "--out", out, "--quiet")
    assert res.exit_code == 2, res.output
    new = f"out.new-{os.getpid()}"
    line = error_line(res)
    assert f"{out}: --out: a folder appeared here during the run" in line and new in line
    assert names(out) == ["mine.txt"] and (out / "mine.txt").read_text() == "mine\n"
    assert names(tmp_path) == sorted(["out", "survey", new])
    assert "corrected.json" in names(tmp_path / new)
    assert digest(survey_dir) == inputs


# --------------------------------------------------------------------------------------
# lock and leftovers
# --------------------------------------------------------------------------------------


def test_second_run_to_same_out_is_locked(survey_dir, tmp_path):
    out = tmp_path / "out"
    holder = subprocess.Popen(
        [sys.executable, "-c",
         "import sys, time; from pathlib import Path; from envelope.folders import _Lock; "
         "lock = _Lock(Path(sys.argv[1]).resolve(), sys.argv[1]); lock.__enter__(); "
         "print('locked', flush=True); time.sleep(60)", str(out)],
        stdout=subprocess.PIPE, text=True, env=dict(os.environ))
    try:
        assert holder.stdout.readline().strip() == "locked"
        inputs = digest(survey_dir)
        res = cli("correct", survey_dir, "--out", out, "--quiet")
        assert res.exit_code == 2, res.output
        line = error_line(res)
        assert f"another envelope run (pid {holder.pid})" in line
        assert str(tmp_path / ".out.lock") in line and "--out" in line
        assert names(tmp_path) == [".out.lock", "survey"]  # the other run's lock only
        assert digest(survey_dir) == inputs
    finally:
        holder.kill()
        holder.wait()


def test_stale_lock_is_taken_over(survey_dir, tmp_path):
    out = tmp_path / "out"
    (tmp_path / ".out.lock").write_text(json.dumps(
        {"tool": "envelope", "pid": _dead_pid(), "host": socket.gethostname()}))
    res = cli("correct", survey_dir, "--out", out, "--quiet")
    assert res.exit_code == 0, res.output
    assert names(tmp_path) == ["out", "survey"]


def test_a_user_file_named_like_the_lock_is_never_overwritten(survey_dir, tmp_path):
    (tmp_path / ".out.lock").write_text("my own file\n")
    before = digest(tmp_path)
    res = cli("correct", survey_dir, "--out", tmp_path / "out", "--quiet")
    assert res.exit_code == 2, res.output
    assert f"{tmp_path / '.out.lock'}: --out: .out.lock beside it was not written by envelope" \
        in error_line(res)
    assert digest(tmp_path) == before


def test_leftovers_of_a_killed_run_are_cleaned(survey_dir, tmp_path):
    host = socket.gethostname()
    dead = tmp_path / ".out.partial-1-dead"
    live = tmp_path / ".out.partial-2-live"
    foreign = tmp_path / ".out.partial-3-nomarker"
    for folder, pid in ((dead, _dead_pid()), (live, os.getpid()), (foreign, None)):
        folder.mkdir()
        (folder / "results.json").write_text("{}")
        if pid is not None:
            (folder / PARTIAL_MARKER).write_text(json.dumps(
                {"tool": "envelope", "pid": pid, "host": host}))
    res = cli("correct", survey_dir, "--out", tmp_path / "out", "--quiet")
    assert res.exit_code == 0, res.output
    # the dead run's folder is gone; a live run's and an unmarked folder are not ours to take
    assert names(tmp_path) == sorted(["out", "survey", live.name, foreign.name])


def test_old_output_of_a_run_killed_mid_swap_loses_only_our_files(assessed, survey_dir,
                                                                   tmp_path):
    old = copy_output(assessed[1], tmp_path / f".out.old-{_dead_pid()}")
    (old / "notes.txt").write_text("mine\n")
    res = cli("correct", survey_dir, "--out", tmp_path / "out", "--quiet")
    assert res.exit_code == 0, res.output
    kept = f"out.old-{os.getpid()}"
    assert names(tmp_path) == sorted(["out", "survey", kept])
    assert names(tmp_path / kept) == ["notes.txt"]
    assert kept in res.output


# --------------------------------------------------------------------------------------
# signals
# --------------------------------------------------------------------------------------


@pytest.mark.parametrize("signum, code", [(signal.SIGINT, 130), (signal.SIGHUP, 129),
                                          (signal.SIGTERM, 143)])
def test_signal_cleans_up_like_sigint(survey_dir, tmp_path, monkeypatch, signum, code):
    before = {s: signal.getsignal(s) for s in (signal.SIGINT, signal.SIGTERM, signal.SIGHUP)}
    inputs = digest(survey_dir)
    _during_the_run(monkeypatch, lambda: os.kill(os.getpid(), signum))
    res = cli("correct", survey_dir, "--out", tmp_path / "out", "--quiet")
    assert res.exit_code == code, res.output
    assert f"envelope: interrupted ({signal.Signals(signum).name}); nothing written" in res.output
    assert names(tmp_path) == ["survey"]
    assert digest(survey_dir) == inputs
    assert {s: signal.getsignal(s) for s in before} == before  # handlers restored


def _slow_run(tmp_path):
    """A real `assess` process of two views at the largest allowed draws, once it is staging."""
    head = SURVEY_TOML[: SURVEY_TOML.index("[[thermograms]]")]
    block = SURVEY_TOML[SURVEY_TOML.index("[[thermograms]]"): SURVEY_TOML.index("[[measures]]")]
    root = write_survey(tmp_path / "s", head + block.replace('id = "room-north"', 'id = "a"')
                        + block.replace('id = "room-north"', 'id = "b"')
                        .replace("thermograms/room-north.npy", "thermograms/b.npy"))
    np.save(root / "thermograms" / "room-north.npy", readings(seed=3))
    np.save(root / "thermograms" / "b.npy", readings(seed=4))  # each view its own export
    proc = subprocess.Popen([sys.executable, "-m", "envelope.cli", "assess", str(root), "--out",
                             str(tmp_path / "out"), "--quiet", "--draws", "1000000"],
                            env=dict(os.environ, MPLBACKEND="Agg"),
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    deadline = time.time() + 60
    while time.time() < deadline and not any(n.startswith(".out.partial") for n in names(tmp_path)):
        time.sleep(0.05)
    time.sleep(0.3)
    return root, proc


def test_sigterm_leaves_nothing(tmp_path):
    """A real process stopped by SIGTERM while it computes: exit 143, no folder, no lock."""
    root, proc = _slow_run(tmp_path)
    inputs = digest(root)
    proc.send_signal(signal.SIGTERM)
    _, err = proc.communicate(timeout=120)
    assert proc.returncode == 143, err.decode()
    assert "envelope: interrupted (SIGTERM); no output folder written" in err.decode()
    assert "Traceback" not in err.decode()
    assert names(tmp_path) == ["s"]
    assert digest(root) == inputs


def test_kill_9_leftovers_are_cleaned_by_the_next_run(tmp_path):
    root, proc = _slow_run(tmp_path)
    inputs = digest(root)
    proc.kill()  # SIGKILL: no cleanup possible
    proc.communicate(timeout=60)
    left = names(tmp_path)
    assert ".out.lock" in left and any(n.startswith(".out.partial-") for n in left), left
    res = cli("correct", root, "--out", tmp_path / "out", "--quiet")
    assert res.exit_code == 0, res.output
    assert names(tmp_path) == ["out", "s"]
    assert digest(root) == inputs


def test_signal_during_the_final_move_is_deferred():
    interrupts = Interrupts()
    reached = []
    with pytest.raises(Interrupted) as info, interrupts.installed():
        with interrupts.hold(committed="out"):
            os.kill(os.getpid(), signal.SIGTERM)
            reached.append("after the signal")  # not cut short
        reached.append("never")
    assert reached == ["after the signal"]
    assert info.value.committed == "out" and info.value.exit_code == 143


def test_signal_at_the_final_move_leaves_a_whole_output(survey_dir, tmp_path, monkeypatch):
    real_rename = os.rename

    def rename(src, dst):
        if ".partial-" in str(src):
            os.kill(os.getpid(), signal.SIGTERM)  # arrives while the output is moved into place
        return real_rename(src, dst)

    monkeypatch.setattr(envelope.folders.os, "rename", rename)
    res = cli("correct", survey_dir, "--out", tmp_path / "out", "--quiet")
    assert res.exit_code == 143, res.output
    assert "after the outputs were complete; they are whole in" in res.output
    m = read_manifest(tmp_path / "out")
    assert m is not None and strangers(tmp_path / "out", m) == []
    assert sorted(m["files"]) == ["corrected.json", "room-north-surface-c.tif"]
    assert names(tmp_path) == ["out", "survey"]


# --------------------------------------------------------------------------------------
# permissions
# --------------------------------------------------------------------------------------


@pytest.mark.parametrize("umask", [0o022, 0o027])
def test_outputs_follow_the_umask(survey_dir, tmp_path, umask):
    old = os.umask(umask)
    try:
        res = cli("correct", survey_dir, "--out", tmp_path / "new" / "out", "--quiet")
    finally:
        os.umask(old)
    assert res.exit_code == 0, res.output
    for folder in (tmp_path / "new", tmp_path / "new" / "out"):
        assert (folder.stat().st_mode & 0o777) == 0o777 & ~umask, oct(folder.stat().st_mode)
    for f in (tmp_path / "new" / "out").iterdir():
        assert (f.stat().st_mode & 0o777) == 0o666 & ~umask, (f.name, oct(f.stat().st_mode))


# --------------------------------------------------------------------------------------
# rerender
# --------------------------------------------------------------------------------------


def _results(out: Path) -> dict:
    return json.loads((out / "results.json").read_text(encoding="utf-8"))


def _rerender_refused(out: Path, tmp_path: Path) -> str:
    before = digest(out)
    res = cli("rerender", out, "--quiet")
    assert res.exit_code == 2, res.output
    assert digest(out) == before
    assert [n for n in names(tmp_path) if n.startswith(".")] == []
    return error_line(res)


def test_rerender_rewrites_reports_and_keeps_the_folder_ours(assessed, tmp_path):
    out = copy_output(assessed[1], tmp_path / "out")
    (out / "report.html").unlink()
    results_before = (out / "results.json").read_bytes()
    res = cli("rerender", out, "--quiet")
    assert res.exit_code == 0, res.output
    assert (out / "report.html").stat().st_size > 0
    assert (out / "results.json").read_bytes() == results_before
    m = read_manifest(out)
    assert "report.html" in m["files"] and strangers(out, m) == []
    assert names(tmp_path) == ["out"]
    page = (out / "report.html").read_text(encoding="utf-8")
    assert 'src="figures/' in page and "data:image/png;base64," not in page  # linked
    res = cli("rerender", out, "--quiet", "--single-file")
    assert res.exit_code == 0, res.output
    assert "data:image/png;base64," in (out / "report.html").read_text(encoding="utf-8")
    assert strangers(out, read_manifest(out)) == []


@pytest.mark.parametrize("content, field", [
    ({"schema": "SECRET-other-tool", "schema_version": 1}, "schema"),
    ({"schema": "envelope-results", "schema_version": 999}, "schema_version"),
    ("SECRET", "schema"),
])
def test_rerender_refuses_results_that_are_not_ours(assessed, tmp_path, content, field):
    out = copy_output(assessed[1], tmp_path / "out")
    (out / "results.json").write_text(json.dumps(content))
    line = _rerender_refused(out, tmp_path)
    assert f"{out / 'results.json'}: {field}:" in line
    assert "SECRET" not in line and "999" not in line


def test_rerender_never_echoes_foreign_bytes(assessed, tmp_path):
    out = copy_output(assessed[1], tmp_path / "out")
    (out / "results.json").write_bytes(b'{"schema": "\xff SECRET \x1b[31m"}')
    line = _rerender_refused(out, tmp_path)
    assert "not UTF-8" in line and str(out / "results.json") in line
    assert "SECRET" not in line and "\x1b" not in line


def test_rerender_checks_the_structure_by_field(assessed, tmp_path):
    out = copy_output(assessed[1], tmp_path / "out")
    r = _results(out)
    r["thermograms"][0]["figures"] = "SECRET"
    (out / "results.json").write_text(json.dumps(r))
    line = _rerender_refused(out, tmp_path)
    assert "results.json: thermograms[0].figures: expected a value of type object" in line
    assert "SECRET" not in line


@pytest.mark.parametrize("rel", ["figures/../../outside.png", "/etc/hostname", "report.html",
                                 "figures/../results.json"])
def test_rerender_embeds_no_figure_from_outside(assessed, tmp_path, rel):
    out = copy_output(assessed[1], tmp_path / "out")
    (tmp_path / "outside.png").write_bytes(b"\x89PNG\r\n\x1a\nSECRET")
    r = _results(out)
    r["thermograms"][0]["figures"]["corrected"] = rel
    (out / "results.json").write_text(json.dumps(r))
    before = digest(out)
    res = cli("rerender", out, "--quiet")
    assert res.exit_code == 2, res.output
    line = error_line(res)
    assert "thermograms[0].figures.corrected: figure path must be figures/NAME.png" in line
    assert rel not in line
    assert digest(out) == before


@pytest.mark.parametrize("what", ["file", "folder"])
def test_rerender_embeds_no_figure_through_a_symlink(assessed, tmp_path, what):
    out = copy_output(assessed[1], tmp_path / "out")
    outside = tmp_path / "elsewhere"
    outside.mkdir()
    (outside / "room-north-thermogram.png").write_bytes(b"\x89PNG\r\n\x1a\nSECRET")
    if what == "file":
        (out / "figures" / "room-north-thermogram.png").unlink()
        (out / "figures" / "room-north-thermogram.png").symlink_to(
            outside / "room-north-thermogram.png")
    else:
        figures = out / "figures"
        for f in figures.iterdir():
            f.unlink()
        figures.rmdir()
        figures.symlink_to(outside, target_is_directory=True)
    line = _rerender_refused(out, tmp_path)
    # the first figure field met on the way (the whole-view picture, or a close-up)
    assert "thermograms[0].figures." in line and "passes through a symbolic link" in line


def test_rerender_refuses_a_symlinked_results_file(assessed, tmp_path):
    out = copy_output(assessed[1], tmp_path / "out")
    (tmp_path / "elsewhere.json").write_bytes((out / "results.json").read_bytes())
    (out / "results.json").unlink()
    (out / "results.json").symlink_to(tmp_path / "elsewhere.json")
    line = _rerender_refused(out, tmp_path)
    assert f"{out / 'results.json'}: is a symbolic link" in line


def test_rerender_refuses_a_folder_without_manifest(assessed, tmp_path):
    out = copy_output(assessed[1], tmp_path / "out")
    (out / MANIFEST).unlink()
    line = _rerender_refused(out, tmp_path)
    assert f"{out}: {MANIFEST}: no valid {MANIFEST}" in line


def test_rerender_never_overwrites_a_report_the_user_changed(assessed, tmp_path):
    out = copy_output(assessed[1], tmp_path / "out")
    (out / "summary.html").write_text("my own summary\n")
    line = _rerender_refused(out, tmp_path)
    assert f"{out / 'summary.html'}: not overwritten" in line


def test_correct_with_one_broken_view_writes_the_others_and_exits_3(tmp_path):
    """SPEC §6: one broken thermogram does not lose the others; `correct` like `assess`."""
    head = SURVEY_TOML[: SURVEY_TOML.index("[[thermograms]]")]
    block = SURVEY_TOML[SURVEY_TOML.index("[[thermograms]]"): SURVEY_TOML.index("[[measures]]")]
    root = write_survey(tmp_path / "survey", head + block + block.replace(
        'id = "room-north"', 'id = "room-south"').replace("room-north.npy", "room-south.npy"))
    np.save(root / "thermograms" / "room-south.npy", readings(seed=2) * 1.8 + 32.0)  # °F
    inputs = digest(root)
    out = tmp_path / "out"
    res = cli("correct", root, "--out", out)
    assert res.exit_code == 3, res.output
    assert "envelope: not corrected: room-south: thermograms/room-south.npy: the median reading" in res.output
    index = json.loads((out / "corrected.json").read_text())
    assert [e["id"] for e in index] == ["room-north", "room-south"]
    assert index[0]["file"] == "room-north-surface-c.tif" and "failed" in index[1]
    assert (out / "room-north-surface-c.tif").is_file() and not (out / "room-south-surface-c.tif").exists()
    assert digest(root) == inputs and names(tmp_path) == ["out", "survey"]
