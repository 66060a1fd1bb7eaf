"""The tutorial docs/first-survey.md, run: from a folder of four exports in four dialects to
the three reports, with `envelope init`, scripted outlines and scale (the editor's own code
path), and no hand-written TOML beyond the measured conditions.

The exports are rendered by the project's forward model (`envelope.synth`, via conftest's
scene): the U-values found are checked for consistency with the U put in, not against an
outside reference (the physics modules carry those tests).
"""

from __future__ import annotations

import json
import re
from pathlib import Path

import numpy as np
import tifffile
from conftest import U_WALL, U_WINDOW, readings
from dialects import Dialect, write_export
from typer.testing import CliRunner

from envelope.cli import app
from envelope.editor import OutlineEditor

runner = CliRunner()
DOC = Path(__file__).resolve().parents[1] / "docs" / "first-survey.md"
VIEWS = ("lounge-north", "kitchen-east", "bedroom-north", "study-west")


def make_exports(folder: Path) -> Path:
    """Four exports of the conftest scene (wall U 0.5 with a window U 2.8, exported with
    emissivity 0.95 and reflected 20 °C), each in another dialect."""
    folder.mkdir(parents=True)
    header = ["Emissivity: 0.95", "Reflected temperature: 20 °C", "Distance: 3 m"]
    write_export(folder / "lounge-north.csv", readings(1).astype(np.float64), Dialect(
        delim=";", decimal=",", encoding="cp1252", digits=3,
        header=["Thermal image", "Emissivity;0,95", "Reflected temperature;20,0 °C", "Time;22:05"]))
    write_export(folder / "kitchen-east.txt", readings(2).astype(np.float64), Dialect(
        delim="\t", encoding="utf-8-sig", eol="\r\n", digits=3, header=header))
    write_export(folder / "bedroom-north.csv", readings(3).astype(np.float64), Dialect(
        delim=",", trailing=True, unit="K", digits=3, header=header))
    with tifffile.TiffWriter(folder / "study-west.tif") as tw:
        tw.write(np.zeros((30, 40, 3), np.uint8), photometric="rgb")   # a preview first
        tw.write(readings(4), compression="zlib")                      # the data page
    return folder


def doc_commands() -> list[str]:
    """The `envelope ...` command lines of the tutorial's shell blocks."""
    text = DOC.read_text(encoding="utf-8")
    blocks = re.findall(r"```bash\n(.*?)```", text, re.S)
    cmds = []
    for block in blocks:
        for line in block.replace("\\\n", " ").splitlines():
            if line.strip().startswith("envelope "):
                cmds.append(" ".join(line.split()))
    return cmds


def run(cmd: str, cwd: Path):
    import shlex

    args = shlex.split(cmd)[1:]
    args = [str(cwd / a) if a in ("exports", "survey", "out") else a for a in args]
    return runner.invoke(app, args)


def draw_outlines(survey: Path) -> None:
    """What the surveyor does in `envelope outline`, scripted through the editor's logic
    (the window calls the same methods): wall, window, reference zone, and the scale."""
    for view in VIEWS:
        ed = OutlineEditor(shape_px=(120, 160), element_names=(f"{view}-wall", f"{view}-window"))
        for x, y in [(0, 0), (160, 0), (160, 120), (0, 120)]:
            ed.click(x, y)
        ed.key("enter")
        ed.key("1")
        ed.key("n")
        for x, y in [(100, 30), (140, 30), (140, 80), (100, 80)]:
            ed.click(x, y)
        ed.key("c")
        ed.key("2")
        ed.key("n")
        for x, y in [(10, 10), (60, 10), (60, 60), (10, 60)]:
            ed.click(x, y)
        ed.key("c")
        ed.key("1")
        ed.key("r")                       # the wall's reference zone
        ed.key("k")                       # scale: the bottom edge is 4.0 m
        ed.click(0, 119.5)
        ed.click(160, 119.5)
        assert ed.scale_text("4.0")
        ed.save(survey / "outlines" / f"{view}.geojson", overwrite=True)
        ed.save_scale(survey / "survey.toml", view)


def test_tutorial_from_four_exports_to_three_reports(tmp_path):
    make_exports(tmp_path / "exports")
    cmds = doc_commands()
    init, inspect, assess = cmds[0], cmds[1], cmds[-1]
    assert init.startswith("envelope init") and assess.startswith("envelope assess")
    res = run(init, tmp_path)
    assert res.exit_code == 0, res.output
    survey = tmp_path / "survey"
    toml = survey / "survey.toml"
    # the measured conditions, typed by the surveyor: the reflected temperature of each view
    text = toml.read_text(encoding="utf-8")
    assert text.count('reflected_c = "fill in"') == 4
    toml.write_text(text.replace('reflected_c = "fill in"', "reflected_c = 20.0"), encoding="utf-8")
    res = run(inspect, tmp_path)
    assert res.exit_code == 0 and "no outline yet" in res.output, res.output
    draw_outlines(survey)
    res = run(inspect, tmp_path)
    assert res.exit_code == 0 and "Ready for `envelope assess`" in res.output, res.output
    res = run(assess + " --draws 2000 --quiet", tmp_path)
    assert res.exit_code == 0, res.output
    out = tmp_path / "out"
    for name in ("results.json", "report.html", "check.html", "summary.html", "summary.pdf"):
        assert (out / name).is_file(), name
    results = json.loads((out / "results.json").read_text())
    walls = {e["thermogram"]: e for e in results["elements"] if e["name"].endswith("-wall")}
    assert sorted(walls) == sorted(VIEWS)
    for e in walls.values():   # consistency with the forward model's U, within the 95 % interval
        assert e["u_low95_w_m2k"] <= U_WALL <= e["u_high95_w_m2k"], e
    wins = [e for e in results["elements"] if e["name"].endswith("-window")]
    assert all(abs(e["u_w_m2k"] - U_WINDOW) / U_WINDOW < 0.3 for e in wins)
