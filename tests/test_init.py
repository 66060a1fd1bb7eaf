"""`envelope init`: a survey folder from a folder of exports; re-runs append only; the exports
folder is never written to; a fresh survey passes `inspect` and lists what is still needed.

Outside reference: TOML 1.0.0 (an array of tables may get new entries later in the file;
local dates such as 2026-01-14 are native values).
"""

from __future__ import annotations

import json
import tomllib

import numpy as np
import tifffile
from conftest import readings
from dialects import Dialect, write_export
from typer.testing import CliRunner

from envelope.cli import app
from envelope.survey import load_survey

runner = CliRunner()


def _exports(folder):
    folder.mkdir(parents=True, exist_ok=True)
    v = readings().astype(np.float64)
    write_export(folder / "lounge north.csv", v, Dialect(
        delim=";", decimal=",", encoding="cp1252",
        header=["Emissivity: 0,95", "Reflected temperature;20,0 °C", "Distance [m]: 3",
                "Date: 14.01.2026", "Time: 22:10"]))
    tifffile.imwrite(folder / "raw16.tif", np.round((v + 273.15) * 100).astype(np.uint16))
    (folder / "notes.csv").write_text("not a grid\n")
    return folder


def _tree(folder):
    return {p.relative_to(folder): p.read_bytes() for p in sorted(folder.rglob("*")) if p.is_file()}


def test_init_writes_a_survey_that_inspect_passes(tmp_path):
    ex = _exports(tmp_path / "exports")
    before = _tree(ex)
    sv = tmp_path / "survey"
    res = runner.invoke(app, ["init", str(sv), "--from", str(ex), "--element", "lounge-wall:wall",
                              "--element", "lounge-window:window:lounge-wall", "--side", "interior"])
    assert res.exit_code == 3, res.output            # one export refused (notes.csv), listed
    assert "REFUSED notes.csv" in res.output and "added lounge-north" in res.output
    assert _tree(ex) == before                        # the exports are never written to
    data = tomllib.loads((sv / "survey.toml").read_text())
    t0 = data["thermograms"][0]
    assert t0["id"] == "lounge-north" and t0["export"]["emissivity"] == 0.95
    assert t0["distance_m"] == 3.0 and t0["time"] == "22:10"
    assert str(data["survey"]["date"]) == "2026-01-14"
    assert (sv / t0["file"]).read_bytes() == (ex / "lounge north.csv").read_bytes()  # a copy
    assert json.loads((sv / t0["outlines"]).read_text())["features"] == []
    raw = data["thermograms"][1]["export"]
    assert raw["scale"] == "fill in" and raw["unit"] == "fill in"   # integer TIFF: to declare
    res = runner.invoke(app, ["inspect", str(sv)])
    assert res.exit_code == 0, res.output            # passes at once ...
    assert "Still needed before `envelope assess`" in res.output   # ... and lists the rest
    for key in ("site.name", "conditions.indoor_air_c", "thermograms[0].reflected_c",
                "thermograms[1].export.scale", "no outline yet"):
        assert key in res.output, key
    res = runner.invoke(app, ["assess", str(sv), "--out", str(tmp_path / "out"), "--quiet"])
    assert res.exit_code == 2 and "required keys missing" in res.output
    assert not (tmp_path / "out").exists()


def test_rerun_adds_new_exports_and_keeps_what_was_typed(tmp_path):
    ex = _exports(tmp_path / "exports")
    (ex / "notes.csv").unlink()
    sv = tmp_path / "survey"
    assert runner.invoke(app, ["init", str(sv), "--from", str(ex), "-q"]).exit_code == 0
    toml = sv / "survey.toml"
    typed = toml.read_text().replace('name = "fill in"', 'name = "Wren Cottage"  # typed')
    toml.write_text(typed)
    write_export(ex / "bedroom.txt", readings().astype(np.float64), Dialect(delim="\t"))
    res = runner.invoke(app, ["init", str(sv), "--from", str(ex), "--element", "bed-wall:wall"])
    assert res.exit_code == 0, res.output
    assert "already in the survey: raw16.tif" in res.output and "added bedroom" in res.output
    new = toml.read_text()
    assert new.startswith(typed)                     # every byte typed is still there
    s = load_survey(sv, incomplete=True)
    assert [t.id for t in s.thermograms] == ["lounge-north", "raw16", "bedroom"]
    assert "bed-wall" in s.elements and s.site.name == "Wren Cottage"
    res = runner.invoke(app, ["init", str(sv), "--from", str(ex)])
    assert res.exit_code == 0 and toml.read_text() == new  # nothing new: nothing changed


def test_init_refuses_survey_inside_exports(tmp_path):
    ex = _exports(tmp_path / "exports")
    before = _tree(ex)
    res = runner.invoke(app, ["init", str(ex / "survey"), "--from", str(ex)])
    assert res.exit_code == 2 and "exports folder" in res.output
    res = runner.invoke(app, ["init", str(ex), "--from", str(ex)])
    assert res.exit_code == 2
    assert _tree(ex) == before


def test_init_bad_element_option_writes_nothing(tmp_path):
    ex = _exports(tmp_path / "exports")
    res = runner.invoke(app, ["init", str(tmp_path / "sv"), "--from", str(ex), "--element", "../x:wall"])
    assert res.exit_code == 2 and "--element" in res.output
    assert not (tmp_path / "sv").exists()
