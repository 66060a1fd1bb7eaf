"""Readers of camera exports (envelope.readers, csvgrid, exportmeta): every dialect read to the
exact array or refused with a one-line message naming the file and the fix; none read wrongly.

Outside references: RFC 4180 (CSV: fields, CRLF records, double-quoted fields), the Unicode
Standard (byte order marks U+FEFF: EF BB BF in UTF-8, FF FE in UTF-16 LE), ISO/IEC 8859-1 and
Windows-1252 (the degree sign is byte 0xB0 in both), the TIFF 6.0 specification (a file holds
several image file directories, i.e. pages; SampleFormat 1 = unsigned integer, 3 = IEEE
float), the PNG specification (ISO/IEC 15948: greyscale bit depth 16), the 2019 SI brochure
(T/°C = T/K − 273.15) and NIST SP 811 (°F → °C: (t − 32) / 1.8, exact). Expected arrays are the
written text parsed by Python's own float() — the writer in tests/dialects.py shares no code
with the reader.
"""

from __future__ import annotations

import numpy as np
import pytest
import tifffile
from dialects import Dialect, expected, write_export
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from envelope.errors import SurveyError
from envelope.readers import MAX_PIXELS, load_pixels, read_export
from envelope.survey import ExportSettings

SHAPE = (12, 16)


def grid(seed=0, shape=SHAPE, nan_share=0.0):
    rng = np.random.default_rng(seed)
    v = np.round(rng.uniform(5.0, 22.0, shape), 2)
    if nan_share:
        v[rng.random(shape) < nan_share] = np.nan
    return v


def same(a, b):
    np.testing.assert_array_equal(a, b)  # NaN == NaN in assert_array_equal


# ---------------------------------------------------------------- the dialects of the issue
ISSUE_DIALECTS = {
    "semicolon-decimal-comma": Dialect(delim=";", decimal=","),
    "metadata-header": Dialect(header=["Thermal image export", "Emissivity: 0.95",
                                       "Reflected temperature = 20 °C", "Distance;3 m"]),
    "utf8-bom": Dialect(encoding="utf-8-sig"),
    "tab": Dialect(delim="\t"),
    "trailing-delimiter": Dialect(delim=";", trailing=True),
    "latin1-degree-sign": Dialect(delim=";", decimal=",", encoding="latin-1",
                                  header=["Atmospheric temperature: 20,0 °C"]),
    "crlf": Dialect(eol="\r\n"),
    "cr-only": Dialect(delim="\t", eol="\r"),
    "spaces-decimal-comma": Dialect(delim=" ", decimal=","),
    "spaces": Dialect(delim=" ", nan="nan"),
    "utf16": Dialect(delim="\t", encoding="utf-16", header=["Temperatur [°C]"]),
    "cp1252-header": Dialect(delim=";", decimal=",", encoding="cp1252",
                             header=["Emissivität;0,95", "Reflektierte Temperatur;20,0"]),
    "quoted-decimal-comma": Dialect(delim=",", decimal=",", quote=True),
    "row-column-numbers": Dialect(delim=";", labels=True),
    "kelvin-declared": Dialect(unit="K"),
    "fahrenheit-declared": Dialect(delim=";", decimal=",", unit="F"),
    "no-final-newline": Dialect(final_eol=False),
    "nan-cells": Dialect(delim=";", nan="nan"),
}


@pytest.mark.parametrize("case", list(ISSUE_DIALECTS))
def test_dialect_read_to_the_exact_array(tmp_path, case):
    d = ISSUE_DIALECTS[case]
    v = grid(1, nan_share=0.05 if case in ("nan-cells", "tab") else 0.0)
    if d.delim == " " and d.nan == "":
        v = grid(1)
    path = write_export(tmp_path / f"{case}.csv", v, d)
    got = load_pixels(path)
    assert got.dtype == np.float32 and got.shape == SHAPE  # never twice the width
    same(got, expected(v, d))


def test_semicolon_decimal_comma_is_not_twice_the_width(tmp_path):
    # the misread of the issue: "13,70;13,75" read as four pixels
    path = tmp_path / "a.csv"
    path.write_text("\n".join(";".join(["13,70", "13,75"] * 5) for _ in range(9)) + "\n")
    img = load_pixels(path)
    assert img.shape == (9, 10)
    assert img[0, 0] == np.float32(13.70) and img[0, 1] == np.float32(13.75)


def test_header_settings_offered_in_survey_units(tmp_path):
    # NIST SP 811: 68 °F = 20 °C exactly; 293.15 K = 20 °C (SI brochure); 50 % = 0.5
    d = Dialect(delim=";", decimal=",", encoding="cp1252", header=[
        "Emissivity: 0,95", "Reflected apparent temperature [K] = 293,15",
        "Atmospheric temperature;68 °F", "Object distance (m): 3,5", "Relative humidity: 50 %",
        "Date: 14.01.2026", "Time: 22:10:05", "Width: 16", "Height: 12", "Camera: model A"])
    ex = read_export(write_export(tmp_path / "h.csv", grid(), d))
    s = ex.settings
    assert s["emissivity"] == pytest.approx(0.95, abs=1e-12)
    assert s["reflected_c"] == pytest.approx(20.0, abs=1e-9)
    assert s["atmosphere_c"] == pytest.approx(20.0, abs=1e-9)
    assert s["distance_m"] == pytest.approx(3.5) and s["rh"] == pytest.approx(0.5)
    assert s["date"] == "2026-01-14" and s["time"] == "22:10"
    assert ex.header["Camera"] == "model A"
    assert "';'" in ex.dialect and "decimal mark ','" in ex.dialect


def test_ambiguous_date_left_out_with_note(tmp_path):
    d = Dialect(header=["Date: 03/04/2026"])
    ex = read_export(write_export(tmp_path / "d.csv", grid(), d))
    assert "date" not in ex.settings and any("cannot be told apart" in n for n in ex.notes)


# ---------------------------------------------------------------- refused, with the fix
def _refused(path, match, settings=None):
    with pytest.raises(SurveyError) as err:
        load_pixels(path, settings=settings)
    msg = str(err.value)
    assert str(path) in msg and "\n" not in msg, msg
    assert match in msg, msg
    return msg


def test_comma_delimiter_with_decimal_commas_is_refused(tmp_path):
    path = write_export(tmp_path / "cc.csv", grid(), Dialect(delim=",", decimal=","))
    _refused(path, "re-export with ';' or tab")


def test_both_decimal_marks_refused(tmp_path):
    text = "\n".join(";".join(["1.013,5"] * 10) for _ in range(10))
    (tmp_path / "g.csv").write_text(text)
    _refused(tmp_path / "g.csv", "both '.' and ','")


def test_rows_of_different_length_name_the_line(tmp_path):
    rows = [";".join(["20.5"] * 10)] * 10
    rows[6] += ";20.5"
    (tmp_path / "r.csv").write_text("Header: x\n" + "\n".join(rows) + "\n")
    _refused(tmp_path / "r.csv", "line 8: 11 values, but the first line of the grid has 10")


def test_header_size_disagreeing_with_grid_refused(tmp_path):
    path = write_export(tmp_path / "w.csv", grid(), Dialect(header=["Width: 32", "Height: 12"]))
    _refused(path, "header says 32 × 12 px")


def test_kelvin_by_mistake_gives_the_key_to_set(tmp_path):
    v = grid() + 273.15
    np.save(tmp_path / "k.npy", v.astype(np.float32))
    msg = _refused(tmp_path / "k.npy", 'unit = "K"')
    assert "subtract" not in msg
    img = load_pixels(tmp_path / "k.npy", settings=ExportSettings(unit="K"))
    # SI brochure: t/°C = T/K − 273.15; float32 storage of ~290 K is good to 3e-5 K
    np.testing.assert_allclose(img, grid(), atol=5e-5)


def test_header_and_survey_units_must_agree(tmp_path):
    path = write_export(tmp_path / "u.csv", grid(), Dialect(unit="K"))
    _refused(path, "header says the unit is K, the survey says C", ExportSettings(unit="C"))


# ---------------------------------------------------------------- TIFF, PNG, npy
def centikelvin(v):
    return np.round((v + 273.15) * 100).astype(np.uint16)


def test_integer_tiff_needs_scale_and_gets_the_exact_hint(tmp_path):
    v = grid()
    tifffile.imwrite(tmp_path / "ck.tif", centikelvin(v))
    msg = _refused(tmp_path / "ck.tif", "scale")
    assert 'scale = 0.01, unit = "K"' in msg and "looks like kelvin (subtract" not in msg
    img = load_pixels(tmp_path / "ck.tif", settings=ExportSettings(unit="K", scale=0.01))
    # centikelvin: resolution 0.01 K; float32 at ~290 K adds 3e-5 K
    np.testing.assert_allclose(img, v, atol=0.005 + 5e-5)


def test_two_page_tiff_with_thumbnail_first_reads_the_data_page(tmp_path):
    v = grid().astype(np.float32)
    with tifffile.TiffWriter(tmp_path / "two.tif") as tw:
        tw.write(np.zeros((6, 8, 3), np.uint8), photometric="rgb")   # preview picture
        tw.write(np.zeros((4, 4), np.float32))                         # small thumbnail
        tw.write(v, compression="zlib")
    same(load_pixels(tmp_path / "two.tif"), v)


def test_same_size_pages_ask_for_page_n(tmp_path):
    v = grid().astype(np.float32)
    with tifffile.TiffWriter(tmp_path / "stack.tif") as tw:
        tw.write(v + 1)
        tw.write(v)
    _refused(tmp_path / "stack.tif", "set `page = N`")
    same(load_pixels(tmp_path / "stack.tif", settings=ExportSettings(page=1)), v)
    _refused(tmp_path / "stack.tif", "`page = 5` but the file has 2 pages", ExportSettings(page=5))


def test_float64_lzw_tiff_read_as_float32(tmp_path):
    v = grid()
    tifffile.imwrite(tmp_path / "f.tif", v, compression="lzw")
    same(load_pixels(tmp_path / "f.tif"), v.astype(np.float32))


def test_png_16bit_with_scale_and_refusals(tmp_path):
    from PIL import Image

    v = grid()
    Image.fromarray(centikelvin(v)).save(tmp_path / "p.png")
    _refused(tmp_path / "p.png", "scale")
    img = load_pixels(tmp_path / "p.png", settings=ExportSettings(unit="K", scale=0.01))
    np.testing.assert_allclose(img, v, atol=0.005 + 5e-5)
    Image.fromarray(np.zeros((12, 16, 3), np.uint8)).save(tmp_path / "rgb.png")
    _refused(tmp_path / "rgb.png", "picture, not temperatures")


def test_npy_integers_need_scale_and_object_arrays_refused(tmp_path):
    np.save(tmp_path / "i.npy", centikelvin(grid()))
    _refused(tmp_path / "i.npy", "scale")
    np.save(tmp_path / "o.npy", np.array([[{"a": 1}] * 16] * 16, dtype=object), allow_pickle=True)
    _refused(tmp_path / "o.npy", "Python objects")


def test_scale_with_offset_in_celsius(tmp_path):
    # deci-degrees with an offset of -100 °C: value 1205 -> 20.5 °C (hand arithmetic)
    raw = np.full((10, 10), 1205, np.uint16)
    tifffile.imwrite(tmp_path / "o.tif", raw)
    img = load_pixels(tmp_path / "o.tif", settings=ExportSettings(unit="C", scale=0.1, offset=-100))
    assert float(img[0, 0]) == pytest.approx(20.5, abs=1e-5)


def test_oversized_tiff_refused_before_decoding(tmp_path):
    # declared 8192 x 4096 float32 (134 MB) of zeros compresses to a small file
    big = np.zeros((4096, 8192), np.float32)
    tifffile.imwrite(tmp_path / "big.tif", big, compression="zlib", tile=(256, 256))
    assert (tmp_path / "big.tif").stat().st_size < 2_000_000
    _refused(tmp_path / "big.tif", f"exceeds {MAX_PIXELS} pixels")


def test_binary_file_named_csv_refused_without_echo(tmp_path):
    secret = b"daemon:x:0:0:s3cr3tt0ken\x00\x01\x02"
    (tmp_path / "bin.csv").write_bytes(secret * 10)
    msg = _refused(tmp_path / "bin.csv", "not a text file")
    assert "s3cr3tt0ken" not in msg and "daemon" not in msg


def test_text_file_of_words_refused_without_echo(tmp_path):
    (tmp_path / "words.csv").write_text("s3cr3tt0ken-line\n" * 20)
    msg = _refused(tmp_path / "words.csv", "no line of numbers")
    assert "s3cr3tt0ken" not in msg


@pytest.mark.parametrize("name, content, expect", [
    ("empty.csv", b"", "the file is empty (0 bytes)"),
    ("empty.tif", b"", "the file is empty (0 bytes)"),
    ("blank.csv", b",,,,,,,,,,\n" * 12, "the grid holds no number: every cell is empty or 'nan'"),
    ("na.csv", (";".join(["N/A"] + ["12.5"] * 15) + "\n").encode() * 12,
     "line 1 holds numbers mixed with other text (such as 'N/A' or '--' for invalid pixels?)"),
])
def test_empty_and_invalid_only_files_refused_with_the_reason(tmp_path, name, content, expect):
    (tmp_path / name).write_bytes(content)
    _refused(tmp_path / name, expect)


@pytest.mark.parametrize("shape", [(1, 1), (1, 16), (16, 1), (4, 16)])
def test_tiny_images_refused_as_too_small(tmp_path, shape):
    tifffile.imwrite(tmp_path / "t.tif", np.full(shape, 18.0, np.float32))
    _refused(tmp_path / "t.tif", f"image of {shape[1]} × {shape[0]} px is too small")
    np.save(tmp_path / "t.npy", np.full(shape, 18.0))
    _refused(tmp_path / "t.npy", "too small")


# ---------------------------------------------------------------- property test
_HEADER_POOL = ["Thermal export", "Emissivity: 0.95", "Reflected temperature = 20 °C",
                "Distance;3 m", "Relative humidity: 45 %", "Camera = unit 7", "Notes",
                "Date: 2026-01-14", "Time;22:10", "Atmospheric temperature: 5 °C", "12;16"]


@st.composite
def dialects(draw):
    delim = draw(st.sampled_from([",", ";", "\t", " "]))
    decimal = draw(st.sampled_from([".", ","]))
    quote = delim == "," and decimal == "," and draw(st.booleans())
    return Dialect(
        delim=delim, decimal=decimal, quote=quote,
        header=draw(st.lists(st.sampled_from(_HEADER_POOL), max_size=5, unique=True)),
        encoding=draw(st.sampled_from(["utf-8", "utf-8-sig", "cp1252", "latin-1", "utf-16"])),
        eol=draw(st.sampled_from(["\n", "\r\n", "\r"])),
        trailing=delim != " " and draw(st.booleans()),
        final_eol=draw(st.booleans()), labels=draw(st.booleans()),
        unit=draw(st.sampled_from([None, "C", "K", "F"])),
        nan="nan" if delim == " " else draw(st.sampled_from(["", "nan"])),
        digits=draw(st.integers(1, 4)),
    )


@settings(max_examples=150, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(d=dialects(), shape=st.tuples(st.integers(8, 14), st.integers(8, 14)),
       seed=st.integers(0, 2**16), nan_share=st.sampled_from([0.0, 0.1]))
def test_random_dialects_exact_array_or_clear_error(tmp_path_factory, d, shape, seed, nan_share):
    v = grid(seed, shape, nan_share)
    path = write_export(tmp_path_factory.mktemp("d") / "x.csv", v, d)
    ambiguous = d.delim == "," and d.decimal == "," and not d.quote
    try:
        got = load_pixels(path)
    except SurveyError as exc:
        msg = str(exc)
        assert ambiguous, (d, msg)                      # only the ambiguous case is refused
        assert str(path) in msg and "\n" not in msg
        return
    assert not ambiguous, d                             # never read the ambiguous case
    same(got, expected(v, d))


# ---------------------------------------------------------------- the series air log
def _log(rows, header="time,indoor_air_c,outdoor_air_c,frame"):
    return header + "\n" + "\n".join(rows) + "\n"


_NIGHT = [f"2026-01-{14 + (h >= 24):02d}T{h % 24:02d}:{m:02d},21.0,{2.0 - h / 24:.2f},"
          for h in range(22, 27) for m in (0, 30)]   # 22:00 … 02:30, across midnight


@pytest.mark.parametrize("case, text, field, expect", [
    ("empty", "", None, "the air log is empty (0 bytes)"),
    ("header-only", _log([]), None, "the air log has a header but no rows"),
    ("semicolons", _log([r.replace(",", ";") for r in _NIGHT]).replace(",", ";"), None,
     "the header line is separated by ';'; expected a comma-separated log"),
    ("clock-times", _log([r[11:] for r in _NIGHT]), "time", "line 2: a clock time without its date"),
    ("day-first", _log(["14/01/2026 22:00,21.0,2.0,"] + _NIGHT[1:]), "time",
     "line 2: expected an ISO 8601 timestamp, year first"),
    ("date-not-advanced", _log([r.replace("2026-01-15", "2026-01-14") for r in _NIGHT]), "time",
     "line 6: its time 2026-01-14 00:00 goes back from line 5's (2026-01-14 23:30): a date not "
     "advanced past midnight?"),
    ("gap", _log(_NIGHT[:4] + [r.replace("2026-01-15", "2026-01-25") for r in _NIGHT[4:]]), "time",
     "the log jumps 240 h between 2026-01-14 23:30 and 2026-01-25 00:00"),
    ("kelvin", _log([r.replace(",21.0,", ",294.15,") for r in _NIGHT]), "indoor_air_c",
     "line 2: 294.15 is outside -30…45 °C; logged in kelvin? 294.15 K is 21.00 °C"),
    ("fahrenheit", _log([r.replace(",21.0,", ",69.8,") for r in _NIGHT]), "indoor_air_c",
     "logged in °F? 69.8 °F is 21.0 °C"),
])
def test_air_log_slips_refused_naming_the_line(tmp_path, case, text, field, expect):
    from envelope.readers import load_air_log

    (tmp_path / "log.csv").write_text(text)
    with pytest.raises(SurveyError) as err:
        load_air_log(tmp_path / "log.csv", "series/log.csv")
    assert err.value.file == "series/log.csv" and err.value.field == field, str(err.value)
    assert expect in err.value.detail, err.value.detail


def test_air_log_across_midnight_in_either_order(tmp_path):
    from envelope.readers import load_air_log

    for order in (_NIGHT, _NIGHT[::-1]):  # oldest first, or newest first as some loggers write
        (tmp_path / "log.csv").write_text(_log(order))
        df = load_air_log(tmp_path / "log.csv")
        assert df["hours"].tolist() == [0.5 * i for i in range(10)]


def test_no_data_value_among_good_readings_is_named(tmp_path):
    v = grid().astype(np.float32)
    v[::5, ::5] = -9999.0  # a camera's no-data value where NaN belongs
    tifffile.imwrite(tmp_path / "s.tif", v)
    _refused(tmp_path / "s.tif", "pixels read outside -60…200 °C (down to -9999) while the rest "
                                 "look right: a no-data value for invalid pixels?")


def test_kelvin_under_a_celsius_header_is_named(tmp_path):
    path = write_export(tmp_path / "k.csv", grid() + 273.15, Dialect(delim=";", header=["Unit: °C"]))
    _refused(path, "read as °C looks like kelvin: the file or the survey declares the wrong unit")


def test_series_frame_in_fahrenheit_is_refused_like_its_view(tmp_path):
    import shutil
    from pathlib import Path

    from envelope.survey import load_survey
    from envelope.views import SurveyFolder

    house = tmp_path / "house"
    shutil.copytree(Path(__file__).resolve().parents[1] / "example_house", house)
    frame = house / "series" / "frames" / "study-south-01.tif"
    tifffile.imwrite(frame, tifffile.imread(frame) * 1.8 + 32.0)
    s = load_survey(house)
    data = SurveyFolder(s).open_series(s.series[0])
    with pytest.raises(SurveyError) as err:
        for _ in data.frames():
            pass
    assert err.value.file == "series/frames/study-south-01.tif"
    assert 'readings in °F? then set `unit = "F"`' in err.value.detail


def test_celsius_under_a_kelvin_header_is_named(tmp_path):
    path = write_export(tmp_path / "c.csv", grid(), Dialect(delim=";", header=["Unit: K"]))
    _refused(path, "read as kelvin, the values look like °C")
