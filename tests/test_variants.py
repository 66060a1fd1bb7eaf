"""The whole run on variants of the test survey that the demo does not cover: other models,
other bands, missing optional sections, other file types. Each must give complete results
(or a clear note), never a traceback. Forward-model scenes: consistency checks only."""

from __future__ import annotations

import json

import numpy as np
import pytest
from conftest import SURVEY_TOML, outlines_geojson, readings, write_survey
from typer.testing import CliRunner

from envelope.cli import app

pytestmark = pytest.mark.slow  # runs whole surveys (quick loop: pytest -m 'not slow')

CLIMATE = SURVEY_TOML[SURVEY_TOML.index("[climate]"): SURVEY_TOML.index("[prices]")]
PRICES = SURVEY_TOML[SURVEY_TOML.index("[prices]"): SURVEY_TOML.index("[analysis]")]
MEASURES = SURVEY_TOML[SURVEY_TOML.index("[[measures]]"):]


def _no_reference():
    g = outlines_geojson()
    g["features"] = [f for f in g["features"] if f["properties"]["role"] == "element"]
    return g


VARIANTS = {
    "no-climate": dict(toml=SURVEY_TOML.replace(CLIMATE, "")),
    "no-prices": dict(toml=SURVEY_TOML.replace(PRICES, "")),
    "no-measures": dict(toml=SURVEY_TOML.replace(MEASURES, "")),
    "churchill-chu": dict(toml=SURVEY_TOML.replace("monte_carlo_draws = 2000",
                                                   'monte_carlo_draws = 2000\ninterior_convection = "churchill_chu"')),
    "band-8-14": dict(toml=SURVEY_TOML.replace("accuracy_k = 1.0", "band_um = [8.0, 14.0]\naccuracy_k = 1.0")),
    "din-criterion": dict(toml=SURVEY_TOML.replace("humidity_class = 3", 'humidity_class = 3\nfrsi_criterion = "din-4108-2"')),
    "measured-humidity": dict(toml=SURVEY_TOML.replace("humidity_class = 3", 'indoor_humidity = "measured"\nindoor_rh = 0.55')),
    "moisture-production": dict(toml=SURVEY_TOML.replace("humidity_class = 3", 'indoor_humidity = "moisture_production"\nmoisture_kg_h = 0.4\nair_changes_per_h = 0.5\nvolume_m3 = 200')),
    "no-reference-zone": dict(outlines=_no_reference()),
    "window-without-host": dict(toml=SURVEY_TOML.replace('host = "test-wall"\n', "")),
    "computed-transmittance": dict(toml=SURVEY_TOML.replace("transmittance = 1.0\n", "")),
    "reference-points": dict(toml=SURVEY_TOML.replace(
        "[thermograms.known_length]\npixel_a = [0, 119.5]\npixel_b = [160, 119.5]\nlength_m = 4.0",
        "[thermograms.reference_points]\npixel_xy = [[0, 0], [160, 0], [160, 120], [0, 120]]\n"
        "metre_xy = [[0, 3], [4, 3], [4, 0], [0, 0]]")),
    "exported-at-emissivity-one": dict(toml=SURVEY_TOML.replace("[thermograms.export]\nemissivity = 0.95",
                                                               "[thermograms.export]\nemissivity = 1.0"),
                                       pixels="bb"),
}


@pytest.mark.parametrize("name", list(VARIANTS))
def test_variant_runs_to_complete_results(tmp_path, name):
    v = VARIANTS[name]
    pixels = None
    if v.get("pixels") == "bb":  # what a camera set to emissivity 1 would have exported
        from envelope import radiometry
        pixels = np.asarray(radiometry.blackbody_reading(readings(), 0.95, 20.0), np.float32)
    root = write_survey(tmp_path / "s", v.get("toml", SURVEY_TOML), pixels, v.get("outlines"))
    out = tmp_path / "out"
    res = CliRunner().invoke(app, ["assess", str(root), "--out", str(out), "--quiet", "--draws", "500"])
    assert res.exit_code == 0, (name, res.output, res.exception)
    r = json.loads((out / "results.json").read_text())
    wall = next(e for e in r["elements"] if e["name"] == "test-wall")
    assert wall["u_w_m2k"] is not None and wall["u_low95_w_m2k"] < wall["u_high95_w_m2k"]
    # the scene's wall is U 0.5 (conftest); every variant keeps it inside its interval
    assert wall["u_low95_w_m2k"] <= 0.5 <= wall["u_high95_w_m2k"], (name, wall)
    for page in ("report.html", "check.html", "summary.html", "summary.pdf"):
        assert (out / page).stat().st_size > 0
    if name == "no-climate":
        assert wall["frsi_limit_mould"] is None and any("monthly climate" in n for n in r["notes"])
    if name == "no-prices":
        assert r["measures"] == [] and any("price" in n for n in r["notes"])
    if name == "din-criterion":
        assert r["frsi_limit"]["mould"]["value"] == pytest.approx(0.70)  # DIN 4108-2
    if name == "churchill-chu":
        assert wall["h_c_model"] == "churchill_chu" and 0.5 < wall["h_c_w_m2k"] < 3.0
