"""The whole run on a small synthetic survey: outputs, determinism, partial failure,
interruption, JSON summary, re-rendering and escaping.

The scene comes from the project's forward model (tests/conftest.py), so these tests check
consistency of the pipeline, not physical truth; outside references live in the module tests.
"""

from __future__ import annotations

import json
import os
import signal
import subprocess
import sys
import time

import numpy as np
import pytest
from conftest import SURVEY_TOML, U_WALL, U_WINDOW, readings, write_survey
from typer.testing import CliRunner

from envelope.cli import app
from envelope.results import validate

pytestmark = pytest.mark.slow  # runs whole surveys (quick loop: pytest -m 'not slow')

runner = CliRunner()

OUTPUTS = ("results.json", "elements.csv", "defects.csv", "measures.csv", "report.html",
           "check.html", "summary.html", "summary.pdf")


def _assess(survey, out, *extra):
    return runner.invoke(app, ["assess", str(survey), "--out", str(out), "--quiet", *extra])


def test_every_output_written_and_truth_inside_interval(survey_dir, tmp_path):
    out = tmp_path / "out"
    res = _assess(survey_dir, out)
    assert res.exit_code == 0, res.output
    for name in OUTPUTS:
        assert (out / name).stat().st_size > 0, name
    r = json.loads((out / "results.json").read_text())
    assert r["schema"] == "envelope-results" and r["schema_version"] == 2
    assert validate(r) == []
    els = {e["name"]: e for e in r["elements"]}
    # truth of the synthetic scene (conftest): wall 0.5, window 2.8 W/m2K
    for name, truth in (("test-wall", U_WALL), ("test-window", U_WINDOW)):
        e = els[name]
        assert e["u_low95_w_m2k"] <= truth <= e["u_high95_w_m2k"], e
    # net area: 4 m x 3 m wall minus a 1.0 m x 1.25 m window (40 px/m), hand arithmetic
    assert abs(els["test-wall"]["area_net_m2"] - (12.0 - 1.25)) < 1e-6
    assert els["test-wall"]["verdict"] in ("pass", "fail", "inconclusive")
    for fig in r["thermograms"][0]["figures"].values():
        assert (out / fig).is_file(), fig
    assert r["heat_loss"]["h_w_k"] > 0 and r["measures"][0]["annual_kwh_saved"] > 0


def test_results_byte_identical_on_rerun(survey_dir, tmp_path):
    assert _assess(survey_dir, tmp_path / "a").exit_code == 0
    assert _assess(survey_dir, tmp_path / "b").exit_code == 0
    for name in ("results.json", "elements.csv", "defects.csv", "measures.csv"):
        assert (tmp_path / "a" / name).read_bytes() == (tmp_path / "b" / name).read_bytes(), name


def _ten_thermograms(root):
    """The test survey with ten copies of its thermogram; the fourth one broken."""
    block = SURVEY_TOML[SURVEY_TOML.index("[[thermograms]]"): SURVEY_TOML.index("[[measures]]")]
    head = SURVEY_TOML[: SURVEY_TOML.index("[[thermograms]]")]
    tail = SURVEY_TOML[SURVEY_TOML.index("[[measures]]"):]
    blocks = []
    for i in range(10):
        blocks.append(block.replace('id = "room-north"', f'id = "view-{i}"')
                      .replace("thermograms/room-north.npy", f"thermograms/view-{i}.npy"))
    write_survey(root, head + "".join(blocks) + tail)
    for i in range(10):
        img = readings(seed=i)
        if i == 3:
            img = img + 273.15  # kelvin by mistake
        np.save(root / "thermograms" / f"view-{i}.npy", img)
    return root


def test_broken_thermogram_leaves_the_other_nine(tmp_path):
    root = _ten_thermograms(tmp_path / "s")
    out = tmp_path / "out"
    res = _assess(root, out, "--draws", "500")
    assert res.exit_code == 3, res.output
    r = json.loads((out / "results.json").read_text())
    status = {t["id"]: t["status"] for t in r["thermograms"]}
    assert status.pop("view-3") == "failed"
    assert set(status.values()) == {"assessed"} and len(status) == 9
    assert [f["thermogram"] for f in r["failures"]] == ["view-3"]
    assert "kelvin" in r["failures"][0]["error"]
    assert len({e["thermogram"] for e in r["elements"]}) == 9
    assert "view-3" in (out / "report.html").read_text()


def test_interrupt_leaves_no_output(tmp_path):
    root = _ten_thermograms(tmp_path / "s")
    out = tmp_path / "out"
    env = dict(os.environ, MPLBACKEND="Agg")
    proc = subprocess.Popen([sys.executable, "-m", "envelope.cli", "assess", str(root), "--out",
                             str(out), "--quiet", "--draws", "200000"], env=env,
                            stdout=subprocess.PIPE, stderr=subprocess.PIPE)
    deadline = time.time() + 60
    while time.time() < deadline and not any(p.name.startswith(".out.partial") for p in tmp_path.iterdir()):
        time.sleep(0.05)
    time.sleep(0.5)
    proc.send_signal(signal.SIGINT)
    _, err = proc.communicate(timeout=120)
    assert proc.returncode == 130, err.decode()
    assert not out.exists()
    assert [p.name for p in tmp_path.iterdir()] == ["s"]


def test_json_summary_and_rerender(survey_dir, tmp_path):
    out = tmp_path / "out"
    res = runner.invoke(app, ["assess", str(survey_dir), "--out", str(out), "--json"])
    assert res.exit_code == 0, res.output
    summary = json.loads(res.stdout)
    assert {e["name"] for e in summary["elements"]} == {"test-wall", "test-window"}
    (out / "report.html").unlink()
    before = (out / "results.json").read_bytes()
    res = runner.invoke(app, ["rerender", str(out), "--quiet"])
    assert res.exit_code == 0, res.output
    assert (out / "report.html").is_file() and (out / "results.json").read_bytes() == before
    res = runner.invoke(app, ["rerender", str(tmp_path / "nothing-here")])
    assert res.exit_code == 2 and "results.json" in res.output


def test_free_text_reaching_html_is_escaped(tmp_path):
    # identifiers are letters, digits, - _ . only (refused at load otherwise); free text such
    # as the site name, an element's label and a measure's name reaches the pages: escaped
    evil = "<script>alert(1)</script>"
    text = SURVEY_TOML.replace('name = "Test Cottage"', f"name = {json.dumps(evil)}")
    text = text.replace('name = "test-wall"\nkind = "wall"',
                        f'name = "test-wall"\nkind = "wall"\nlabel = {json.dumps(evil)}')
    text = text.replace('name = "Insulate the wall"', f"name = {json.dumps(evil)}")
    root = write_survey(tmp_path / "s", text)
    out = tmp_path / "out"
    res = _assess(root, out)
    assert res.exit_code == 0, res.output
    for page in ("report.html", "check.html", "summary.html"):
        html = (out / page).read_text()
        assert evil not in html, page
    assert "&lt;script&gt;alert(1)&lt;/script&gt;" in (out / "report.html").read_text()
    assert "<script" not in res.output  # nor on the terminal as markup


def test_correct_writes_surface_temperatures(survey_dir, tmp_path):
    import tifffile

    from envelope import synth

    out = tmp_path / "corr"
    res = runner.invoke(app, ["correct", str(survey_dir), "--out", str(out), "--quiet"])
    assert res.exit_code == 0, res.output
    img = tifffile.imread(out / "room-north-surface-c.tif")
    # truth: the wall's surface temperature from the forward model (conftest); the test
    # scene carries a +0.3 K camera offset and 0.05 K noise, which the correction keeps
    t_wall = synth.surface_temperature_for_u(0.5, 21.0, 1.0, 20.0, 0.93, 2.5)
    assert abs(float(np.median(img[5:25, 5:90])) - t_wall) < 0.45
    assert json.loads((out / "corrected.json").read_text())[0]["unit"] == "°C"


def test_outline_without_display_is_a_clear_error(survey_dir, monkeypatch):
    import envelope.editor as editor

    def no_window(*a, **k):
        raise RuntimeError("no interactive backend")

    monkeypatch.setattr(editor, "run_editor", no_window)
    res = runner.invoke(app, ["outline", str(survey_dir), "room-north"])
    assert res.exit_code == 2 and "window" in res.output
    res = runner.invoke(app, ["outline", str(survey_dir), "no-such-view"])
    assert res.exit_code == 2 and "room-north" in res.output


def _with_probe(text, surface_c, pixel=(30.5, 30.5)):
    return text.replace("[thermograms.export]", f"""[[thermograms.probes]]
pixel_xy = [{pixel[0]}, {pixel[1]}]
surface_c = {surface_c}
uncertainty_k = 0.1

[thermograms.export]""")


def test_probe_removes_the_camera_offset_from_the_whole_image(tmp_path):
    from envelope import assess, synth
    from envelope.stages.correct import correct_view
    from envelope.survey import load_survey
    from envelope.views import SurveyFolder

    # conftest renders the scene with a +0.3 K camera offset; the probe reads the true wall
    t_wall = float(synth.surface_temperature_for_u(0.5, 21.0, 1.0, 20.0, 0.93, 2.5))
    root = write_survey(tmp_path / "s", _with_probe(SURVEY_TOML, round(t_wall, 3)))
    s = load_survey(root)
    cor = correct_view(SurveyFolder(s).open_view(s.thermograms[0]), s.elements, s.camera,
                       s.conditions)
    obj, offset = cor.object_c, cor.offset
    assert offset.value_k == pytest.approx(0.3, abs=0.05)      # planted offset (conftest)
    # the probe patch is 3 × 3 px of 0.05 K noise (0.017 K of its mean), amplified by 1/ε in
    # the object temperature: 0.06 K is about 3 standard deviations
    assert float(np.median(obj[5:25, 5:90])) == pytest.approx(t_wall, abs=0.06)
    a = assess.assess_survey(s)
    wall = next(e for e in a.elements if e.name == "test-wall")
    assert wall.calibrated and "probe" in wall.calibration_note
    # without the probe, the same wall: wider interval (camera ±1 K instead of the probe)
    plain = next(e for e in assess.assess_survey(load_survey(write_survey(tmp_path / "p"))).elements
                 if e.name == "test-wall")
    # (the reflected temperature, ±1 K by default, stays the largest input of this survey)
    # (both intervals reach below zero, where their lower ends are raised to 0: the standard
    # uncertainties compare the spreads)
    assert wall.u_std_w_m2k < 0.8 * plain.u_std_w_m2k
    assert "camera_absolute" not in {name for name, _ in wall.budget}
    assert max(plain.budget, key=lambda b: b[1])[0] in ("camera_absolute", "reflected")
    assert wall.u_low95_w_m2k <= U_WALL <= wall.u_high95_w_m2k


def test_survey_camera_offset_and_measured_area(tmp_path):
    from envelope import assess
    from envelope.survey import load_survey

    text = SURVEY_TOML.replace("noise_k = 0.05", "noise_k = 0.05\noffset_k = 0.3\noffset_uncertainty_k = 0.1")
    text = text.replace('name = "test-wall"\nkind = "wall"', 'name = "test-wall"\nkind = "wall"\narea_m2 = 11.0')
    s = load_survey(write_survey(tmp_path / "s", text))
    a = assess.assess_survey(s)
    wall = next(e for e in a.elements if e.name == "test-wall")
    assert wall.area_net_m2 == 11.0 and wall.area_source.startswith("survey")
    assert wall.calibrated and "survey camera offset" in wall.calibration_note


def test_repair_defect_measure_removes_the_defect_loss():
    from envelope import energy, retrofit

    # hand arithmetic: a wall of U 0.3 on 10 m² (3 W/K) with a 1.2 W/K patch of missing
    # insulation; making the patch good saves 1.2 W/K × 2000 K·day × 24 h / 1000 = 57.6 kWh
    # of heat a year, / 0.9 efficiency = 64 kWh delivered, × 0.1 /kWh = 6.4 a year
    els = [("w", 0.3, 0.0, 10.0)]
    dfs = [energy.DefectLoss("D1", 1.2, 0.0, "point")]
    m = retrofit.Measure("refit", "repair_defect", defects=("D1",), cost=64.0)
    (r,) = retrofit.evaluate_measures([m], els, dfs, retrofit.EnergyPrices(0.1, 0.9, 0.2), 2000.0)
    assert r.annual_kwh_saved == pytest.approx(64.0)
    assert r.annual_money_saved == pytest.approx(6.4) and r.payback_years == pytest.approx(10.0)


def test_reflected_read_with_the_same_camera_gets_the_offset_removed(tmp_path):
    from envelope import assess, synth
    from envelope.survey import load_survey

    # conftest: true reflected 20.0 °C, camera offset +0.3 K. A surveyor who read the
    # reflector with this camera wrote 20.3; with the flag and a probe the result must match
    # a survey that wrote the true 20.0.
    t_wall = round(float(synth.surface_temperature_for_u(0.5, 21.0, 1.0, 20.0, 0.93, 2.5)), 3)
    true_text = _with_probe(SURVEY_TOML, t_wall)
    cam_text = true_text.replace("reflected_c = 20.0\ndistance_m",
                                 "reflected_c = 20.3\nreflected_by_camera = true\ndistance_m")
    ref = assess.assess_survey(load_survey(write_survey(tmp_path / "a", true_text)))
    cam = assess.assess_survey(load_survey(write_survey(tmp_path / "b", cam_text)))
    u_ref = next(e for e in ref.elements if e.name == "test-wall").u_w_m2k
    u_cam = next(e for e in cam.elements if e.name == "test-wall").u_w_m2k
    # the offset comes from a 3 × 3 px probe patch of 0.05 K noise: ±0.06 K is ~3 sigma
    assert cam.views[0].corrected.thermogram.reflected_c == pytest.approx(20.0, abs=0.06)
    assert u_cam == pytest.approx(u_ref, abs=0.02)


def test_quiet_is_silent_and_default_prints_a_summary(survey_dir, tmp_path):
    res = runner.invoke(app, ["assess", str(survey_dir), "--out", str(tmp_path / "q"), "--quiet"])
    assert res.exit_code == 0 and res.output == ""
    res = runner.invoke(app, ["assess", str(survey_dir), "--out", str(tmp_path / "v")])
    assert res.exit_code == 0 and "Elements (2)" in res.output and "W/K" in res.output


def test_correct_metric_grid_has_the_wall_size(survey_dir, tmp_path):
    import tifffile

    out = tmp_path / "m"
    res = runner.invoke(app, ["correct", str(survey_dir), "--out", str(out), "--quiet",
                              "--metric-cm", "5"])
    assert res.exit_code == 0, res.output
    meta = json.loads((out / "corrected.json").read_text())[0]["metric"]
    img = tifffile.imread(out / meta["file"])
    # the 4 m × 3 m test wall (conftest, 40 px/m) at 5 cm per pixel: 80 × 60 cells
    assert img.shape == (60, 80) and meta["cm_per_px"] == 5
    assert np.isfinite(img).mean() > 0.95
