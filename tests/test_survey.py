"""Survey loading and bad input (SPEC §6): every broken survey gives a one-line message that
names the file and the field, exit code 2, and leaves no output folder behind."""

from __future__ import annotations

import json

import numpy as np
import pytest
from conftest import SURVEY_TOML, outlines_geojson, readings, write_survey
from typer.testing import CliRunner

from envelope.cli import app
from envelope.errors import SurveyError
from envelope.survey import load_pixels, load_survey

runner = CliRunner()


def test_valid_survey_loads(survey_dir):
    s = load_survey(survey_dir)
    assert s.site.name == "Test Cottage"
    assert list(s.elements) == ["test-wall", "test-window"]
    assert s.elements["test-window"].host == "test-wall"
    t = s.thermograms[0]
    assert t.side == "interior" and t.export.emissivity == 0.95
    assert s.climate.monthly_outdoor_c[0] == 2.0 and len(s.climate.monthly_outdoor_rh) == 12
    assert s.measures[0].thickness_m == 0.05
    img = load_pixels(t.file)
    assert img.dtype == np.float32 and img.shape == (120, 160)


def _toml(old, new):
    assert old in SURVEY_TOML, old
    return SURVEY_TOML.replace(old, new)


def _bowtie():
    g = outlines_geojson()
    g["features"][0]["geometry"]["coordinates"] = [[[0, 0], [160, 120], [160, 0], [0, 120], [0, 0]]]
    return g


def _unknown_element():
    g = outlines_geojson()
    g["features"][1]["properties"]["element"] = "kitchen-wall"
    return g


def _nan_half():
    p = readings()
    p[:80] = np.nan
    return p


# (id, survey mutation, text expected in the message)
BROKEN = [
    ("missing-pixel-file", dict(toml=_toml("room-north.npy", "room-south.npy")), "file not found"),
    ("wrong-shape", dict(pixels=np.zeros((3, 120, 160), np.float32)), "2-D"),
    ("nan-regions", dict(pixels=_nan_half()), "NaN"),
    ("emissivity-zero", dict(toml=_toml("emissivity = 0.93", "emissivity = 0.0")), "emissivity"),
    ("emissivity-above-one", dict(toml=_toml("emissivity = 0.84", "emissivity = 1.2")), "emissivity"),
    ("unknown-element-in-geojson", dict(outlines=_unknown_element()), "kitchen-wall"),
    ("self-intersecting-polygon", dict(outlines=_bowtie()), "features[0]"),
    ("kelvin-by-mistake", dict(pixels=readings() + 273.15), "kelvin"),
    ("empty-toml", dict(toml=""), "empty"),
    ("wrong-type", dict(toml=_toml("indoor_air_c = 21.0", 'indoor_air_c = "warm"')), "conditions.indoor_air_c"),
    ("rh-in-percent", dict(toml=_toml("indoor_rh = 0.5", "indoor_rh = 50")), "percent"),
    ("typo-key", dict(toml=_toml("reflected_c = 20.0\ndistance_m", "reflectd_c = 20.0\ndistance_m")), "did you mean"),
    ("wrong-version", dict(toml=_toml("version = 1", "version = 7")), "version"),
    ("duplicate-element", dict(toml=_toml('name = "test-window"', 'name = "test-wall"')), "duplicate"),
    ("missing-required", dict(toml=_toml("reflected_c = 20.0\ndistance_m", "distance_m")), "reflected_c"),
    ("bad-toml-syntax", dict(toml=SURVEY_TOML + "\n[conditions\n"), "TOML"),
    ("unknown-host", dict(toml=_toml('host = "test-wall"', 'host = "gable"')), "host"),
    ("path-outside-folder", dict(toml=_toml('"thermograms/room-north.npy"', '"../room-north.npy"')), "inside the survey folder"),
    ("pickled-object-array", dict(pixels=np.array([[{"a": 1}] * 16] * 16, dtype=object)), "pixel"),
    ("band-reversed", dict(toml=_toml("accuracy_k = 1.0", "band_um = [14.0, 7.5]\naccuracy_k = 1.0")), "band_um"),
    ("eleven-months", dict(toml=_toml("monthly_outdoor_c = [2.0, ", "monthly_outdoor_c = [")), "12"),
    ("indoor-colder", dict(toml=_toml("indoor_air_c = 21.0", "indoor_air_c = -5.0")), "indoor"),
    ("window-outside-wall", dict(outlines={"type": "FeatureCollection", "features": [
        outlines_geojson()["features"][1]]}), "test-window"),
    ("no-scale", dict(toml=_toml("[thermograms.known_length]\npixel_a = [0, 119.5]\npixel_b = [160, 119.5]\nlength_m = 4.0\n", "")), "reference_points"),
    # a tired surveyor's slips: each refused with the fix in the message
    ("unit-in-number", dict(toml=_toml("indoor_air_c = 21.0", 'indoor_air_c = "21 C"')),
     "write the number alone, without quotes or unit: 21"),
    ("decimal-comma-as-text", dict(toml=_toml("emissivity = 0.93", 'emissivity = "0,93"')),
     "with a decimal point: 0.93"),
    ("decimal-comma-bare", dict(toml=_toml("emissivity = 0.93", "emissivity = 0,93")),
     "decimal point, not a comma"),
    ("number-in-quotes", dict(toml=_toml("outdoor_air_c = 1.0", 'outdoor_air_c = "1.0"')),
     "without quotes: 1.0"),
    ("rh-percent-as-text", dict(toml=_toml("indoor_rh = 0.5", 'indoor_rh = "50%"')),
     "write the fraction without quotes or %: 0.5"),
    ("reflected-in-kelvin", dict(toml=_toml("reflected_c = 20.0\ndistance_m", "reflected_c = 293.15\ndistance_m")),
     "thermograms[0].reflected_c: expected a value in [-80, 200] [°C], got 293.15 — was it given in kelvin? 293.15 K is 20.00 °C"),
    ("indoor-air-in-kelvin", dict(toml=_toml("indoor_air_c = 21.0", "indoor_air_c = 294.15")),
     "kelvin? 294.15 K is 21.00 °C"),
    ("indoor-air-in-fahrenheit", dict(toml=_toml("indoor_air_c = 21.0", "indoor_air_c = 70")),
     "°F? 70 °F is 21.1 °C"),
    ("emissivity-in-percent", dict(toml=_toml("emissivity = 0.93", "emissivity = 93")),
     "percent? write 0.93"),
    ("efficiency-in-percent", dict(toml=_toml("heating_efficiency = 0.9", "heating_efficiency = 90")),
     "percent? write 0.9"),
    ("summer-survey", dict(toml=_toml("outdoor_air_c = 1.0", "outdoor_air_c = 26.0")),
     "conditions.indoor_air_c: indoor air 21 °C is not warmer than outdoor air 26 °C"),
    ("key-in-wrong-table", dict(toml=_toml("noise_k = 0.05", "noise_k = 0.05\nindoor_rh = 0.5")),
     "camera.indoor_rh: unknown key here (it belongs in [conditions] or [climate])"),
    ("key-given-twice", dict(toml=_toml("indoor_air_c = 21.0", "indoor_air_c = 21.0\nindoor_air_c = 20.0")),
     "given twice"),
    ("text-without-quotes", dict(toml=_toml('town = "Nowhere Parva"', "town = Nowhere Parva")),
     "text goes in double quotes"),
    # readings that cannot be what the survey says they are (read as declared, they would
    # give plausible but wrong numbers)
    ("fahrenheit-without-header", dict(pixels=readings() * 1.8 + 32.0), 'readings in °F? then set `unit = "F"`'),
    ("fahrenheit-declared-for-celsius", dict(toml=_toml("[thermograms.export]\n", '[thermograms.export]\nunit = "F"\n')),
     "the median reading -7.0 °C of this interior view is 8 K below the outdoor air (1 °C)"),
    ("frozen-export", dict(pixels=np.full((120, 160), 18.25, np.float32)), "every valid pixel reads 18.25 °C"),
    ("probe-far-from-image", dict(toml=_toml("[thermograms.known_length]", "[[thermograms.probes]]\npixel_xy = [30.5, 30.5]\nsurface_c = 64.0\n\n[thermograms.known_length]")),
     "thermograms[room-north].probes[0]: contact probe 0 at (30.5, 30.5) px read 64 °C where the image reads"),
    ("reflected-typo", dict(toml=_toml("reflected_c = 20.0\ndistance_m", "reflected_c = 60.0\ndistance_m")),
     "thermograms[0].reflected_c: 60 °C is 39 K above the indoor air (21 °C) for an interior view"),
    ("reference-points-in-mm", dict(toml=_toml("[thermograms.known_length]\npixel_a = [0, 119.5]\npixel_b = [160, 119.5]\nlength_m = 4.0",
                                               "[thermograms.reference_points]\npixel_xy = [[0, 0], [160, 0], [160, 120], [0, 120]]\n"
                                               "metre_xy = [[0, 3000], [4000, 3000], [4000, 0], [0, 0]]")),
     "reference_points.metre_xy: expected metres on the element plane, within ±100 m (a wall is a few metres); 4000 looks like millimetres"),
    ("known-length-in-cm", dict(toml=_toml("length_m = 4.0", "length_m = 400")), "centimetres? 400 cm is 4 m"),
    ("distance-in-cm", dict(toml=_toml("distance_m = 3.0", "distance_m = 300")), "distance_m: expected a value in (0, 200] [m], got 300 — was it given in centimetres? 300 cm is 3 m"),
    ("wall-tilt-in-radians", dict(toml=_toml('kind = "wall"\n', 'kind = "wall"\ntilt_deg = 1.5708\n')),
     "elements[0].tilt_deg: a wall stands near 90° from horizontal, got 1.5708° (in radians?"),
    ("path-with-backslash", dict(toml=_toml('"thermograms/room-north.npy"', '"thermograms\\\\room-north.npy"')),
     "separate folders with '/'"),
    ("path-in-wrong-case", dict(toml=_toml('"thermograms/room-north.npy"', '"Thermograms/Room-North.npy"')),
     "did you mean 'thermograms/room-north.npy'? (letter case matters)"),
    ("version-in-quotes", dict(toml=_toml("version = 1", 'version = "1"')), "write the number without quotes: 1"),
    ("tape-outside-image", dict(toml=_toml("[thermograms.known_length]", "[[thermograms.tapes]]\npixel_xy = [1600, 50]\nemissivity = 0.95\n"
                                                                         "surface_pixel_xy = [30, 50]\n\n[thermograms.known_length]")),
     "thermograms[room-north].tapes[0].pixel_xy: pixel [1600, 50] lies outside the 160 × 120 px image"),
    ("element-names-differ-in-case", dict(toml=_toml('name = "test-window"', 'name = "Test-Wall"')),
     "elements[1].name: element name 'Test-Wall' differs from 'test-wall' only in letter case"),
]


@pytest.mark.parametrize("case,mutation,expect", BROKEN, ids=[b[0] for b in BROKEN])
def test_broken_survey_exit_2_nothing_written(tmp_path, case, mutation, expect):
    root = tmp_path / "survey"
    write_survey(root, mutation.get("toml", SURVEY_TOML), mutation.get("pixels"), mutation.get("outlines"))
    if case == "pickled-object-array":  # np.save needs allow_pickle for object arrays
        np.save(root / "thermograms" / "room-north.npy", mutation["pixels"], allow_pickle=True)
    before = sorted(p.name for p in tmp_path.iterdir())
    out = tmp_path / "out"
    res = runner.invoke(app, ["assess", str(root), "--out", str(out), "--quiet"])
    assert res.exit_code == 2, (case, res.output, res.exception)
    msg = res.output.strip()
    assert msg.startswith("envelope: error:"), msg
    assert len(msg.splitlines()) == 1, msg          # one line, no traceback
    assert expect.lower() in msg.lower(), (case, msg)
    assert not out.exists()                          # nothing half-written
    assert sorted(p.name for p in tmp_path.iterdir()) == before


@pytest.mark.parametrize("encoding, expect", [
    ("utf-16", "survey.toml: saved as UTF-16 text; save it as UTF-8"),
    ("cp1252", "survey.toml: not UTF-8 text (line 10, byte"),
])
def test_survey_file_in_another_encoding_is_refused_with_the_fix(tmp_path, encoding, expect):
    root = write_survey(tmp_path / "s", _toml('surveyor = "T. Tester"', 'surveyor = "T. Testé"'))
    (root / "survey.toml").write_bytes((root / "survey.toml").read_text("utf-8").encode(encoding))
    res = runner.invoke(app, ["assess", str(root), "--out", str(tmp_path / "out"), "--quiet"])
    assert res.exit_code == 2 and expect in res.output, res.output
    assert len(res.output.strip().splitlines()) == 1 and not (tmp_path / "out").exists()


@pytest.mark.parametrize("variant", ["bom", "crlf", "tabs"])
def test_survey_file_with_bom_crlf_or_tabs_loads_the_same(tmp_path, variant):
    text = {"bom": "\ufeff" + SURVEY_TOML, "crlf": SURVEY_TOML.replace("\n", "\r\n"),
            "tabs": SURVEY_TOML.replace(" = ", "\t=\t")}[variant]
    got = load_survey(write_survey(tmp_path / "s", text))
    plain = load_survey(write_survey(tmp_path / "plain"))
    for part in ("site", "conditions", "camera", "climate", "prices", "analysis", "elements",
                 "measures"):
        assert getattr(got, part) == getattr(plain, part), part


def _second_view(tmp_path, new_id):
    """The test survey with its thermogram block repeated under id `new_id` (same file)."""
    block = SURVEY_TOML[SURVEY_TOML.index("[[thermograms]]"): SURVEY_TOML.index("[[measures]]")]
    text = SURVEY_TOML + "\n" + block.replace('id = "room-north"', f'id = "{new_id}"')
    return write_survey(tmp_path / "s", text)


def test_two_views_naming_one_pixel_file_are_refused(tmp_path):
    root = _second_view(tmp_path, "room-south")
    with pytest.raises(SurveyError, match="the same pixel file as thermogram 'room-north'") as err:
        load_survey(root)
    assert err.value.field == "thermograms[1].file"


def test_thermogram_ids_differing_in_case_are_refused(tmp_path):
    root = _second_view(tmp_path, "Room-North")
    with pytest.raises(SurveyError, match="differs from 'room-north' only in letter case") as err:
        load_survey(root)
    assert err.value.field == "thermograms[1].id"


def test_messages_name_file_and_field(tmp_path):
    root = write_survey(tmp_path / "s", _toml("emissivity = 0.84", "emissivity = 1.2"))
    with pytest.raises(SurveyError) as err:
        load_survey(root)
    assert err.value.file.endswith("survey.toml")
    assert err.value.field == "elements[1].emissivity"


def test_inputs_never_modified(survey_dir, tmp_path):
    files = sorted(p for p in survey_dir.rglob("*") if p.is_file())
    before = {p: p.read_bytes() for p in files}
    res = runner.invoke(app, ["assess", str(survey_dir), "--out", str(tmp_path / "o"), "--quiet"])
    assert res.exit_code == 0, res.output
    assert sorted(p for p in survey_dir.rglob("*") if p.is_file()) == files
    assert all(p.read_bytes() == b for p, b in before.items())


def test_csv_and_tiff_pixels_read_like_npy(tmp_path):
    import tifffile

    img = readings()
    np.savetxt(tmp_path / "a.csv", img, delimiter=",", fmt="%.5f")
    tifffile.imwrite(tmp_path / "a.tif", img, compression="zlib")
    np.testing.assert_allclose(load_pixels(tmp_path / "a.csv"), img, atol=1e-5)
    np.testing.assert_array_equal(load_pixels(tmp_path / "a.tif"), img)
    rows = [",".join(["20.5"] * 10)] * 10
    rows[4] = rows[4][:-4] + "x"
    (tmp_path / "b.csv").write_text("\n".join(rows) + "\n")
    with pytest.raises(SurveyError, match="line 5, value 10: not a number"):
        load_pixels(tmp_path / "b.csv")


def test_output_folder_not_overwritten(survey_dir, tmp_path):
    out = tmp_path / "out"
    out.mkdir()
    (out / "keep.txt").write_text("mine")
    res = runner.invoke(app, ["assess", str(survey_dir), "--out", str(out), "--quiet"])
    assert res.exit_code == 2 and "not empty" in res.output
    assert (out / "keep.txt").read_text() == "mine"


def test_geojson_not_json(tmp_path):
    root = write_survey(tmp_path / "s")
    (root / "outlines" / "room-north.geojson").write_text("{not json")
    res = runner.invoke(app, ["inspect", str(root)])
    assert res.exit_code == 2 and "room-north.geojson" in res.output


def test_inspect_prints_what_it_found(survey_dir):
    res = runner.invoke(app, ["inspect", str(survey_dir)])
    assert res.exit_code == 0, res.output
    assert "test-wall" in res.output and "room-north" in res.output
    res = runner.invoke(app, ["inspect", str(survey_dir), "--json"])
    info = json.loads(res.output)
    assert info["thermograms"][0]["shape_px"] == [120, 160]


# ---- property test: whatever a tired surveyor types, the loader answers with a SurveyError
# or a survey, never a traceback

from hypothesis import HealthCheck, given, settings  # noqa: E402
from hypothesis import strategies as st  # noqa: E402

_LINES = [i for i, line in enumerate(SURVEY_TOML.splitlines()) if " = " in line]
_scalars = st.one_of(
    st.integers(-10**6, 10**6).map(str), st.floats(allow_nan=True, allow_infinity=True).map(
        lambda x: "nan" if x != x else ("inf" if x == float("inf") else ("-inf" if x == float("-inf") else repr(x)))),
    st.booleans().map(lambda b: "true" if b else "false"),
    st.text(st.characters(codec="utf-8", exclude_characters='"\\\n\r'), max_size=12).map(lambda t: f'"{t}"'),
    st.just("[]"), st.just("{}"), st.just('[1, "a"]'), st.just("[[0, 0], [1]]"), st.just("1979-05-27"),
)


@settings(max_examples=60, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(picks=st.lists(st.tuples(st.sampled_from(_LINES), _scalars), min_size=1, max_size=3))
def test_loader_never_raises_anything_but_survey_error(tmp_path_factory, picks):
    lines = SURVEY_TOML.splitlines()
    for i, value in picks:
        key = lines[i].split(" = ")[0]
        lines[i] = f"{key} = {value}"
    root = write_survey(tmp_path_factory.mktemp("h"), "\n".join(lines) + "\n")
    try:
        load_survey(root)
    except SurveyError as exc:
        assert str(exc)  # a message, naming what it can


# ---- issue 12 (loader side): identifiers, free text, paths, self-references, file faults.
# Each case: `assess` exits 2 with one line naming the file and the key, the inputs are
# byte-identical afterwards and nothing is written beside --out.

def _snapshot(root):
    def content(p):
        with open(p, "rb") as fh:
            return fh.read()

    return {p: (content(p) if p.is_file() and not p.is_symlink() else None)
            for p in sorted(root.rglob("*"))}


def _assess_refuses(tmp_path, root, expect):
    before = _snapshot(root)
    siblings = sorted(p.name for p in tmp_path.iterdir())
    out = tmp_path / "out"
    res = runner.invoke(app, ["assess", str(root), "--out", str(out), "--quiet"])
    assert res.exit_code == 2, (res.output, res.exception)
    msg = res.output.strip()
    assert msg.startswith("envelope: error:") and len(msg.splitlines()) == 1, msg
    for e in expect:
        assert e.lower() in msg.lower(), (e, msg)
    assert not out.exists()
    assert sorted(p.name for p in tmp_path.iterdir()) == siblings
    assert _snapshot(root) == before
    return msg


LONG = "x" * 300
ID_CASES = [
    ("thermogram-id-300-chars", ('id = "room-north"', f'id = "{LONG}"'), "thermograms[0].id"),
    ("thermogram-id-with-nul", ('id = "room-north"', 'id = "room\\u0000north"'), "thermograms[0].id"),
    ("thermogram-id-path-traversal", ('id = "room-north"', 'id = "../../x"'), "thermograms[0].id"),
    ("thermogram-id-leading-dot", ('id = "room-north"', 'id = ".hidden"'), "thermograms[0].id"),
    ("element-name-with-dollar-math", ('name = "test-window"', 'name = "$\\\\frac{1}{0}$"'), "elements[1].name"),
    ("element-name-with-slash", ('name = "test-window"', 'name = "a/b"'), "elements[1].name"),
    ("element-name-with-escape", ('name = "test-window"', 'name = "win\\u001b[31m"'), "elements[1].name"),
    ("series-id-traversal", ('[[measures]]', '[[series]]\nid = "../../evil"\nthermogram = "room-north"\n'
                             'element = "test-wall"\nair_log = "log.csv"\n\n[[measures]]'), "series[0].id"),
]
TEXT_CASES = [
    ("site-name-too-long", ('name = "Test Cottage"', f'name = "{"y" * 201}"'), "site.name"),
    ("site-name-control-char", ('name = "Test Cottage"', 'name = "Test\\u0007Cottage"'), "site.name"),
    ("surveyor-line-break", ('surveyor = "T. Tester"', 'surveyor = "T.\\nTester"'), "survey.surveyor"),
    ("town-bidi-override", ('town = "Nowhere Parva"', 'town = "Nowhere\\u202eParva"'), "site.town"),
    ("measure-name-control-char", ('name = "Insulate the wall"', 'name = "Insulate\\u0000"'), "measures[0].name"),
    ("camera-label-too-long", ('accuracy_k = 1.0', f'label = "{"c" * 250}"\naccuracy_k = 1.0'), "camera.label"),
]
SELF_CASES = [
    ("window-hosted-by-itself", ('host = "test-wall"', 'host = "test-window"'), "elements[1].host"),
    ("host-not-wall-or-roof", ('kind = "wall"\nu_specified', 'kind = "floor"\nu_specified'), "elements[1].host"),
    ("pressure-pair-with-itself", ('[[measures]]', '[[pressure_pairs]]\nbaseline = "room-north"\n'
                                   'depressurised = "room-north"\npressure_difference_pa = 50\n\n[[measures]]'),
     "pressure_pairs[0].depressurised"),
    ("junction-with-itself", ('[[measures]]', '[[junctions]]\nelements = ["test-wall", "test-wall"]\n'
                              'junction_type = "corner"\n\n[[measures]]'), "junctions[0].elements"),
    ("airtightness-both-results", ('[[measures]]', '[airtightness]\nn50_per_h = 5.0\nq50_m3_h_m2 = 4.0\n\n[[measures]]'),
     "airtightness.n50_per_h"),
]


@pytest.mark.parametrize("case,edit,field", ID_CASES + TEXT_CASES + SELF_CASES,
                         ids=[c[0] for c in ID_CASES + TEXT_CASES + SELF_CASES])
def test_loader_refuses_unsafe_or_self_referencing_input(tmp_path, case, edit, field):
    root = write_survey(tmp_path / "survey", _toml(*edit))
    if case == "series-id-traversal":
        (root / "log.csv").write_text("time,indoor_air_c,outdoor_air_c,frame\n")
    msg = _assess_refuses(tmp_path, root, ["survey.toml", field])
    assert "\x00" not in msg and "\x1b" not in msg and "\u202e" not in msg


def test_symlinked_thermogram_outside_survey_refused_without_echo(tmp_path):
    secret = tmp_path / "secret.npy"
    np.save(secret, readings())
    root = write_survey(tmp_path / "survey")
    (root / "thermograms" / "room-north.npy").unlink()
    (root / "thermograms" / "room-north.npy").symlink_to(secret)
    _assess_refuses(tmp_path, root, ["thermograms[0].file", "outside the survey folder"])


def test_symlinked_outline_outside_survey_refused_without_echo(tmp_path):
    foreign = tmp_path / "foreign.geojson"
    foreign.write_text('{"s3cr3tt0ken": 1}')
    root = write_survey(tmp_path / "survey")
    (root / "outlines" / "room-north.geojson").unlink()
    (root / "outlines" / "room-north.geojson").symlink_to(foreign)
    msg = _assess_refuses(tmp_path, root, ["thermograms[0].outlines", "outside the survey folder"])
    assert "s3cr3tt0ken" not in msg


def test_survey_toml_that_is_a_directory_is_one_line_error(tmp_path):
    root = tmp_path / "survey"
    (root / "survey.toml").mkdir(parents=True)
    _assess_refuses(tmp_path, root, ["survey.toml", "expected a file"])


def test_unreadable_survey_toml_is_one_line_error(tmp_path, monkeypatch):
    root = write_survey(tmp_path / "survey")
    real = type(root).read_bytes

    def denied(self):
        if self.name == "survey.toml":
            raise PermissionError(13, "Permission denied", str(self))
        return real(self)

    monkeypatch.setattr(type(root), "read_bytes", denied)
    _assess_refuses(tmp_path, root, ["survey.toml", "permission"])


def test_survey_path_that_is_a_csv_file_is_refused(tmp_path):
    f = tmp_path / "grid.csv"
    f.write_text("1,2\n")
    res = runner.invoke(app, ["inspect", str(f)])
    assert res.exit_code == 2 and "expected a survey folder" in res.output


def test_missing_folder_points_to_init(tmp_path):
    res = runner.invoke(app, ["inspect", str(tmp_path / "nowhere")])
    assert res.exit_code == 2 and "envelope init" in res.output
    (tmp_path / "empty").mkdir()
    res = runner.invoke(app, ["inspect", str(tmp_path / "empty")])
    assert res.exit_code == 2 and "envelope init" in res.output


def test_deeply_nested_geojson_is_a_clear_error(tmp_path):
    root = write_survey(tmp_path / "survey")
    (root / "outlines" / "room-north.geojson").write_text("[" * 100000 + "]" * 100000)
    res = runner.invoke(app, ["inspect", str(root)])
    assert res.exit_code == 2 and "room-north.geojson" in res.output and "Traceback" not in res.output
    _assess_refuses(tmp_path, root, ["room-north.geojson"])


def test_deeply_nested_toml_is_a_clear_error(tmp_path):
    root = write_survey(tmp_path / "survey", SURVEY_TOML + "\ndeep = " + "[" * 5000 + "]" * 5000 + "\n")
    _assess_refuses(tmp_path, root, ["survey.toml"])


def test_all_required_keys_in_one_message(tmp_path):
    toml = _toml("indoor_air_c = 21.0\n", "").replace("outdoor_air_c = 1.0\n", "").replace(
        "reflected_c = 20.0\ndistance_m", "distance_m").replace('name = "Test Cottage"', 'name = "fill in"')
    root = write_survey(tmp_path / "survey", toml)
    msg = _assess_refuses(tmp_path, root, ["4 required keys"])
    for key in ("site.name", "conditions.indoor_air_c", "conditions.outdoor_air_c", "thermograms[0].reflected_c"):
        assert key in msg


def test_outlines_file_without_features_loads_and_inspect_lists_it(tmp_path):
    root = write_survey(tmp_path / "survey", outlines={"type": "FeatureCollection", "features": []})
    load_survey(root)  # not a load error
    res = runner.invoke(app, ["inspect", str(root)])
    assert res.exit_code == 0, res.output
    assert "Still needed" in res.output and "no outline yet" in res.output


def test_native_toml_date_and_new_keys_load(tmp_path):
    toml = _toml('date = "2026-01-10"', "date = 2026-01-10").replace(
        "[conditions]\n", '[conditions]\ntime = "22:30"\n').replace(
        'kind = "wall"\nu_specified_w_m2k = 0.6',
        'kind = "wall"\nu_specified_w_m2k = 0.6\nlabel = "Lounge, north wall"\n'
        'heat_capacity_kj_m2k = 180\nu_specified_basis = "air"').replace(
        "[thermograms.export]", 'mrt_c = 19.5\nmrt_std_k = 0.4\n\n[thermograms.heat_flux_meter]\n'
        'pixel_xy = [40, 40]\nq_w_m2 = 9.5\nq_std_w_m2 = 0.6\n\n[thermograms.export]') + (
        '\n[airtightness]\nn50_per_h = 4.2\nvolume_m3 = 310\nstoreys = 2\n'
        '\n[[junctions]]\nelements = ["test-wall", "test-window"]\njunction_type = "window-reveal"\n'
        'psi_specified_w_mk = 0.05\n')
    s = load_survey(write_survey(tmp_path / "s", toml))
    assert s.date == "2026-01-10" and s.conditions.time == "22:30"
    t = s.thermograms[0]
    assert t.time == "22:30" and t.mrt_c == 19.5 and t.mrt_std_k == 0.4      # default from conditions
    assert t.heat_flux_meter.q_w_m2 == 9.5 and t.heat_flux_meter.surface_c is None
    w = s.elements["test-wall"]
    assert w.label == "Lounge, north wall" and w.heat_capacity_kj_m2k == 180 and w.u_specified_basis == "air"
    assert s.elements["test-window"].u_specified_basis == "environmental"
    assert s.airtightness.n50_per_h == 4.2 and s.airtightness.shielding == "normal"
    assert s.junctions[0].elements == ("test-wall", "test-window")


def test_small_temperature_difference_is_assessed_and_flagged_not_a_crash(tmp_path):
    # ΔT of 0.5 K on readings of a cold night: the surfaces sit below the stated outdoor air,
    # so no pixel loses heat outwards; the run finishes with the night marked not valid
    root = write_survey(tmp_path / "s", _toml("outdoor_air_c = 1.0", "outdoor_air_c = 20.5")
                        .replace("outdoor_history_c = [1.5, 1.3, 1.2, 1.0]", ""))
    out = tmp_path / "out"
    res = runner.invoke(app, ["assess", str(root), "--out", str(out), "--quiet", "--draws", "200"])
    assert res.exit_code == 0, res.output
    results = json.loads((out / "results.json").read_text(encoding="utf-8"))
    assert {c["name"]: c["status"] for c in results["checks"]}["delta_t"] == "fail"
    wall = next(e for e in results["elements"] if e["name"] == "test-wall")
    assert wall["risk"] == "not assessed" and "not warmer than the outdoor air" in wall["risk_note"]


@pytest.mark.parametrize("command", ["assess", "inspect"])
def test_outline_errors_name_the_file_as_the_survey_does(tmp_path, command):
    root = write_survey(tmp_path / "s", outlines=_bowtie())
    args = [command, str(root)] + (["--out", str(tmp_path / "out"), "--quiet"] if command == "assess" else [])
    res = runner.invoke(app, args)
    assert res.exit_code == 2, res.output
    line = next(ln for ln in res.output.splitlines() if ln.startswith("envelope: error:"))
    assert "outlines/room-north.geojson: features[0].geometry.coordinates" in line, line
    assert str(tmp_path) not in res.output   # no full path of the user's disk in messages
