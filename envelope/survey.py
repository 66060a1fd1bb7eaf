"""Survey folder → dataclasses (edge: the only module that reads survey files).

A survey is a folder holding one TOML file (format ``envelope-survey``, version 1; see
``docs/survey-format.md``), per-pixel temperature files (float32 TIFF, ``.npy`` or CSV, in °C)
and element outlines as GeoJSON in pixel coordinates. `load_survey` reads and validates the
TOML and checks that every referenced file exists; pixel data are read per thermogram by
`load_pixels` so that one broken file does not stop the others.

Every user error is a `SurveyError` naming the file, the key and what was expected.
"""

from __future__ import annotations

import difflib
import math
import tomllib
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np

from .errors import SurveyError

FORMAT_NAME = "envelope-survey"
FORMAT_VERSION = 1
SURVEY_FILE = "survey.toml"

ELEMENT_KINDS = ("wall", "window", "door", "roof", "floor", "ceiling")
SIDES = ("interior", "exterior")
HEAT_FLOW = ("horizontal", "upward", "downward")
MEASURE_KINDS = ("add_layer", "replace_glazing", "seal_leak", "fix_bridge", "repair_defect")
HUMIDITY_MODELS = ("measured", "humidity_class", "moisture_production")
INTERIOR_CONVECTION = ("ensemble", "iso6946", "churchill_chu", "alamdari_hammond",
                       "khalifa_marshall", "horizontal_plate", "iso15099")
EXTERIOR_CONVECTION = ("iso6946_wind", "mcadams", "watmuff")
SKY_MODELS = ("berdahl_martin", "swinbank")
FRSI_CRITERIA = ("iso13788", "bre-ip1-06-dwellings", "din-4108-2")

MAX_PIXELS = 4096 * 4096
"""Largest thermogram accepted [px]; bigger files are refused before they are read."""
MAX_FILE_BYTES = 256 * 1024 * 1024
KELVIN_SUSPECT_C = 150.0
"""A median reading above this [°C] looks like kelvin exported by mistake."""
PLAUSIBLE_C = (-60.0, 200.0)
"""Readings outside this range [°C] cannot be building surfaces."""
MAX_INVALID_SHARE = 0.5
"""A thermogram with more than this share of NaN pixels is refused."""

_REQUIRED = object()


# --------------------------------------------------------------------------- dataclasses
@dataclass(frozen=True)
class Site:
    name: str
    address: str = ""
    town: str = ""
    latitude_deg: float | None = None


@dataclass(frozen=True)
class Conditions:
    """Air conditions on the survey night. Temperatures [°C], rh as a fraction 0–1."""

    indoor_air_c: float
    outdoor_air_c: float
    indoor_rh: float | None = None
    outdoor_rh: float | None = None
    wind_m_s: float = 0.0
    rain: bool = False
    hours_since_rain: float | None = None
    sky_cloud_oktas: float = 8.0
    air_uncertainty_k: float = 0.3
    wind_uncertainty_m_s: float = 0.5
    outdoor_history_c: tuple[float, ...] = ()
    indoor_history_c: tuple[float, ...] = ()
    history_interval_h: float = 1.0


@dataclass(frozen=True)
class Camera:
    label: str = ""
    band_um: tuple[float, float] = (7.5, 14.0)
    accuracy_k: float = 2.0
    relative_accuracy_k: float = 0.2
    noise_k: float = 0.05
    offset_k: float | None = None
    offset_uncertainty_k: float = 0.3


@dataclass(frozen=True)
class Climate:
    """Site climate for annual energy and the ISO 13788 limit."""

    heating_degree_days_kd: float | None = None
    design_indoor_c: float | None = None
    design_outdoor_c: float | None = None
    monthly_outdoor_c: tuple[float, ...] | None = None
    monthly_outdoor_rh: tuple[float, ...] | None = None
    monthly_indoor_c: tuple[float, ...] | None = None
    indoor_humidity: str = "humidity_class"
    humidity_class: int | None = 3
    indoor_rh: float | None = None
    moisture_kg_h: float | None = None
    air_changes_per_h: float | None = None
    volume_m3: float | None = None
    frsi_criterion: str = "iso13788"


@dataclass(frozen=True)
class Prices:
    currency: str = "EUR"
    energy_price_per_kwh: float | None = None
    heating_efficiency: float = 0.9
    co2_kg_per_kwh: float | None = None


@dataclass(frozen=True)
class Analysis:
    """Method choices; every field has a default."""

    interior_convection: str = "ensemble"
    exterior_convection: str = "iso6946_wind"
    sky_model: str = "berdahl_martin"
    monte_carlo_draws: int = 20000
    seed: int = 20261201
    defect_threshold: float = 0.03
    defect_min_area_m2: float = 0.01
    verdict_tolerance_w_m2k: float = 0.0


@dataclass(frozen=True)
class Element:
    name: str
    kind: str
    u_specified_w_m2k: float | None = None
    host: str | None = None
    material: str | None = None
    emissivity: float | None = None
    heat_flow: str = "horizontal"
    height_m: float = 2.5
    tilt_deg: float = 90.0
    area_m2: float | None = None


@dataclass(frozen=True)
class ExportSettings:
    """Settings the camera used when it exported the readings."""

    emissivity: float = 1.0
    reflected_c: float = 20.0
    transmittance: float = 1.0
    atmosphere_c: float | None = None


@dataclass(frozen=True)
class ReferencePoints:
    pixel_xy: tuple[tuple[float, float], ...]
    metre_xy: tuple[tuple[float, float], ...]


@dataclass(frozen=True)
class KnownLength:
    pixel_a: tuple[float, float]
    pixel_b: tuple[float, float]
    length_m: float


@dataclass(frozen=True)
class Probe:
    """A contact-probe surface reading at a marked pixel."""

    pixel_xy: tuple[float, float]
    surface_c: float
    uncertainty_k: float = 0.2


@dataclass(frozen=True)
class Tape:
    """A patch of known emissivity (tape or paint) next to the surface."""

    pixel_xy: tuple[float, float]
    emissivity: float
    surface_pixel_xy: tuple[float, float]


@dataclass(frozen=True)
class Thermogram:
    id: str
    file: Path
    outlines: Path
    side: str
    reflected_c: float
    reflected_uncertainty_k: float = 1.0
    emissivity_default: float | None = None
    emissivity_uncertainty: float = 0.02
    emissivity_by_element: dict = field(default_factory=dict)
    distance_m: float = 3.0
    transmittance: float | None = None
    atmosphere_c: float | None = None
    view_angle_deg: float = 0.0
    hours_since_sun: float | None = None
    export: ExportSettings = ExportSettings()
    reference_points: ReferencePoints | None = None
    known_length: KnownLength | None = None
    probes: tuple[Probe, ...] = ()
    tapes: tuple[Tape, ...] = ()
    reflected_by_camera: bool = False


@dataclass(frozen=True)
class PressurePair:
    baseline: str
    depressurised: str
    pressure_difference_pa: float


@dataclass(frozen=True)
class Series:
    """A sequence of thermograms of one view with logged air temperatures (ISO 9869-1)."""

    id: str
    thermogram: str
    element: str
    air_log: Path


@dataclass(frozen=True)
class Measure:
    name: str
    kind: str
    cost: float
    elements: tuple[str, ...] = ()
    defect_classes: tuple[str, ...] = ()
    thickness_m: float | None = None
    conductivity_w_mk: float | None = None
    new_u_w_m2k: float | None = None
    new_psi_w_mk: float | None = None
    leak_fraction_removed: float = 0.8


@dataclass(frozen=True)
class Survey:
    root: Path
    file: Path
    site: Site
    date: str
    surveyor: str
    client: str
    conditions: Conditions
    camera: Camera
    climate: Climate
    prices: Prices
    analysis: Analysis
    elements: dict
    thermograms: tuple[Thermogram, ...]
    pressure_pairs: tuple[PressurePair, ...] = ()
    series: tuple[Series, ...] = ()
    measures: tuple[Measure, ...] = ()

    def thermogram(self, tid: str) -> Thermogram:
        for t in self.thermograms:
            if t.id == tid:
                return t
        raise KeyError(tid)


# --------------------------------------------------------------------------- table reader
class _Table:
    """Typed access to one TOML table; unknown keys are errors (typos are common)."""

    def __init__(self, data, file: str, path: str, allowed: tuple[str, ...]):
        if not isinstance(data, dict):
            raise SurveyError(f"expected a table, got {type(data).__name__}", file, path or None)
        self.data, self.file, self.path = data, file, path
        for key in data:
            if key not in allowed:
                close = difflib.get_close_matches(key, allowed, n=1)
                hint = f" (did you mean '{close[0]}'?)" if close else ""
                raise SurveyError(
                    f"unknown key{hint}; allowed: {', '.join(allowed)}", file, self._f(key)
                )

    def _f(self, key: str) -> str:
        return f"{self.path}.{key}" if self.path else key

    def err(self, key: str, msg: str) -> SurveyError:
        return SurveyError(msg, self.file, self._f(key))

    def _get(self, key, default):
        if key in self.data:
            return self.data[key]
        if default is _REQUIRED:
            raise self.err(key, "missing (required)")
        return default

    def num(self, key, default=_REQUIRED, lo=-math.inf, hi=math.inf, unit="", lo_open=False):
        v = self._get(key, default)
        if v is None or (v is default and key not in self.data):
            return v
        if isinstance(v, bool) or not isinstance(v, int | float):
            raise self.err(key, f"expected a number{_u(unit)}, got {v!r}")
        v = float(v)
        if not math.isfinite(v):
            raise self.err(key, f"expected a finite number{_u(unit)}, got {v}")
        if v < lo or v > hi or (lo_open and v == lo):
            rng = f"({lo}, {hi}]" if lo_open else f"[{lo}, {hi}]"
            raise self.err(key, f"expected a value in {rng}{_u(unit)}, got {v:g}")
        return v

    def fraction(self, key, default=_REQUIRED):
        v = self._get(key, default)
        if v is None or (v is default and key not in self.data):
            return v
        if isinstance(v, int | float) and not isinstance(v, bool) and 1.0 < v <= 100.0:
            raise self.err(key, f"expected a fraction 0–1, got {v:g} — was it given in percent?")
        return self.num(key, default, 0.0, 1.0)

    def int(self, key, default=_REQUIRED, lo=-(2**62), hi=2**62):
        v = self._get(key, default)
        if v is default and key not in self.data:
            return v
        if isinstance(v, bool) or not isinstance(v, int):
            raise self.err(key, f"expected a whole number, got {v!r}")
        if v < lo or v > hi:
            raise self.err(key, f"expected a whole number in [{lo}, {hi}], got {v}")
        return v

    def str(self, key, default=_REQUIRED, choices=None):
        v = self._get(key, default)
        if v is None or (v is default and key not in self.data):
            return v
        if not isinstance(v, str):
            raise self.err(key, f"expected text, got {v!r}")
        if choices is not None and v not in choices:
            raise self.err(key, f"expected one of {', '.join(choices)}; got '{v}'")
        return v

    def bool(self, key, default=_REQUIRED):
        v = self._get(key, default)
        if not isinstance(v, bool):
            raise self.err(key, f"expected true or false, got {v!r}")
        return v

    def nums(self, key, default=_REQUIRED, n=None, lo=-math.inf, hi=math.inf, unit=""):
        v = self._get(key, default)
        if v is None or (v is default and key not in self.data):
            return v
        if not isinstance(v, list):
            raise self.err(key, f"expected a list of numbers{_u(unit)}, got {v!r}")
        if n is not None and len(v) != n:
            raise self.err(key, f"expected exactly {n} values{_u(unit)}, got {len(v)}")
        out = []
        for i, x in enumerate(v):
            if isinstance(x, bool) or not isinstance(x, int | float) or not math.isfinite(x):
                raise self.err(f"{key}[{i}]", f"expected a finite number{_u(unit)}, got {x!r}")
            if x < lo or x > hi:
                raise self.err(f"{key}[{i}]", f"expected a value in [{lo}, {hi}]{_u(unit)}, got {x:g}")
            out.append(float(x))
        return tuple(out)

    def point(self, key, default=_REQUIRED):
        v = self.nums(key, default, n=2, unit=" px")
        return v

    def points(self, key, unit):
        v = self._get(key, _REQUIRED)
        if not isinstance(v, list) or not v:
            raise self.err(key, f"expected a list of [x, y] pairs{_u(unit)}, got {v!r}")
        out = []
        for i, p in enumerate(v):
            if (
                not isinstance(p, list)
                or len(p) != 2
                or any(isinstance(c, bool) or not isinstance(c, int | float) for c in p)
                or not all(math.isfinite(c) for c in p)
            ):
                raise self.err(f"{key}[{i}]", f"expected [x, y] with two finite numbers{_u(unit)}, got {p!r}")
            out.append((float(p[0]), float(p[1])))
        return tuple(out)

    def sub(self, key, allowed, default=_REQUIRED):
        """A sub-table; a missing one gives None (default None) or an empty table ({})."""
        v = self._get(key, default)
        if v is None:
            return None
        return _Table(v, self.file, self._f(key), allowed)

    def array(self, key, allowed):
        v = self._get(key, [])
        if not isinstance(v, list):
            raise self.err(key, "expected an array of tables ([[...]])")
        return [_Table(x, self.file, f"{self._f(key)}[{i}]", allowed) for i, x in enumerate(v)]


def _u(unit: str) -> str:
    return f" [{unit.strip()}]" if unit.strip() else ""


# --------------------------------------------------------------------------- loading
def find_survey_file(folder: Path) -> Path:
    """The survey TOML inside `folder` (``survey.toml``, or the only ``*.toml``)."""
    folder = Path(folder)
    if folder.is_file() and folder.suffix == ".toml":
        return folder
    if not folder.exists():
        raise SurveyError("survey folder does not exist", str(folder))
    if not folder.is_dir():
        raise SurveyError("expected a survey folder (or its .toml file)", str(folder))
    main = folder / SURVEY_FILE
    if main.exists():
        return main
    tomls = sorted(folder.glob("*.toml"))
    if len(tomls) == 1:
        return tomls[0]
    if not tomls:
        raise SurveyError(f"no {SURVEY_FILE} in the survey folder", str(folder))
    raise SurveyError(
        f"several .toml files and no {SURVEY_FILE}: {', '.join(t.name for t in tomls)}", str(folder)
    )


def load_survey(folder: str | Path) -> Survey:
    """Read and validate a survey folder.

    Parameters
    ----------
    folder : path
        The survey folder (or its TOML file).

    Returns
    -------
    Survey

    Raises
    ------
    SurveyError
        On any bad input, naming the file and the key.
    """
    file = find_survey_file(Path(folder))
    root = file.parent
    fname = _rel(file, root.parent)
    if file.stat().st_size > 4 * 1024 * 1024:
        raise SurveyError("survey file larger than 4 MB; is it the right file?", fname)
    try:
        text = file.read_text(encoding="utf-8")
    except UnicodeDecodeError as exc:
        raise SurveyError(f"not UTF-8 text ({exc.reason})", fname) from None
    if not text.strip():
        raise SurveyError("the survey file is empty; expected the keys of docs/survey-format.md", fname)
    try:
        data = tomllib.loads(text)
    except tomllib.TOMLDecodeError as exc:
        raise SurveyError(f"not valid TOML: {exc}", fname) from None

    top = _Table(data, fname, "", (
        "format", "version", "site", "survey", "conditions", "camera", "climate", "prices",
        "analysis", "elements", "thermograms", "pressure_pairs", "series", "measures",
    ))
    fmt = top.str("format")
    if fmt != FORMAT_NAME:
        raise top.err("format", f"expected '{FORMAT_NAME}', got '{fmt}'")
    version = top.int("version")
    if version != FORMAT_VERSION:
        raise top.err("version", f"this envelope reads version {FORMAT_VERSION}, got {version}")

    s = top.sub("site", ("name", "address", "town", "latitude_deg"))
    site = Site(s.str("name"), s.str("address", ""), s.str("town", ""),
                s.num("latitude_deg", None, -90, 90, "deg"))
    sv = top.sub("survey", ("date", "surveyor", "client"))
    conditions = _conditions(top.sub("conditions", (
        "indoor_air_c", "outdoor_air_c", "indoor_rh", "outdoor_rh", "wind_m_s", "rain",
        "hours_since_rain", "sky_cloud_oktas", "air_uncertainty_k", "wind_uncertainty_m_s",
        "outdoor_history_c", "indoor_history_c", "history_interval_h",
    )))
    camera = _camera(top.sub("camera", (
        "label", "band_um", "accuracy_k", "relative_accuracy_k", "noise_k", "offset_k",
        "offset_uncertainty_k"), {}))
    climate = _climate(top.sub("climate", (
        "heating_degree_days_kd", "design_indoor_c", "design_outdoor_c", "monthly_outdoor_c",
        "monthly_outdoor_rh", "monthly_indoor_c", "indoor_humidity", "humidity_class",
        "indoor_rh", "moisture_kg_h", "air_changes_per_h", "volume_m3", "frsi_criterion"), {}))
    p = top.sub("prices", ("currency", "energy_price_per_kwh", "heating_efficiency",
                           "co2_kg_per_kwh"), {})
    prices = Prices(
        p.str("currency", "EUR"), p.num("energy_price_per_kwh", None, 0, 100, "per kWh"),
        p.num("heating_efficiency", 0.9, 0.05, 6.0, "-", lo_open=True),
        p.num("co2_kg_per_kwh", None, 0, 5, "kg/kWh"),
    )
    a = top.sub("analysis", tuple(Analysis.__dataclass_fields__), {})
    analysis = Analysis(
        a.str("interior_convection", "ensemble", INTERIOR_CONVECTION),
        a.str("exterior_convection", "iso6946_wind", EXTERIOR_CONVECTION),
        a.str("sky_model", "berdahl_martin", SKY_MODELS), a.int("monte_carlo_draws", 20000, 100, 1_000_000),
        a.int("seed", 20261201, 0), a.num("defect_threshold", 0.03, 0.0, 0.5, "-"),
        a.num("defect_min_area_m2", 0.01, 0.0, 100.0, "m2"),
        a.num("verdict_tolerance_w_m2k", 0.0, 0.0, 5.0, "W/m2K"),
    )

    elements = _elements(top, fname)
    thermograms = _thermograms(top, root, fname, elements)
    ids = {t.id for t in thermograms}
    pairs = []
    for t in top.array("pressure_pairs", ("baseline", "depressurised", "pressure_difference_pa")):
        pair = PressurePair(t.str("baseline"), t.str("depressurised"),
                            t.num("pressure_difference_pa", lo=0, hi=200, unit="Pa", lo_open=True))
        for key in ("baseline", "depressurised"):
            if getattr(pair, key) not in ids:
                raise t.err(key, f"no thermogram with id '{getattr(pair, key)}'")
        pairs.append(pair)
    series = []
    for t in top.array("series", ("id", "thermogram", "element", "air_log")):
        sr = Series(t.str("id"), t.str("thermogram"), t.str("element"),
                    _file(t, "air_log", root, (".csv",)))
        if sr.thermogram not in ids:
            raise t.err("thermogram", f"no thermogram with id '{sr.thermogram}'")
        if sr.element not in elements:
            raise t.err("element", f"no element named '{sr.element}'")
        series.append(sr)
    measures = [_measure(t, elements) for t in top.array("measures", (
        "name", "kind", "cost", "elements", "defect_classes", "thickness_m", "conductivity_w_mk",
        "new_u_w_m2k", "new_psi_w_mk", "leak_fraction_removed"))]
    return Survey(
        root=root, file=file, site=site, date=sv.str("date", ""), surveyor=sv.str("surveyor", ""),
        client=sv.str("client", ""), conditions=conditions, camera=camera, climate=climate,
        prices=prices, analysis=analysis, elements=elements, thermograms=tuple(thermograms),
        pressure_pairs=tuple(pairs), series=tuple(series), measures=tuple(measures),
    )


def _conditions(c: _Table) -> Conditions:
    ti = c.num("indoor_air_c", lo=-30, hi=45, unit="°C")
    te = c.num("outdoor_air_c", lo=-50, hi=45, unit="°C")
    hist_o = c.nums("outdoor_history_c", (), lo=-60, hi=50, unit="°C")
    hist_i = c.nums("indoor_history_c", (), lo=-30, hi=50, unit="°C")
    return Conditions(
        ti, te, c.fraction("indoor_rh", None), c.fraction("outdoor_rh", None),
        c.num("wind_m_s", 0.0, 0, 60, "m/s"), c.bool("rain", False),
        c.num("hours_since_rain", None, 0, 10000, "h"), c.num("sky_cloud_oktas", 8.0, 0, 8, "okta"),
        c.num("air_uncertainty_k", 0.3, 0, 5, "K"), c.num("wind_uncertainty_m_s", 0.5, 0, 20, "m/s"),
        hist_o, hist_i, c.num("history_interval_h", 1.0, 0, 24, "h", lo_open=True),
    )


def _camera(c: _Table) -> Camera:
    band = c.nums("band_um", (7.5, 14.0), n=2, lo=0.5, hi=100.0, unit="µm")
    if band[0] >= band[1]:
        raise c.err("band_um", f"expected [shortest, longest] wavelength in µm, got {list(band)}")
    return Camera(c.str("label", ""), band, c.num("accuracy_k", 2.0, 0, 10, "K"),
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


def _elements(top: _Table, fname: str) -> dict:
    tables = top.array("elements", tuple(Element.__dataclass_fields__))
    if not tables:
        raise SurveyError("no elements: expected at least one [[elements]] table", fname, "elements")
    elements: dict[str, Element] = {}
    for t in tables:
        name = t.str("name")
        if not name.strip():
            raise t.err("name", "expected a non-empty element name")
        if name in elements:
            raise t.err("name", f"duplicate element name '{name}'")
        elements[name] = Element(
            name, t.str("kind", choices=ELEMENT_KINDS),
            t.num("u_specified_w_m2k", None, 0, 10, "W/m2K", lo_open=True), t.str("host", None),
            t.str("material", None), _emissivity(t, "emissivity", None),
            t.str("heat_flow", "horizontal", HEAT_FLOW), t.num("height_m", 2.5, 0, 50, "m", lo_open=True),
            t.num("tilt_deg", 90.0, 0, 180, "deg"), t.num("area_m2", None, 0, 1e5, "m2", lo_open=True),
        )
    for t, e in zip(tables, elements.values(), strict=True):
        if e.host is not None:
            if e.host not in elements:
                raise t.err("host", f"no element named '{e.host}'")
            if e.kind not in ("window", "door"):
                raise t.err("host", f"only windows and doors have a host; '{e.name}' is a {e.kind}")
        if e.material is not None:
            from .radiometry import emissivity_for

            try:
                emissivity_for(e.material)
            except SurveyError as exc:
                raise t.err("material", exc.detail) from None
    return elements


def _emissivity(t: _Table, key, default):
    if key not in t.data and default is _REQUIRED:
        raise t.err(key, "missing (required)")
    v = t.num(key, default, 0.0, 1.0, "-", lo_open=True) if key in t.data else default
    if v is not None and v < 0.05:
        raise t.err(key, f"expected an emissivity in (0.05, 1], got {v:g}")
    return v


def _thermograms(top: _Table, root: Path, fname: str, elements: dict) -> list[Thermogram]:
    tables = top.array("thermograms", (
        "id", "file", "outlines", "side", "reflected_c", "reflected_uncertainty_k", "emissivity",
        "emissivity_uncertainty", "emissivity_by_element", "distance_m", "transmittance",
        "atmosphere_c", "view_angle_deg", "hours_since_sun", "export", "reference_points",
        "known_length", "probes", "tapes", "reflected_by_camera",
    ))
    if not tables:
        raise SurveyError("no thermograms: expected at least one [[thermograms]] table", fname, "thermograms")
    out, seen = [], set()
    for t in tables:
        tid = t.str("id")
        if not tid.strip() or any(c in tid for c in "/\\:*?\"<>|"):
            raise t.err("id", f"expected a plain name usable in file names, got '{tid}'")
        if tid in seen:
            raise t.err("id", f"duplicate thermogram id '{tid}'")
        seen.add(tid)
        ex = t.sub("export", ("emissivity", "reflected_c", "transmittance", "atmosphere_c"), {})
        export = ExportSettings(
            _emissivity(ex, "emissivity", 1.0), ex.num("reflected_c", 20.0, -60, 200, "°C"),
            ex.num("transmittance", 1.0, 0, 1, "-", lo_open=True), ex.num("atmosphere_c", None, -60, 60, "°C"),
        )
        by_el = t.sub("emissivity_by_element", tuple(elements), {})
        eps_by = {k: _emissivity(by_el, k, None) for k in by_el.data}
        rp = t.sub("reference_points", ("pixel_xy", "metre_xy"), None)
        ref = None
        if rp is not None:
            ref = ReferencePoints(rp.points("pixel_xy", "px"), rp.points("metre_xy", "m"))
            if len(ref.pixel_xy) != len(ref.metre_xy):
                raise rp.err("metre_xy", f"expected as many points as pixel_xy ({len(ref.pixel_xy)}), got {len(ref.metre_xy)}")
        kl = t.sub("known_length", ("pixel_a", "pixel_b", "length_m"), None)
        known = None
        if kl is not None:
            known = KnownLength(kl.point("pixel_a"), kl.point("pixel_b"),
                                kl.num("length_m", lo=0, hi=1000, unit="m", lo_open=True))
        probes = tuple(Probe(p.point("pixel_xy"), p.num("surface_c", lo=-60, hi=200, unit="°C"),
                             p.num("uncertainty_k", 0.2, 0, 5, "K", lo_open=True))
                       for p in t.array("probes", ("pixel_xy", "surface_c", "uncertainty_k")))
        tapes = tuple(Tape(p.point("pixel_xy"), _emissivity(p, "emissivity", _REQUIRED), p.point("surface_pixel_xy"))
                      for p in t.array("tapes", ("pixel_xy", "emissivity", "surface_pixel_xy")))
        out.append(Thermogram(
            id=tid, file=_file(t, "file", root, (".tif", ".tiff", ".npy", ".csv")),
            outlines=_file(t, "outlines", root, (".geojson", ".json")),
            side=t.str("side", choices=SIDES), reflected_c=t.num("reflected_c", lo=-80, hi=200, unit="°C"),
            reflected_uncertainty_k=t.num("reflected_uncertainty_k", 1.0, 0, 30, "K"),
            emissivity_default=_emissivity(t, "emissivity", None),
            emissivity_uncertainty=t.num("emissivity_uncertainty", 0.02, 0, 0.5, "-"),
            emissivity_by_element=eps_by,
            distance_m=t.num("distance_m", 3.0, 0, 2000, "m", lo_open=True),
            transmittance=t.num("transmittance", None, 0, 1, "-", lo_open=True),
            atmosphere_c=t.num("atmosphere_c", None, -60, 60, "°C"),
            view_angle_deg=t.num("view_angle_deg", 0.0, 0, 90, "deg"),
            hours_since_sun=t.num("hours_since_sun", None, 0, 10000, "h"), export=export,
            reference_points=ref, known_length=known, probes=probes, tapes=tapes,
            reflected_by_camera=t.bool("reflected_by_camera", False),
        ))
    return out


def _measure(t: _Table, elements: dict) -> Measure:
    kind = t.str("kind", choices=MEASURE_KINDS)
    els = tuple(_strs(t, "elements"))
    for i, e in enumerate(els):
        if e not in elements:
            raise t.err(f"elements[{i}]", f"no element named '{e}'")
    m = Measure(
        t.str("name"), kind, t.num("cost", lo=0, hi=1e9, unit="currency"), els,
        tuple(_strs(t, "defect_classes")), t.num("thickness_m", None, 0, 2, "m", lo_open=True),
        t.num("conductivity_w_mk", None, 0, 5, "W/mK", lo_open=True),
        t.num("new_u_w_m2k", None, 0, 10, "W/m2K", lo_open=True),
        t.num("new_psi_w_mk", None, 0, 5, "W/mK"), t.fraction("leak_fraction_removed", 0.8),
    )
    need = {"add_layer": ("thickness_m", "conductivity_w_mk"), "replace_glazing": ("new_u_w_m2k",),
            "fix_bridge": ("new_psi_w_mk",), "seal_leak": (), "repair_defect": ()}[kind]
    for key in need:
        if getattr(m, key) is None:
            raise t.err(key, f"missing (required for kind '{kind}')")
    if kind in ("add_layer", "replace_glazing") and not m.elements:
        raise t.err("elements", f"a '{kind}' measure needs the elements it applies to")
    return m


def _strs(t: _Table, key):
    v = t.data.get(key, [])
    if not isinstance(v, list) or not all(isinstance(x, str) for x in v):
        raise t.err(key, f"expected a list of names, got {v!r}")
    return v


def _file(t: _Table, key: str, root: Path, suffixes: tuple[str, ...]) -> Path:
    rel = t.str(key)
    p = Path(rel)
    if p.is_absolute() or ".." in p.parts:
        raise t.err(key, f"expected a path inside the survey folder, got '{rel}'")
    if p.suffix.lower() not in suffixes:
        raise t.err(key, f"expected a {' / '.join(suffixes)} file, got '{rel}'")
    full = root / p
    if not full.is_file():
        raise t.err(key, f"file not found: '{rel}'")
    return full


def _rel(path: Path, base: Path) -> str:
    try:
        return str(Path(path).resolve().relative_to(Path(base).resolve()))
    except ValueError:
        return str(path)


# --------------------------------------------------------------------------- pixel data
def load_pixels(path: str | Path, label: str | None = None) -> np.ndarray:
    """Read one thermogram's per-pixel temperatures [°C] as float32 (H, W).

    TIFF via tifffile, ``.npy`` with ``allow_pickle=False``, CSV as comma-separated numbers
    (empty cells are NaN). Refuses files that are too big, not 2-D, non-numeric, mostly NaN,
    in kelvin by mistake, or outside the range of building surfaces.
    """
    path = Path(path)
    name = label or str(path)
    if not path.is_file():
        raise SurveyError("pixel file not found", name)
    if path.stat().st_size > MAX_FILE_BYTES:
        raise SurveyError(f"file larger than {MAX_FILE_BYTES // 2**20} MB", name)
    suffix = path.suffix.lower()
    try:
        if suffix in (".tif", ".tiff"):
            import tifffile

            with tifffile.TiffFile(path) as tif:
                page = tif.pages[0]
                if int(np.prod(page.shape)) > MAX_PIXELS:
                    raise SurveyError(f"image of {page.shape} exceeds {MAX_PIXELS} pixels", name)
                data = page.asarray()
        elif suffix == ".npy":
            data = np.load(path, allow_pickle=False, mmap_mode="r")
            if data.size > MAX_PIXELS:
                raise SurveyError(f"array of {data.shape} exceeds {MAX_PIXELS} pixels", name)
            data = np.array(data)
        elif suffix == ".csv":
            data = _read_csv_pixels(path, name)
        else:
            raise SurveyError(f"unsupported pixel file type '{suffix}' (expected .tif, .npy, .csv)", name)
    except SurveyError:
        raise
    except Exception as exc:  # noqa: BLE001 - any reader failure is a bad file for the user
        raise SurveyError(f"cannot read pixel data ({type(exc).__name__}: {exc})", name) from None
    data = np.squeeze(np.asarray(data))
    if data.ndim != 2:
        raise SurveyError(f"expected a 2-D image of temperatures, got shape {data.shape}", name)
    if data.shape[0] < 8 or data.shape[1] < 8:
        raise SurveyError(f"image of {data.shape} is too small (at least 8 × 8 px)", name)
    if data.dtype.kind not in "fiu":
        raise SurveyError(f"expected numeric pixel values, got dtype {data.dtype}", name)
    img = data.astype(np.float32)
    finite = np.isfinite(img)
    share_bad = 1.0 - finite.mean()
    if share_bad > MAX_INVALID_SHARE:
        raise SurveyError(f"{share_bad:.0%} of the pixels are NaN or infinite", name)
    img[~finite] = np.nan
    med = float(np.nanmedian(img))
    if med > KELVIN_SUSPECT_C:
        raise SurveyError(
            f"median reading {med:.1f} looks like kelvin; expected °C (subtract 273.15)", name
        )
    lo, hi = float(np.nanmin(img)), float(np.nanmax(img))
    if lo < PLAUSIBLE_C[0] or hi > PLAUSIBLE_C[1]:
        raise SurveyError(
            f"readings span {lo:.1f}…{hi:.1f} °C, outside {PLAUSIBLE_C[0]:g}…{PLAUSIBLE_C[1]:g} °C", name
        )
    return img


def _read_csv_pixels(path: Path, name: str) -> np.ndarray:
    rows = []
    with path.open(encoding="utf-8") as fh:
        for i, line in enumerate(fh, start=1):
            line = line.strip()
            if not line:
                continue
            cells = line.replace(";", ",").split(",")
            try:
                rows.append([float(c) if c.strip() else math.nan for c in cells])
            except ValueError:
                raise SurveyError(f"line {i}: expected comma-separated numbers in °C", name) from None
            if len(rows) * len(rows[0]) > MAX_PIXELS:
                raise SurveyError(f"more than {MAX_PIXELS} pixels", name)
    if not rows:
        raise SurveyError("empty CSV", name)
    widths = {len(r) for r in rows}
    if len(widths) != 1:
        raise SurveyError(f"rows have different lengths {sorted(widths)}", name)
    return np.array(rows, dtype=np.float32)


def load_air_log(path: Path, label: str | None = None):
    """Read a series log CSV: columns ``time`` (ISO 8601), ``indoor_air_c``, ``outdoor_air_c``,
    ``frame`` (pixel file of the thermogram taken then, relative to the log, may be empty),
    optional ``reflected_c``. Returns a pandas DataFrame sorted by time with ``hours`` added.
    """
    import pandas as pd

    name = label or str(path)
    try:
        df = pd.read_csv(path, dtype={"frame": "string"})
    except Exception as exc:  # noqa: BLE001
        raise SurveyError(f"cannot read the air log ({exc})", name) from None
    for col in ("time", "indoor_air_c", "outdoor_air_c"):
        if col not in df.columns:
            raise SurveyError(f"missing column (columns: {', '.join(df.columns)})", name, col)
    try:
        df["time"] = pd.to_datetime(df["time"], format="ISO8601")
    except (ValueError, TypeError):
        raise SurveyError("expected ISO 8601 timestamps, e.g. 2026-01-14T22:00", name, "time") from None
    for col in ("indoor_air_c", "outdoor_air_c") + (("reflected_c",) if "reflected_c" in df else ()):
        vals = pd.to_numeric(df[col], errors="coerce")
        if vals.isna().any():
            row = int(np.flatnonzero(vals.isna().to_numpy())[0]) + 2
            raise SurveyError(f"line {row}: expected a number in °C", name, col)
        df[col] = vals.astype(float)
    df = df.sort_values("time").reset_index(drop=True)
    if df["time"].duplicated().any():
        raise SurveyError("duplicate timestamps", name, "time")
    df["hours"] = (df["time"] - df["time"].iloc[0]).dt.total_seconds() / 3600.0
    if "frame" not in df:
        df["frame"] = pd.NA
    return df
