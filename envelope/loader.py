"""survey.toml → `envelope.survey` dataclasses, with validation (edge).

Every key is checked (type, range, unit) and every error names the file and the key. Unknown
keys are errors with the closest valid key suggested. Required keys that are missing or left
as the placeholder ``"fill in"`` are collected and reported together, in one message; with
``incomplete=True`` they are returned as the survey's ``todo`` list instead (for `inspect`).

Identifiers that become parts of file names (thermogram ids, element names, series ids) are
ASCII letters, digits, ``-``, ``_`` and ``.``, not starting with ``.``, at most
`MAX_ID_CHARS` long. Free-text fields are at most `MAX_TEXT_CHARS` long and may not hold
control characters (they are refused, not stripped). Every file the survey names must lie
inside the survey folder, also after following symbolic links.
"""

from __future__ import annotations

import math
import re
import tomllib
from pathlib import Path

from .errors import SurveyError
from .survey import (
    ELEMENT_KINDS,
    EXTERIOR_CONVECTION,
    FORMAT_NAME,
    FORMAT_VERSION,
    FRSI_CRITERIA,
    HEAT_FLOW,
    HOST_KINDS,
    HUMIDITY_MODELS,
    INTERIOR_CONVECTION,
    MEASURE_KINDS,
    PLACEHOLDER,
    SHIELDING,
    SIDES,
    SKY_MODELS,
    SURVEY_FILE,
    U_BASES,
    UNITS,
    Airtightness,
    Analysis,
    Camera,
    Climate,
    Conditions,
    Element,
    ExportSettings,
    HeatFluxMeter,
    Junction,
    KnownLength,
    Measure,
    PressurePair,
    Prices,
    Probe,
    ReferencePoints,
    Series,
    Site,
    Survey,
    Tape,
    Thermogram,
)
from .tomltable import KEY_HOMES, _clip, _short, check_identifier, check_text
from .tomltable import REQUIRED as _REQUIRED
from .tomltable import Table as _Table

_SLUG = re.compile(r"[a-z0-9]+(?:-[a-z0-9]+)*\Z")

__all__ = ["load", "find_survey_file", "check_identifier", "check_text", "PIXEL_SUFFIXES",
           "MAX_SURVEY_BYTES"]

_KEYS = {
    "": ("format", "version", "site", "survey", "conditions", "camera", "climate", "prices",
         "analysis", "elements", "thermograms", "pressure_pairs", "series", "measures",
         "airtightness", "junctions"),
    "site": ("name", "address", "town", "latitude_deg"),
    "survey": ("date", "surveyor", "client"),
    "conditions": ("indoor_air_c", "outdoor_air_c", "indoor_rh", "outdoor_rh", "wind_m_s", "rain",
                   "hours_since_rain", "sky_cloud_oktas", "air_uncertainty_k",
                   "wind_uncertainty_m_s", "outdoor_history_c", "indoor_history_c",
                   "history_interval_h", "time"),
    "camera": ("label", "band_um", "accuracy_k", "relative_accuracy_k", "noise_k", "offset_k",
               "offset_uncertainty_k"),
    "climate": ("heating_degree_days_kd", "design_indoor_c", "design_outdoor_c",
                "monthly_outdoor_c", "monthly_outdoor_rh", "monthly_indoor_c", "indoor_humidity",
                "humidity_class", "indoor_rh", "moisture_kg_h", "air_changes_per_h", "volume_m3",
                "frsi_criterion"),
    "prices": ("currency", "energy_price_per_kwh", "heating_efficiency", "co2_kg_per_kwh"),
    "analysis": tuple(Analysis.__dataclass_fields__),
    "elements": tuple(Element.__dataclass_fields__),
    "thermograms": (
        "id", "file", "outlines", "side", "reflected_c", "reflected_uncertainty_k", "emissivity",
        "emissivity_uncertainty", "emissivity_by_element", "distance_m", "transmittance",
        "atmosphere_c", "view_angle_deg", "hours_since_sun", "export", "reference_points",
        "known_length", "probes", "tapes", "reflected_by_camera", "time", "mrt_c", "mrt_std_k",
        "heat_flux_meter", "elements"),
    "thermograms.export": ("emissivity", "reflected_c", "transmittance", "atmosphere_c", "unit",
                           "scale", "offset", "page"),
    "thermograms.reference_points": ("pixel_xy", "metre_xy"),
    "thermograms.known_length": ("pixel_a", "pixel_b", "length_m"),
    "thermograms.probes": ("pixel_xy", "surface_c", "uncertainty_k"),
    "thermograms.tapes": ("pixel_xy", "emissivity", "surface_pixel_xy"),
    "thermograms.heat_flux_meter": ("pixel_xy", "q_w_m2", "q_std_w_m2", "surface_c"),
    "pressure_pairs": ("baseline", "depressurised", "pressure_difference_pa"),
    "series": ("id", "thermogram", "element", "air_log"),
    "measures": ("name", "kind", "cost", "elements", "defect_classes", "thickness_m",
                 "conductivity_w_mk", "new_u_w_m2k", "new_psi_w_mk", "leak_fraction_removed"),
    "airtightness": ("n50_per_h", "q50_m3_h_m2", "volume_m3", "envelope_area_m2", "storeys",
                     "shielding"),
    "junctions": ("elements", "junction_type", "psi_specified_w_mk"),
}
"""The keys of every table of survey.toml (``thermograms.export`` for each
``[thermograms.export]``)."""
for _table, _keys in _KEYS.items():
    for _key in _keys:
        if _table:
            KEY_HOMES[_key] = (*KEY_HOMES.get(_key, ()), f"[{_table}]")
del _table, _keys, _key

PIXEL_SUFFIXES = (".tif", ".tiff", ".npy", ".csv", ".txt", ".tsv", ".asc", ".png")
"""File types a thermogram's pixels may come in."""
MAX_SURVEY_BYTES = 4 * 1024 * 1024
# --------------------------------------------------------------------------- files
def find_survey_file(folder) -> Path:
    """The survey TOML inside `folder` (``survey.toml``, or the only ``*.toml``)."""
    folder = Path(folder)
    try:
        if folder.is_file():
            if folder.suffix.lower() == ".toml":
                return folder
            raise SurveyError("expected a survey folder (or its survey.toml), got another "
                              "kind of file", str(folder))
        if not folder.exists():
            raise SurveyError("survey folder does not exist; start one with `envelope init "
                              "SURVEY --from EXPORTS`", str(folder))
        if not folder.is_dir():
            raise SurveyError("expected a survey folder (or its .toml file)", str(folder))
        main = folder / SURVEY_FILE
        if main.exists() or main.is_symlink():
            if not main.is_file():
                raise SurveyError("expected a file, found a folder or something else",
                                  str(main))
            return main
        tomls = sorted(p for p in folder.glob("*.toml") if p.is_file())
    except OSError as exc:
        raise SurveyError(f"cannot read ({exc.strerror or type(exc).__name__})", str(folder)) from None
    if len(tomls) == 1:
        return tomls[0]
    if not tomls:
        raise SurveyError(f"no {SURVEY_FILE} here; start a survey from a folder of camera "
                          "exports with `envelope init SURVEY --from EXPORTS`", str(folder))
    raise SurveyError(f"several .toml files and no {SURVEY_FILE}: "
                      f"{', '.join(_clip(t.name) for t in tomls)}", str(folder))


def _file(t: _Table, key: str, root: Path, suffixes: tuple[str, ...]) -> Path | None:
    """A file named by the survey: relative, inside the folder (after symlinks), a file."""
    rel = t.str(key)
    if not rel:
        return None
    p = Path(rel)
    if p.is_absolute() or ".." in p.parts or "\x00" in rel:
        raise t.err(key, f"expected a path inside the survey folder, got {_short(rel)}")
    if p.suffix.lower() not in suffixes:
        raise t.err(key, f"expected a {' / '.join(suffixes)} file, got {_short(rel)}")
    full = root / p
    try:
        if not full.exists() and not full.is_symlink():
            raise t.err(key, f"file not found: {_short(rel)}{_path_hint(root, rel)}")
        real = full.resolve(strict=True)
        if not real.is_relative_to(root.resolve()):
            raise t.err(key, f"{_short(rel)} leads outside the survey folder (a symbolic "
                             "link?); copy the file into the survey folder")
        if not real.is_file():
            raise t.err(key, f"{_short(rel)} is not a regular file")
    except OSError as exc:
        raise t.err(key, f"cannot read {_short(rel)} ({exc.strerror or type(exc).__name__})") from None
    return full


def _path_hint(root: Path, rel: str) -> str:
    """How a path that is not found may have been meant: '/' for '\\', or the letter case
    of a file that is there."""
    if "\\" in rel:
        return "; separate folders with '/' (thermograms/view.tif), not '\\'"
    folder, want = root, Path(rel).parts
    for part in want:
        try:
            names = {c.name.casefold(): c.name for c in folder.iterdir()} if folder.is_dir() else {}
        except OSError:
            return ""
        found = names.get(part.casefold())
        if found is None:
            return ""
        folder = folder / found
    got = folder.relative_to(root).as_posix()
    return f"; did you mean {_short(got)}? (letter case matters)" if got != rel else ""


def _rel(path: Path, base: Path) -> str:
    try:
        return str(Path(path).resolve().relative_to(Path(base).resolve()))
    except ValueError:
        return str(path)


# --------------------------------------------------------------------------- loading
def load(folder, incomplete: bool = False) -> Survey:
    """See `envelope.survey.load_survey`."""
    file = find_survey_file(Path(folder))
    root = file.parent
    fname = _rel(file, root.parent)
    try:
        size = file.stat().st_size
        if size > MAX_SURVEY_BYTES:
            raise SurveyError("survey file larger than 4 MB; is it the right file?", fname)
        raw = file.read_bytes()
    except OSError as exc:
        raise SurveyError(f"cannot read the survey file ({exc.strerror or type(exc).__name__}); "
                          "check its permissions", fname) from None
    if raw.startswith((b"\xff\xfe", b"\xfe\xff")):
        raise SurveyError("saved as UTF-16 text; save it as UTF-8 (the editor's encoding "
                          "setting)", fname)
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError as exc:
        line = raw[: exc.start].count(b"\n") + 1
        raise SurveyError(f"not UTF-8 text (line {line}, byte {exc.start}: {exc.reason}; saved "
                          "as Latin-1 or Windows-1252?); save it as UTF-8", fname) from None
    if not text.strip():
        raise SurveyError("the survey file is empty; expected the keys of docs/survey-format.md", fname)
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise SurveyError(f"not valid TOML: {_clip(str(exc), 120)}{_toml_hint(text, str(exc))}",
                          fname) from None
    except RecursionError:
        raise SurveyError("not valid TOML: nested too deeply", fname) from None
    todo: list[str] = []
    survey = _survey(data, root, file, fname, todo)
    if todo and not incomplete:
        raise SurveyError(_todo_message(todo), fname, todo[0])
    return survey


_TOML_AT = re.compile(r"at line (\d+), column \d+\)")
_DECIMAL_COMMA = re.compile(r"=\s*\[?\s*[-+]?\d+,\d")
_BARE_TEXT = re.compile(r"=\s*(?!true\b|false\b|inf\b|nan\b)[^\W\d]")


def _toml_hint(text: str, message: str) -> str:
    """The usual slip behind a TOML syntax error on that line, or ""."""
    m = _TOML_AT.search(message)
    lines = text.splitlines()
    if not m or not 0 < int(m.group(1)) <= len(lines):
        return ""
    line = lines[int(m.group(1)) - 1].split("#", 1)[0]
    if message.startswith(("Cannot overwrite", "Cannot declare")):
        return "; is a key or a table given twice? (each key once per table)"
    if _DECIMAL_COMMA.search(line):
        return "; numbers take a decimal point, not a comma (0.93, not 0,93)"
    if _BARE_TEXT.search(line):
        return '; text goes in double quotes (name = "Wren Cottage")'
    return ""


def _same_but_case(name: str, seen: dict, what: str, t: _Table, key: str) -> None:
    """Refuse a name that differs from an earlier one in letter case only: names become
    parts of file names, and many file systems do not tell such names apart."""
    other = seen.get(name.casefold())
    if other is not None and other != name:
        raise t.err(key, f"{what} {_short(name)} differs from {_short(other)} only in letter "
                         "case; names become parts of file names, which many file systems do "
                         "not tell apart: choose another name")
    seen.setdefault(name.casefold(), name)


def _todo_message(todo: list[str]) -> str:
    shown = ", ".join(todo[:12]) + (f" and {len(todo) - 12} more" if len(todo) > 12 else "")
    return (f"{len(todo)} required key{'s' if len(todo) > 1 else ''} missing or left as "
            f"\"{PLACEHOLDER}\": {shown} (`envelope inspect` lists what is still needed)")


def _survey(data, root: Path, file: Path, fname: str, todo: list) -> Survey:
    top = _Table(data, fname, "", _KEYS[""], todo)
    fmt = top.str("format")
    if fmt and fmt != FORMAT_NAME:
        raise top.err("format", f"expected '{FORMAT_NAME}', got {_short(fmt)}")
    version = top.int("version")
    if version is not None and version != FORMAT_VERSION:
        raise top.err("version", f"this envelope reads version {FORMAT_VERSION}, got {version}")

    s = top.sub("site", _KEYS["site"])
    site = Site(s.text("name"), s.text("address", ""), s.text("town", ""),
                s.num("latitude_deg", None, -90, 90, "deg"))
    sv = top.sub("survey", _KEYS["survey"], {})
    conditions = _conditions(top.sub("conditions", _KEYS["conditions"]))
    camera = _camera(top.sub("camera", _KEYS["camera"], {}))
    climate = _climate(top.sub("climate", _KEYS["climate"], {}))
    p = top.sub("prices", _KEYS["prices"], {})
    prices = Prices(
        p.text("currency", "EUR"), p.num("energy_price_per_kwh", None, 0, 100, "per kWh"),
        p.num("heating_efficiency", 0.9, 0.05, 6.0, "-", lo_open=True),
        p.num("co2_kg_per_kwh", None, 0, 5, "kg/kWh"),
    )
    a = top.sub("analysis", _KEYS["analysis"], {})
    analysis = Analysis(
        a.str("interior_convection", "ensemble", INTERIOR_CONVECTION),
        a.str("exterior_convection", "iso6946_wind", EXTERIOR_CONVECTION),
        a.str("sky_model", "berdahl_martin", SKY_MODELS), a.int("monte_carlo_draws", 20000, 100, 1_000_000),
        a.int("seed", 20261201, 0), a.num("defect_threshold", 0.03, 0.0, 0.5, "-"),
        a.num("defect_min_area_m2", 0.01, 0.0, 100.0, "m2"),
        a.num("verdict_tolerance_w_m2k", 0.0, 0.0, 5.0, "W/m2K"),
    )

    elements = _elements(top, todo)
    thermograms = _thermograms(top, root, elements, conditions)
    ids = {t.id for t in thermograms}
    pairs = []
    for t in top.array("pressure_pairs", _KEYS["pressure_pairs"]):
        pair = PressurePair(t.str("baseline"), t.str("depressurised"),
                            t.num("pressure_difference_pa", lo=0, hi=200, unit="Pa", lo_open=True))
        for key in ("baseline", "depressurised"):
            if getattr(pair, key) and getattr(pair, key) not in ids:
                raise t.err(key, f"no thermogram with id {_short(getattr(pair, key))}")
        if pair.baseline and pair.baseline == pair.depressurised:
            raise t.err("depressurised", "expected a different thermogram from the baseline "
                                         "(a view cannot be paired with itself)")
        pairs.append(pair)
    series, sids, folded = [], set(), {}
    for t in top.array("series", _KEYS["series"]):
        sr = Series(t.ident("id"), t.str("thermogram"), t.str("element"),
                    _file(t, "air_log", root, (".csv",)))
        if sr.id in sids:
            raise t.err("id", f"duplicate series id {_short(sr.id)}")
        sids.add(sr.id)
        _same_but_case(sr.id, folded, "series id", t, "id")
        if sr.thermogram and sr.thermogram not in ids:
            raise t.err("thermogram", f"no thermogram with id {_short(sr.thermogram)}")
        if sr.element and sr.element not in elements:
            raise t.err("element", f"no element named {_short(sr.element)}")
        series.append(sr)
    measures = [_measure(t, elements) for t in top.array("measures", _KEYS["measures"])]
    air = top.sub("airtightness", _KEYS["airtightness"], None)
    return Survey(
        root=root, file=file, site=site, date=sv.date("date"), surveyor=sv.text("surveyor", ""),
        client=sv.text("client", ""), conditions=conditions, camera=camera, climate=climate,
        prices=prices, analysis=analysis, elements=elements, thermograms=tuple(thermograms),
        pressure_pairs=tuple(pairs), series=tuple(series), measures=tuple(measures),
        airtightness=None if air is None else _airtightness(air),
        junctions=tuple(_junction(t, elements) for t in top.array("junctions", _KEYS["junctions"])),
        todo=tuple(todo),
    )


def _conditions(c: _Table) -> Conditions:
    cond = _read_conditions(c)
    t_i, t_e = cond.indoor_air_c, cond.outdoor_air_c
    if math.isfinite(t_i) and math.isfinite(t_e) and not t_i > t_e:
        raise c.err("indoor_air_c", f"indoor air {t_i:g} °C is not warmer than outdoor air "
                                    f"{t_e:g} °C (outdoor_air_c): the methods need heat flowing "
                                    "outwards, a survey in the heating season; were the two "
                                    "swapped?")
    return cond


def _read_conditions(c: _Table) -> Conditions:
    return Conditions(
        c.num("indoor_air_c", lo=-30, hi=45, unit="°C"), c.num("outdoor_air_c", lo=-50, hi=45, unit="°C"),
        c.fraction("indoor_rh", None), c.fraction("outdoor_rh", None),
        c.num("wind_m_s", 0.0, 0, 60, "m/s"), c.bool("rain", False),
        c.num("hours_since_rain", None, 0, 10000, "h"), c.num("sky_cloud_oktas", 8.0, 0, 8, "okta"),
        c.num("air_uncertainty_k", 0.3, 0, 5, "K"), c.num("wind_uncertainty_m_s", 0.5, 0, 20, "m/s"),
        c.nums("outdoor_history_c", (), lo=-60, hi=50, unit="°C"),
        c.nums("indoor_history_c", (), lo=-30, hi=50, unit="°C"),
        c.num("history_interval_h", 1.0, 0, 24, "h", lo_open=True), c.hhmm("time"),
    )


def _camera(c: _Table) -> Camera:
    band = c.nums("band_um", (7.5, 14.0), n=2, lo=0.5, hi=100.0, unit="µm")
    if band[0] >= band[1]:
        raise c.err("band_um", f"expected [shortest, longest] wavelength in µm, got {list(band)}")
    return Camera(c.text("label", ""), band, c.num("accuracy_k", 2.0, 0, 10, "K"),
                  c.num("relative_accuracy_k", 0.2, 0, 5, "K"), c.num("noise_k", 0.05, 0, 2, "K"),
                  c.num("offset_k", None, -10, 10, "K"), c.num("offset_uncertainty_k", 0.3, 0, 5, "K"))


def _climate(c: _Table) -> Climate:
    hum = c.str("indoor_humidity", "humidity_class", HUMIDITY_MODELS)
    return Climate(
        c.num("heating_degree_days_kd", None, 0, 15000, "K·day"),
        c.num("design_indoor_c", None, -10, 40, "°C"), c.num("design_outdoor_c", None, -60, 30, "°C"),
        c.nums("monthly_outdoor_c", None, 12, -60, 50, "°C"),
        _fractions(c, "monthly_outdoor_rh"), c.nums("monthly_indoor_c", None, 12, -10, 40, "°C"),
        hum, c.int("humidity_class", 3, 1, 5), c.fraction("indoor_rh", None),
        c.num("moisture_kg_h", None, 0, 10, "kg/h"), c.num("air_changes_per_h", None, 0, 50, "1/h", lo_open=True),
        c.num("volume_m3", None, 0, 1e5, "m3", lo_open=True),
        c.str("frsi_criterion", "iso13788", FRSI_CRITERIA),
    )


def _fractions(c: _Table, key):
    v = c.data.get(key)
    if isinstance(v, list) and any(isinstance(x, int | float) and not isinstance(x, bool) and x > 1 for x in v):
        raise c.err(key, "expected fractions 0–1 — were they given in percent?")
    return c.nums(key, None, 12, 0.0, 1.0)


def _elements(top: _Table, todo: list) -> dict:
    tables = top.array("elements", _KEYS["elements"])
    if not tables:
        todo.append("elements (at least one [[elements]] table)")
    elements: dict[str, Element] = {}
    folded: dict[str, str] = {}
    for i, t in enumerate(tables):
        name = t.ident("name") or f"(elements[{i}])"
        if name in elements:
            raise t.err("name", f"duplicate element name {_short(name)}")
        _same_but_case(name, folded, "element name", t, "name")
        elements[name] = Element(
            name, t.str("kind", choices=ELEMENT_KINDS),
            t.num("u_specified_w_m2k", None, 0, 10, "W/m2K", lo_open=True), t.str("host", None),
            t.str("material", None), _emissivity(t, "emissivity", None),
            t.str("heat_flow", "horizontal", HEAT_FLOW), t.num("height_m", 2.5, 0, 50, "m", lo_open=True),
            t.num("tilt_deg", 90.0, 0, 180, "deg"), t.num("area_m2", None, 0, 1e5, "m2", lo_open=True),
            t.text("label", None), t.num("heat_capacity_kj_m2k", None, 0, 5000, "kJ/(m2K)", lo_open=True),
            t.str("u_specified_basis", "environmental", U_BASES),
        )
    for t, e in zip(tables, elements.values(), strict=True):
        if e.kind == "wall" and math.isfinite(e.tilt_deg) and not 45.0 <= e.tilt_deg <= 135.0:
            rad = " (in radians? 90° is 1.571 rad)" if 0.0 < e.tilt_deg <= math.pi else ""
            raise t.err("tilt_deg", f"a wall stands near 90° from horizontal, got "
                                    f"{e.tilt_deg:g}°{rad}; a surface near 0° is a roof, floor "
                                    "or ceiling: set `kind`")
        if e.host is not None:
            if e.host == e.name:
                raise t.err("host", "an element cannot be hosted by itself")
            if e.host not in elements:
                raise t.err("host", f"no element named {_short(e.host)}")
            if e.kind and e.kind not in ("window", "door"):
                raise t.err("host", f"only windows and doors have a host; {_short(e.name)} is a {e.kind}")
            hk = elements[e.host].kind
            if hk and hk not in HOST_KINDS:
                raise t.err("host", f"a window or door sits in a {' or '.join(HOST_KINDS)}; "
                                    f"{_short(e.host)} is a {hk}")
        if e.material is not None:
            from .radiometry import emissivity_for

            try:
                emissivity_for(e.material)
            except SurveyError as exc:
                raise t.err("material", exc.detail) from None
    return elements


def _emissivity(t: _Table, key, default):
    v = t.num(key, default, 0.0, 1.0, "-", lo_open=True)
    if v is not None and math.isfinite(v) and v < 0.05:
        raise t.err(key, f"expected an emissivity in (0.05, 1], got {v:g}")
    return v


def _thermograms(top: _Table, root: Path, elements: dict, conditions: Conditions) -> list[Thermogram]:
    tables = top.array("thermograms", _KEYS["thermograms"])
    if not tables:
        top.todo.append("thermograms (at least one [[thermograms]] table)")
    out, seen, folded, files = [], set(), {}, {}
    for i, t in enumerate(tables):
        tid = t.ident("id") or f"(thermograms[{i}])"
        if tid in seen:
            raise t.err("id", f"duplicate thermogram id {_short(tid)}")
        seen.add(tid)
        _same_but_case(tid, folded, "thermogram id", t, "id")
        by_el = t.sub("emissivity_by_element", tuple(elements), {})
        eps_by = {k: _emissivity(by_el, k, None) for k in by_el.data}
        rp = t.sub("reference_points", _KEYS["thermograms.reference_points"], None)
        ref = None
        if rp is not None:
            ref = ReferencePoints(rp.points("pixel_xy", "px"), _metres(rp, "metre_xy"))
            if len(ref.pixel_xy) != len(ref.metre_xy):
                raise rp.err("metre_xy", f"expected as many points as pixel_xy ({len(ref.pixel_xy)}), got {len(ref.metre_xy)}")
        kl = t.sub("known_length", _KEYS["thermograms.known_length"], None)
        known = None
        if kl is not None:
            known = KnownLength(kl.point("pixel_a"), kl.point("pixel_b"),
                                kl.num("length_m", lo=0, hi=MAX_PLANE_M, unit="m", lo_open=True))
            if known.pixel_a == known.pixel_b:
                raise kl.err("pixel_b", "expected a point other than pixel_a")
        probes = tuple(Probe(p.point("pixel_xy"), p.num("surface_c", lo=-60, hi=200, unit="°C"),
                             p.num("uncertainty_k", 0.2, 0, 5, "K", lo_open=True))
                       for p in t.array("probes", _KEYS["thermograms.probes"]))
        tapes = tuple(Tape(p.point("pixel_xy"), _emissivity(p, "emissivity", _REQUIRED), p.point("surface_pixel_xy"))
                      for p in t.array("tapes", _KEYS["thermograms.tapes"]))
        hf = t.sub("heat_flux_meter", _KEYS["thermograms.heat_flux_meter"], None)
        meter = None if hf is None else HeatFluxMeter(
            hf.point("pixel_xy"), hf.num("q_w_m2", lo=-1000, hi=1000, unit="W/m2"),
            hf.num("q_std_w_m2", lo=0, hi=500, unit="W/m2", lo_open=True),
            hf.num("surface_c", None, -60, 200, "°C"))
        out.append(Thermogram(
            id=tid, file=_file(t, "file", root, PIXEL_SUFFIXES),
            outlines=_file(t, "outlines", root, (".geojson", ".json")),
            side=t.str("side", choices=SIDES), reflected_c=t.num("reflected_c", lo=-80, hi=200, unit="°C"),
            reflected_uncertainty_k=t.num("reflected_uncertainty_k", 1.0, 0, 30, "K"),
            emissivity_default=_emissivity(t, "emissivity", None),
            emissivity_uncertainty=t.num("emissivity_uncertainty", 0.02, 0, 0.5, "-"),
            emissivity_by_element=eps_by,
            distance_m=t.num("distance_m", 3.0, 0, MAX_DISTANCE_M, "m", lo_open=True),
            transmittance=t.num("transmittance", None, 0, 1, "-", lo_open=True),
            atmosphere_c=t.num("atmosphere_c", None, -60, 60, "°C"),
            view_angle_deg=t.num("view_angle_deg", 0.0, 0, 90, "deg"),
            hours_since_sun=t.num("hours_since_sun", None, 0, 10000, "h"),
            export=_export(t.sub("export", _KEYS["thermograms.export"], {})),
            reference_points=ref, known_length=known, probes=probes, tapes=tapes,
            reflected_by_camera=t.bool("reflected_by_camera", False),
            time=t.hhmm("time") or conditions.time, mrt_c=t.num("mrt_c", None, -80, 200, "°C"),
            mrt_std_k=t.num("mrt_std_k", None, 0, 30, "K", lo_open=True), heat_flux_meter=meter,
            elements=t.names("elements", elements),
        ))
        tg = out[-1]
        sunlit = tg.hours_since_sun is not None and tg.hours_since_sun < 2.0
        for key in ("reflected_c", "mrt_c"):
            _near_the_air(t, key, getattr(tg, key), tg.side, conditions, sunlit)
        if tg.file is not None:
            try:
                real = str(tg.file.resolve())
            except (OSError, RuntimeError):
                real = str(tg.file)
            if real in files:
                raise t.err("file", f"the same pixel file as thermogram {_short(files[real])}; "
                                    "each view has its own export (a copied table?)")
            files[real] = tid
    return out


REFLECTED_OFF_AIR_K = 15.0
"""How far [K] a view's reflected (or mean radiant) temperature may lie above the air on its
side (indoor for an interior view, outdoor for an exterior one), or below the outdoor air for
an interior view, before it is taken for a slip (ours: a room reflects its own walls, a night
façade the sky and the street, both colder)."""
MAX_PLANE_M = 100.0
"""Largest coordinate or length on an element plane [m] (a house wall is a few metres)."""
MAX_DISTANCE_M = 200.0
"""Farthest camera distance [m] (a drone flies at 120 m at most in many countries)."""


def _near_the_air(t: _Table, key: str, value, side: str, c: Conditions, sunlit: bool) -> None:
    """Refuse a reflected or radiant temperature that no night survey can have (a typo); an
    exterior view with sun in the last 2 h may reflect warm sunlit surroundings."""
    if value is None or not math.isfinite(value) or side not in SIDES:
        return
    air, where = ((c.indoor_air_c, "indoor") if side == "interior" else (c.outdoor_air_c, "outdoor"))
    if math.isfinite(air) and value > air + REFLECTED_OFF_AIR_K and not (sunlit and side == "exterior"):
        raise t.err(key, f"{value:g} °C is {value - air:.0f} K above the {where} air ({air:g} °C) "
                         f"for an {side} view: the surroundings a surface reflects at night are "
                         "near or below the air (a typo? a heater in view: move the camera)")
    t_e = c.outdoor_air_c
    if side == "interior" and math.isfinite(t_e) and value < t_e - REFLECTED_OFF_AIR_K:
        raise t.err(key, f"{value:g} °C is {t_e - value:.0f} K below the outdoor air ({t_e:g} °C) "
                         "for an interior view: a room's surroundings are warmer than outdoors "
                         "(a typo?)")


def _metres(t: _Table, key: str):
    """Points on an element plane [m]: refused beyond `MAX_PLANE_M` (mm or cm by mistake)."""
    pts = t.points(key, "m")
    far = max((abs(c) for p in pts for c in p), default=0.0)
    if far > MAX_PLANE_M:
        raise t.err(key, f"expected metres on the element plane, within ±{MAX_PLANE_M:g} m (a "
                         f"wall is a few metres); {far:g} looks like millimetres or centimetres")
    return pts


def _export(ex: _Table) -> ExportSettings:
    return ExportSettings(
        _emissivity(ex, "emissivity", 1.0), ex.num("reflected_c", 20.0, -60, 200, "°C"),
        ex.num("transmittance", 1.0, 0, 1, "-", lo_open=True), ex.num("atmosphere_c", None, -60, 60, "°C"),
        ex.str("unit", None, UNITS), ex.num("scale", None, -1e6, 1e6, "unit per stored value"),
        ex.num("offset", 0.0, -1e6, 1e6, "unit"), ex.int("page", None, 0, 10_000),
    )


def _measure(t: _Table, elements: dict) -> Measure:
    kind = t.str("kind", choices=MEASURE_KINDS)
    m = Measure(
        name=t.text("name"), kind=kind, cost=t.num("cost", lo=0, hi=1e9, unit="currency"),
        elements=tuple(t.names("elements", elements)),
        defect_classes=tuple(t.names("defect_classes")),
        thickness_m=t.num("thickness_m", None, 0, 2, "m", lo_open=True),
        conductivity_w_mk=t.num("conductivity_w_mk", None, 0, 5, "W/mK", lo_open=True),
        new_u_w_m2k=t.num("new_u_w_m2k", None, 0, 10, "W/m2K", lo_open=True),
        new_psi_w_mk=t.num("new_psi_w_mk", None, 0, 5, "W/mK"),
        leak_fraction_removed=t.fraction("leak_fraction_removed", 0.8),
    )
    need = {"add_layer": ("thickness_m", "conductivity_w_mk"), "replace_glazing": ("new_u_w_m2k",),
            "fix_bridge": ("new_psi_w_mk",), "seal_leak": (), "repair_defect": ()}.get(kind, ())
    for key in need:
        if getattr(m, key) is None:
            raise t.err(key, f"missing (required for kind '{kind}')")
    if kind in ("add_layer", "replace_glazing") and not m.elements:
        raise t.err("elements", f"a '{kind}' measure needs the elements it applies to")
    for i, c in enumerate(m.defect_classes):
        if why := check_text(c):
            raise t.err(f"defect_classes[{i}]", why)
    return m


def _airtightness(a: _Table) -> Airtightness:
    air = Airtightness(
        a.num("n50_per_h", None, 0, 100, "1/h", lo_open=True),
        a.num("q50_m3_h_m2", None, 0, 100, "m3/(h m2)", lo_open=True),
        a.num("volume_m3", None, 0, 1e6, "m3", lo_open=True),
        a.num("envelope_area_m2", None, 0, 1e6, "m2", lo_open=True),
        a.int("storeys", None, 1, 200), a.str("shielding", "normal", SHIELDING),
    )
    if (air.n50_per_h is None) == (air.q50_m3_h_m2 is None):
        raise a.err("n50_per_h", "expected exactly one of n50_per_h [1/h] and q50_m3_h_m2 "
                                 "[m3/(h m2)] (the EN ISO 9972 result)")
    return air


def _junction(t: _Table, elements: dict) -> Junction:
    els = t.names("elements", elements)
    if len(els) != 2:
        raise t.err("elements", f"expected the names of two elements, got {len(els)}")
    if els[0] == els[1]:
        raise t.err("elements", "expected two different elements (a junction joins two)")
    jt = t.str("junction_type")
    if jt and not _SLUG.match(jt):
        raise t.err("junction_type", "expected a short slug of lower-case letters, digits and "
                                     f"'-', e.g. \"wall-floor\"; got {_short(jt)}")
    return Junction((els[0], els[1]), jt, t.num("psi_specified_w_mk", None, -1, 5, "W/mK"))
