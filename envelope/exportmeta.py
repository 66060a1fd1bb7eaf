"""Export settings found in the header lines of a camera export.

Camera software writes its export settings above the grid in many wordings. `settings_from_header`
recognises the ones the survey needs, by generic names (in English and a few other
languages) and converts them to the survey's units:

====================  ======================================  ==================
setting               header keys (case, spaces, units ignored)  survey key
====================  ======================================  ==================
``emissivity``        emissivity, epsilon, emissivität ...     ``[thermograms.export] emissivity``
``reflected_c``       reflected (apparent) temperature ...     ``[thermograms.export] reflected_c``
``atmosphere_c``      atmospheric / atmosphere temperature     ``[thermograms.export] atmosphere_c``
``transmittance``     (atmospheric) transmittance / transmission ``[thermograms.export] transmittance``
``distance_m``        (object) distance                        ``[[thermograms]] distance_m``
``rh``                relative humidity, humidity, RH          (a comment: the camera's setting)
``unit``              unit, units, temperature unit            ``[thermograms.export] unit``
``date``, ``time``    date, time (of capture)                  ``[survey] date``, ``time``
``width``, ``height`` width / height / columns / rows [px]     checked against the grid
====================  ======================================  ==================

Values may carry a unit (``20 °C``, ``293.15 K``, ``68 °F``, ``3 m``, ``10 ft``, ``50 %``) or
take it from brackets in the key (``Distance [m]: 3``). A value that cannot be read, or that
could mean two things (a date like ``03/04/2026``), is left out and listed in the notes.
"""

from __future__ import annotations

import re
import unicodedata

from .constants import T0_K

__all__ = ["settings_from_header", "parse_unit", "KEYS"]

KEYS = {
    "emissivity": ("emissivity", "emissivite", "emissivitat", "emissivitaet", "emisividad",
                   "emissivita", "epsilon", "objectemissivity", "emissivitysetting"),
    "reflected_c": ("reflectedtemperature", "reflectedapparenttemperature", "reflectedtemp",
                    "refltemp", "reflectedtemperaturesetting", "reflectiontemperature",
                    "temperaturereflected"),
    "atmosphere_c": ("atmospherictemperature", "atmospheretemperature", "atmospherictemp",
                     "atmtemp", "atmospheretemp"),
    "transmittance": ("transmittance", "atmospherictransmittance", "atmospherictransmission",
                      "transmission"),
    "distance_m": ("distance", "objectdistance", "distancetoobject", "subjectdistance",
                   "measurementdistance"),
    "rh": ("relativehumidity", "humidity", "rh", "atmospherichumidity"),
    "unit": ("unit", "units", "temperatureunit", "temperatureunits", "unitoftemperature",
             "tempunit"),
    "decimal": ("decimal", "decimalmark", "decimalseparator"),
    "date": ("date", "capturedate", "datetaken", "recordingdate", "dateofcapture"),
    "time": ("time", "capturetime", "timetaken", "recordingtime", "timeofcapture"),
    "width": ("width", "imagewidth", "columns", "cols", "widthpx"),
    "height": ("height", "imageheight", "rows", "heightpx"),
}
_BY_KEY = {k: setting for setting, keys in KEYS.items() for k in keys}
_NUMBER = re.compile(r"\s*([-+]?(?:\d+(?:[.,]\d*)?|[.,]\d+)(?:[eE][-+]?\d+)?)\s*(.*?)\s*\Z")


def _norm(key: str) -> tuple[str, str]:
    """(normalised key, unit in brackets): ``"Distance [m]"`` → ``("distance", "m")``."""
    unit = ""
    m = re.search(r"[\[(]([^\])]*)[\])]", key)
    if m:
        unit = m.group(1).strip()
        key = key[: m.start()] + key[m.end():]
    key = unicodedata.normalize("NFKD", key)
    key = "".join(c for c in key if c.isalpha()).lower()
    return key, unit


def parse_unit(text: str) -> str | None:
    """"C", "K" or "F" from a unit as exporters write it (``°C``, ``degC``, ``Kelvin``...)."""
    t = text.strip().replace("Â", "").replace("º", "°").lower()
    t = t.replace("°", "").replace("deg", "").replace("degrees", "").strip(" .")
    return {"c": "C", "celsius": "C", "rees c": "C", "k": "K", "kelvin": "K", "f": "F",
            "fahrenheit": "F"}.get(t)


def _to_c(value: float, unit: str | None) -> float:
    return {"K": value - T0_K, "F": (value - 32.0) * 5.0 / 9.0}.get(unit or "C", value)


def settings_from_header(header: dict) -> tuple[dict, list[str]]:
    """Export settings in survey units from a header dict (see the module table).

    Parameters
    ----------
    header : dict of str to str
        ``key → value`` as found above the grid.

    Returns
    -------
    (settings, notes)
        ``settings`` maps ``emissivity`` [-], ``reflected_c`` / ``atmosphere_c`` [°C],
        ``transmittance`` [-], ``distance_m`` [m], ``rh`` [0–1], ``unit`` ("C"/"K"/"F"),
        ``decimal``, ``date`` (ISO text), ``time`` ("HH:MM"), ``width`` / ``height`` [px] to
        values; ``notes`` says what was left out and why.
    """
    settings: dict = {}
    notes: list[str] = []
    raw = {}
    for key, value in header.items():
        norm, bracket = _norm(key)
        setting = _BY_KEY.get(norm)
        if setting and setting not in raw:
            raw[setting] = (key, value, bracket)
    if "unit" in raw:
        u = parse_unit(raw["unit"][1])
        if u is None:
            notes.append(f"header '{raw['unit'][0]}': unknown temperature unit")
        else:
            settings["unit"] = u
    for setting, (key, value, bracket) in raw.items():
        if setting == "unit":
            continue
        try:
            v = _value(setting, value, bracket, settings.get("unit"))
        except ValueError as exc:
            notes.append(f"header '{key}': {exc}")
            continue
        if v is not None:
            settings[setting] = v
    return settings, notes


def _value(setting: str, value: str, bracket: str, file_unit):
    if setting == "decimal":
        v = value.strip().strip("'\"")
        if v in (".", ","):
            return v
        raise ValueError("expected '.' or ','")
    if setting == "date":
        return _date(value)
    if setting == "time":
        m = re.match(r"\s*([01]?\d|2[0-3])[:.]([0-5]\d)(?:[:.][0-5]\d(?:[.,]\d+)?)?\s*(am|pm)?\s*\Z",
                     value, re.I)
        if not m:
            raise ValueError("expected a time HH:MM")
        h = int(m.group(1))
        if m.group(3):
            if h > 12:
                raise ValueError("expected a 12 h time before am/pm")
            h = h % 12 + (12 if m.group(3).lower() == "pm" else 0)
        return f"{h:02d}:{m.group(2)}"
    m = _NUMBER.match(value)
    if not m:
        raise ValueError("expected a number")
    x = float(m.group(1).replace(",", "."))
    unit = (m.group(2) or bracket).strip()
    if setting in ("width", "height"):
        if x != int(x) or x < 1:
            raise ValueError("expected a whole number of pixels")
        return int(x)
    if setting in ("emissivity", "transmittance"):
        if unit == "%" or x > 1.0:
            x = x / 100.0
        if not 0.0 < x <= 1.0:
            raise ValueError("expected a value in (0, 1]")
        return x
    if setting == "rh":
        if unit == "%" or x > 1.0:
            x = x / 100.0
        if not 0.0 <= x <= 1.0:
            raise ValueError("expected a relative humidity 0–100 %")
        return x
    if setting == "distance_m":
        factor = {"": 1.0, "m": 1.0, "cm": 0.01, "mm": 0.001, "ft": 0.3048, "feet": 0.3048}.get(
            unit.lower())
        if factor is None:
            raise ValueError(f"unknown length unit '{unit[:10]}'")
        x *= factor
        if not 0.0 < x <= 2000.0:
            raise ValueError("expected a distance in (0, 2000] m")
        return x
    u = parse_unit(unit) if unit else file_unit
    if unit and u is None:
        raise ValueError(f"unknown temperature unit '{unit[:10]}'")
    c = _to_c(x, u)
    if not -60.0 <= c <= 200.0:
        raise ValueError(f"{c:.1f} °C is not a plausible temperature (unit not given?)")
    return round(c, 4)


def _date(value: str) -> str:
    v = value.strip()
    m = re.match(r"(\d{4})[-./](\d{1,2})[-./](\d{1,2})\b", v)
    if m:
        y, mo, d = (int(g) for g in m.groups())
    else:
        m = re.match(r"(\d{1,2})([-./])(\d{1,2})\2(\d{4})\b", v)
        if not m:
            raise ValueError("expected a date")
        a, sep, b, y = int(m.group(1)), m.group(2), int(m.group(3)), int(m.group(4))
        if sep == "." or a > 12:
            d, mo = a, b
        elif b > 12:
            mo, d = a, b
        else:
            raise ValueError("day and month cannot be told apart; give the date in [survey]")
    if not (1 <= mo <= 12 and 1 <= d <= 31):
        raise ValueError("expected a date")
    return f"{y:04d}-{mo:02d}-{d:02d}"
