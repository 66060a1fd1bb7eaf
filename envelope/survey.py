"""Survey folder → dataclasses (edge: the entry point for reading a survey).

A survey is a folder holding one TOML file (format ``envelope-survey``, version 1; see
``docs/survey-format.md``), per-pixel temperature files (camera exports: CSV in many dialects,
TIFF, 16-bit PNG or ``.npy``) and element outlines as GeoJSON in pixel coordinates.
`load_survey` reads and validates the TOML (`envelope.loader`) and checks that every file it
names exists inside the folder; pixel data are read per thermogram by `load_pixels`
(`envelope.readers`) so that one broken file does not stop the others.

Every user error is a `SurveyError` naming the file, the key and what was expected.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from pathlib import Path

from envelope.convection import MODELS as CONVECTION_MODELS
from envelope.retrofit import MEASURE_KINDS, Measure  # noqa: F401  (one measure type)

__all__ = [
    "FORMAT_NAME", "FORMAT_VERSION", "SURVEY_FILE", "PLACEHOLDER", "ELEMENT_KINDS", "HOST_KINDS",
    "SIDES", "HEAT_FLOW", "MEASURE_KINDS", "HUMIDITY_MODELS", "INTERIOR_CONVECTION",
    "EXTERIOR_CONVECTION", "SKY_MODELS", "FRSI_CRITERIA", "U_BASES", "SHIELDING", "UNITS",
    "MAX_ID_CHARS", "MAX_TEXT_CHARS",
    "Site", "Conditions", "Camera", "Climate", "Prices", "Analysis", "Element", "ExportSettings",
    "ReferencePoints", "KnownLength", "Probe", "Tape", "HeatFluxMeter", "Thermogram",
    "PressurePair", "Series", "Measure", "Airtightness", "Junction", "Survey",
    "load_survey", "find_survey_file", "load_pixels", "load_air_log",
    "MAX_PIXELS", "MAX_FILE_BYTES", "KELVIN_SUSPECT_C", "PLAUSIBLE_C", "MAX_INVALID_SHARE",
]

FORMAT_NAME = "envelope-survey"
FORMAT_VERSION = 1
SURVEY_FILE = "survey.toml"
PLACEHOLDER = "fill in"
"""Value that `envelope init` writes for a required key it could not fill: `inspect` lists
it as still needed, `assess` refuses the survey until it is replaced."""

ELEMENT_KINDS = ("wall", "window", "door", "roof", "floor", "ceiling")
HOST_KINDS = ("wall", "roof")
"""Kinds of element that a window or door can sit in."""
SIDES = ("interior", "exterior")
HEAT_FLOW = ("horizontal", "upward", "downward")
HUMIDITY_MODELS = ("measured", "humidity_class", "moisture_production")
INTERIOR_CONVECTION = ("ensemble", *CONVECTION_MODELS)
"""Interior convection: the ensemble of correlations that fit each surface, or one model."""
EXTERIOR_CONVECTION = ("iso6946_wind", "mcadams", "watmuff")
SKY_MODELS = ("berdahl_martin", "swinbank")
FRSI_CRITERIA = ("iso13788", "bre-ip1-06-dwellings", "din-4108-2")
U_BASES = ("environmental", "air")
"""What a specified U refers to: the environmental (ISO 6946 design) temperatures or air."""
SHIELDING = ("exposed", "normal", "sheltered")
UNITS = ("C", "K", "F")
"""Units of exported readings: degrees Celsius, kelvin, degrees Fahrenheit."""
MAX_ID_CHARS = 64
"""Longest identifier (thermogram id, element name, series id) [characters]."""
MAX_TEXT_CHARS = 200
"""Longest free-text field (site name, surveyor, labels, measure names) [characters]."""

from .readers import (  # noqa: E402  (re-exported: the pipeline imports them from here)
    KELVIN_SUSPECT_C,
    MAX_FILE_BYTES,
    MAX_INVALID_SHARE,
    MAX_PIXELS,
    PLAUSIBLE_C,
    load_air_log,
    load_pixels,
)


# --------------------------------------------------------------------------- dataclasses
@dataclass(frozen=True)
class Site:
    name: str
    address: str = ""
    town: str = ""
    latitude_deg: float | None = None


@dataclass(frozen=True)
class Conditions:
    """Air conditions on the survey night. Temperatures [°C], rh as a fraction 0–1.

    ``time`` is the local time ``"HH:MM"`` of the survey, the default of every thermogram's
    own ``time``.
    """

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
    time: str | None = None


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
    """A building element.

    ``label`` is a readable name for reports (free text; None: reports show a readable form
    of ``name``); ``heat_capacity_kj_m2k`` the areal heat capacity [kJ/(m²·K)] (for the
    ISO 9869-1 period rules); ``u_specified_basis`` says whether ``u_specified_w_m2k`` refers
    to environmental temperatures (the ISO 6946 design value, default) or to air temperatures.
    """

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
    label: str | None = None
    heat_capacity_kj_m2k: float | None = None
    u_specified_basis: str = "environmental"


@dataclass(frozen=True)
class ExportSettings:
    """Settings the camera used when it exported the readings, and how the file stores them.

    ``emissivity``, ``reflected_c``, ``transmittance``, ``atmosphere_c`` are the camera's
    export settings (undone by the radiometric correction). ``unit`` ("C", "K", "F"; None:
    as the file's header says, else °C), ``scale`` and ``offset`` (reading = stored value ×
    scale + offset, in ``unit``; required for integer pixel data) and ``page`` (0-based page
    of a multi-page TIFF; None: the largest) tell the reader how to get temperatures.
    """

    emissivity: float = 1.0
    reflected_c: float = 20.0
    transmittance: float = 1.0
    atmosphere_c: float | None = None
    unit: str | None = None
    scale: float | None = None
    offset: float = 0.0
    page: int | None = None


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
class HeatFluxMeter:
    """A heat-flux-meter spot: heat flux into the element [W/m²], positive outwards (from the
    warm side to the cold side), its standard uncertainty, and optionally the surface
    temperature the meter's own sensor read [°C]."""

    pixel_xy: tuple[float, float]
    q_w_m2: float
    q_std_w_m2: float
    surface_c: float | None = None


@dataclass(frozen=True)
class Thermogram:
    """One thermal image and its settings.

    ``time`` is the local time ``"HH:MM"`` it was taken (default: ``[conditions] time``);
    ``mrt_c`` / ``mrt_std_k`` the mean radiant temperature seen by the surface and its
    standard uncertainty (distinct from the reflected apparent temperature of the
    measurement equation); ``elements`` the element names this view should show (empty:
    not said).
    """

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
    time: str | None = None
    mrt_c: float | None = None
    mrt_std_k: float | None = None
    heat_flux_meter: HeatFluxMeter | None = None
    elements: tuple[str, ...] = ()


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
class Airtightness:
    """Result of a fan pressurisation test (EN ISO 9972): exactly one of ``n50_per_h`` [1/h]
    and ``q50_m3_h_m2`` [m³/(h·m²)], with the building's ``volume_m3``, ``envelope_area_m2``,
    ``storeys`` and wind ``shielding``."""

    n50_per_h: float | None = None
    q50_m3_h_m2: float | None = None
    volume_m3: float | None = None
    envelope_area_m2: float | None = None
    storeys: int | None = None
    shielding: str = "normal"


@dataclass(frozen=True)
class Junction:
    """A junction between two elements (a linear thermal bridge by design)."""

    elements: tuple[str, str]
    junction_type: str
    psi_specified_w_mk: float | None = None


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
    airtightness: Airtightness | None = None
    junctions: tuple[Junction, ...] = ()
    todo: tuple[str, ...] = ()
    """Required keys still missing or left as placeholders (only in a survey read with
    ``incomplete=True``; a survey for `assess` has none)."""

    def thermogram(self, tid: str) -> Thermogram:
        for t in self.thermograms:
            if t.id == tid:
                return t
        raise KeyError(tid)


def find_survey_file(folder) -> Path:
    """The survey TOML inside `folder` (``survey.toml``, or the only ``*.toml``)."""
    from .loader import find_survey_file as _find

    return _find(folder)


def load_survey(folder, incomplete: bool = False) -> Survey:
    """Read and validate a survey folder.

    Parameters
    ----------
    folder : path
        The survey folder (or its TOML file).
    incomplete : bool
        False (for `assess`): every required key missing or left as a placeholder is an
        error, all of them named in one message. True (for `inspect`): they are listed in
        ``Survey.todo`` instead (numbers NaN, text empty, files None) and everything else is
        checked as usual.

    Returns
    -------
    Survey

    Raises
    ------
    SurveyError
        On any bad input, naming the file and the key.
    """
    from .loader import load

    return load(folder, incomplete=incomplete)


def survey_paths(survey) -> list[Path]:
    """Every path the loaded survey names (its file, pixels, outlines, logs...), walking its
    dataclasses; links are not resolved here (callers choose)."""
    import dataclasses as _dc

    found: dict[str, Path] = {}

    def walk(obj, depth: int) -> None:
        if depth > 8:
            return
        if isinstance(obj, Path):
            found.setdefault(str(obj), obj)
        elif _dc.is_dataclass(obj) and not isinstance(obj, type):
            for f in _dc.fields(obj):
                walk(getattr(obj, f.name, None), depth + 1)
        elif isinstance(obj, list | tuple):
            for item in obj:
                walk(item, depth + 1)
        elif isinstance(obj, dict):
            for item in obj.values():
                walk(item, depth + 1)

    walk(survey, 0)
    return list(found.values())

