"""Shared fixtures: a small valid survey written by the forward model, to be broken by tests.

The scene is invented and synthesised (consistency only, never a reference value).
"""

from __future__ import annotations

import json
import os
from pathlib import Path

import numpy as np
import pytest

os.environ.setdefault("MPLBACKEND", "Agg")

T_I, T_E = 21.0, 1.0
U_WALL, U_WINDOW = 0.5, 2.8
H_C = 2.5  # ISO 6946 conventional interior h_c, horizontal heat flow
SHAPE = (120, 160)
PX_PER_M = 40.0  # 4.0 m × 3.0 m wall seen fronto-parallel

SURVEY_TOML = """\
format = "envelope-survey"
version = 1

[site]
name = "Test Cottage"
town = "Nowhere Parva"

[survey]
date = "2026-01-10"
surveyor = "T. Tester"

[conditions]
indoor_air_c = 21.0
outdoor_air_c = 1.0
indoor_rh = 0.5
outdoor_rh = 0.85
wind_m_s = 1.0
sky_cloud_oktas = 8
outdoor_history_c = [1.5, 1.3, 1.2, 1.0]

[camera]
accuracy_k = 1.0
relative_accuracy_k = 0.1
noise_k = 0.05

[climate]
heating_degree_days_kd = 2200
design_indoor_c = 21.0
design_outdoor_c = -3.0
monthly_outdoor_c = [2.0, 2.5, 4.5, 7.0, 10.5, 13.5, 15.5, 15.0, 12.5, 9.5, 5.5, 3.0]
monthly_outdoor_rh = [0.88, 0.85, 0.82, 0.78, 0.77, 0.78, 0.79, 0.81, 0.83, 0.86, 0.88, 0.89]
monthly_indoor_c = [21, 21, 21, 21, 21, 21, 21, 21, 21, 21, 21, 21]
humidity_class = 3

[prices]
currency = "EUR"
energy_price_per_kwh = 0.10
heating_efficiency = 0.9
co2_kg_per_kwh = 0.2

[analysis]
monte_carlo_draws = 2000

[[elements]]
name = "test-wall"
kind = "wall"
u_specified_w_m2k = 0.6
emissivity = 0.93

[[elements]]
name = "test-window"
kind = "window"
host = "test-wall"
emissivity = 0.84

[[thermograms]]
id = "room-north"
file = "thermograms/room-north.npy"
outlines = "outlines/room-north.geojson"
side = "interior"
reflected_c = 20.0
distance_m = 3.0
transmittance = 1.0

[thermograms.export]
emissivity = 0.95
reflected_c = 20.0

[thermograms.known_length]
pixel_a = [0, 119.5]
pixel_b = [160, 119.5]
length_m = 4.0

[[measures]]
name = "Insulate the wall"
kind = "add_layer"
elements = ["test-wall"]
thickness_m = 0.05
conductivity_w_mk = 0.025
cost = 2000
"""


def _rect(x0, y0, x1, y1):
    return [[[x0, y0], [x1, y0], [x1, y1], [x0, y1], [x0, y0]]]


def outlines_geojson() -> dict:
    return {"type": "FeatureCollection", "features": [
        {"type": "Feature", "properties": {"element": "test-wall", "role": "element"},
         "geometry": {"type": "Polygon", "coordinates": _rect(0, 0, 160, 120)}},
        {"type": "Feature", "properties": {"element": "test-window", "role": "element"},
         "geometry": {"type": "Polygon", "coordinates": _rect(100, 30, 140, 80)}},
        {"type": "Feature", "properties": {"element": "test-wall", "role": "reference"},
         "geometry": {"type": "Polygon", "coordinates": _rect(10, 10, 60, 60)}},
    ]}


def readings(seed: int = 1) -> np.ndarray:
    """Exported readings [°C] of the test wall and window (forward model, seeded)."""
    from envelope import radiometry, synth

    u = np.full(SHAPE, U_WALL)
    eps = np.full(SHAPE, 0.93)
    u[30:80, 100:140] = U_WINDOW
    eps[30:80, 100:140] = 0.84
    t_s = synth.surface_temperature_for_u(u, T_I, T_E, 20.0, eps, H_C)
    app = synth.render_apparent(t_s, eps, 20.0, noise_k=0.05, offset_k=0.3,
                                rng=np.random.default_rng(seed))
    return np.asarray(radiometry.export_reading(app, 0.95, 20.0, 1.0, None), dtype=np.float32)


def write_survey(root: Path, toml_text: str = SURVEY_TOML, pixels=None, outlines=None) -> Path:
    """Write the test survey into `root` and return `root`."""
    root = Path(root)
    (root / "thermograms").mkdir(parents=True, exist_ok=True)
    (root / "outlines").mkdir(parents=True, exist_ok=True)
    (root / "survey.toml").write_text(toml_text, encoding="utf-8")
    np.save(root / "thermograms" / "room-north.npy", readings() if pixels is None else pixels)
    (root / "outlines" / "room-north.geojson").write_text(
        json.dumps(outlines_geojson() if outlines is None else outlines), encoding="utf-8")
    return root


@pytest.fixture
def survey_dir(tmp_path) -> Path:
    return write_survey(tmp_path / "survey")


HOUSE = Path(__file__).resolve().parents[1] / "example_house"


@pytest.fixture(scope="session")
def demo_run(tmp_path_factory):
    """The README's main command on example_house/, run once for the whole test session:
    ``(out_dir, results, truth)``; results.json is checked against the shipped schema."""
    from typer.testing import CliRunner

    from envelope.cli import app
    from envelope.results import validate

    out = tmp_path_factory.mktemp("demo") / "out"
    res = CliRunner().invoke(app, ["assess", str(HOUSE), "--out", str(out), "--quiet",
                                   "--draws", "5000"])
    assert res.exit_code == 0, res.output
    results = json.loads((out / "results.json").read_text(encoding="utf-8"))
    assert validate(results) == []
    truth = json.loads((HOUSE / "truth.json").read_text(encoding="utf-8"))
    return out, results, truth


# -- session runs for the report, figure and browser tests --------------------------------------
# Real pipeline runs (not hand-written results): the small survey above with a planted patch of
# missing insulation and two measures, and a survey of 20 checked walls for the one-page sheet.

PATCH = (slice(70, 105), slice(20, 60))  # rows, cols of the planted patch (outside the zone)
U_PATCH = 1.6


def patched_readings(seed: int = 1) -> np.ndarray:
    """Readings of the test wall with a patch of missing insulation (U 1.6) and the window."""
    from envelope import radiometry, synth

    u = np.full(SHAPE, U_WALL)
    eps = np.full(SHAPE, 0.93)
    u[30:80, 100:140] = U_WINDOW
    eps[30:80, 100:140] = 0.84
    u[PATCH] = U_PATCH
    t_s = synth.surface_temperature_for_u(u, T_I, T_E, 20.0, eps, H_C)
    app = synth.render_apparent(t_s, eps, 20.0, noise_k=0.05, offset_k=0.3,
                                rng=np.random.default_rng(seed))
    return np.asarray(radiometry.export_reading(app, 0.95, 20.0, 1.0, None), dtype=np.float32)


REPAIR_MEASURE = """
[[measures]]
name = "Refit the insulation behind the lining"
kind = "repair_defect"
elements = ["test-wall"]
cost = 300
"""


@pytest.fixture(scope="session")
def small_run(tmp_path_factory):
    """The small survey with a planted defect, assessed and written out (figures, reports).

    Returns ``(assessment, results, out_dir)``; the results pass the JSON Schema.
    """
    import dataclasses

    from envelope.assess import assess_survey
    from envelope.outputs import write_outputs
    from envelope.results import validate
    from envelope.survey import load_survey

    root = write_survey(tmp_path_factory.mktemp("small") / "survey",
                        SURVEY_TOML + REPAIR_MEASURE, pixels=patched_readings())
    survey = load_survey(root)
    survey = dataclasses.replace(survey, analysis=dataclasses.replace(
        survey.analysis, monte_carlo_draws=1000))
    assessment = assess_survey(survey)
    out = tmp_path_factory.mktemp("small-out")
    results = write_outputs(assessment, out)
    assert validate(results) == []
    return assessment, results, out


@pytest.fixture(scope="session")
def survey20_results(tmp_path_factory):
    """Results of a real run of 20 views, each with its own wall carrying a specified U
    (a housing-programme survey for the one-page builder sheet); no figures drawn."""
    import dataclasses

    from envelope.assess import assess_survey
    from envelope.results import to_results, validate
    from envelope.survey import load_survey

    root = tmp_path_factory.mktemp("s20") / "survey"
    head = SURVEY_TOML[: SURVEY_TOML.index("[[elements]]")]
    blocks, views = [], []
    tg_block = SURVEY_TOML[SURVEY_TOML.index("[[thermograms]]"): SURVEY_TOML.index("[[measures]]")]
    for i in range(20):
        name = f"flat-{i + 1:02d}-living-room-wall"
        spec = (0.05, 2.0, 0.45)[i % 3]  # fail, pass, inconclusive for a U near 0.4
        blocks.append(f'[[elements]]\nname = "{name}"\nkind = "wall"\n'
                      f"u_specified_w_m2k = {spec}\nemissivity = 0.93\n\n")
        views.append(tg_block.replace('id = "room-north"', f'id = "flat-{i + 1:02d}"')
                     .replace("thermograms/room-north.npy", f"thermograms/flat-{i + 1:02d}.npy")
                     .replace("outlines/room-north.geojson", f"outlines/flat-{i + 1:02d}.geojson"))
    write_survey(root, head + "".join(blocks) + "".join(views))
    for i in range(20):
        pixels = patched_readings(seed=i) if i % 4 == 0 else readings(seed=i)
        np.save(root / "thermograms" / f"flat-{i + 1:02d}.npy", pixels)
        geo = {"type": "FeatureCollection", "features": [
            {"type": "Feature", "properties": {"element": f"flat-{i + 1:02d}-living-room-wall",
                                               "role": role},
             "geometry": {"type": "Polygon", "coordinates": rect}}
            for role, rect in (("element", _rect(0, 0, 160, 120)),
                               ("reference", _rect(10, 10, 60, 60)))]}
        (root / "outlines" / f"flat-{i + 1:02d}.geojson").write_text(json.dumps(geo))
    survey = load_survey(root)
    survey = dataclasses.replace(survey, measures=(), analysis=dataclasses.replace(
        survey.analysis, monte_carlo_draws=500))
    results = to_results(assess_survey(survey))
    assert validate(results) == []
    return results
