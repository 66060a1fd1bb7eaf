"""Typed, checked access to one table of survey.toml (used by `envelope.loader`).

`_Table` reads numbers, fractions, text, identifiers, lists, points and sub-tables with a
range and a unit, names the key in every error, refuses unknown keys (suggesting the
closest), and records required keys that are missing or hold the placeholder in a shared
``todo`` list instead of stopping at the first one. `check_identifier` and `check_text`
hold the rules for names used in file names and for free text.
"""

from __future__ import annotations

import datetime as dt
import difflib
import math
import re
import unicodedata

from .errors import SurveyError, celsius_slip
from .survey import MAX_ID_CHARS, MAX_TEXT_CHARS, PLACEHOLDER

__all__ = ["Table", "REQUIRED", "check_identifier", "check_text", "short"]

_REQUIRED = object()
_ID = re.compile(r"[A-Za-z0-9_-][A-Za-z0-9._-]*\Z")
_HHMM = re.compile(r"([01]?\d|2[0-3]):([0-5]\d)\Z")
_BIDI = set("\u202a\u202b\u202c\u202d\u202e\u2066\u2067\u2068\u2069\u2028\u2029")
_NUMBER_TEXT = re.compile(r"\s*([-+]?(?:\d+(?:[.,]\d*)?|[.,]\d+))\s*(.*?)\s*\Z")
KEY_HOMES: dict[str, tuple[str, ...]] = {}
"""Key → the tables it belongs in (``[conditions]``...), filled by `envelope.loader`: an
unknown key that is valid elsewhere names its table."""


def check_identifier(value: str) -> str | None:
    """Why `value` cannot be an identifier used in file names, or None if it can."""
    if not value:
        return "expected a non-empty name"
    if len(value) > MAX_ID_CHARS:
        return f"expected at most {MAX_ID_CHARS} characters, got {len(value)}"
    if value.startswith("."):
        return "expected a name not starting with '.'"
    if not _ID.match(value):
        bad = next(c for c in value if not re.match(r"[A-Za-z0-9._-]", c))
        return (f"character {_show(bad)} not allowed; names become parts of file names: "
                "use ASCII letters, digits, '-', '_' and '.'")
    return None


def check_text(value: str) -> str | None:
    """Why `value` cannot be a free-text field, or None if it can."""
    if len(value) > MAX_TEXT_CHARS:
        return f"expected at most {MAX_TEXT_CHARS} characters, got {len(value)}"
    for c in value:
        if unicodedata.category(c) == "Cc" or c in _BIDI:
            return f"control character {_show(c)} not allowed in text (keep it on one line)"
    return None


def _show(c: str) -> str:
    return f"'{c}'" if c.isprintable() and not c.isspace() else f"U+{ord(c):04X}"


# --------------------------------------------------------------------------- table reader
class Table:
    """Typed access to one TOML table; unknown keys are errors (typos are common).

    A required key that is missing, or any key holding the placeholder, is recorded in
    ``todo`` and answered with a stand-in (NaN, "" or None) so that checking goes on.
    """

    def __init__(self, data, file: str, path: str, allowed: tuple[str, ...], todo: list):
        if not isinstance(data, dict):
            raise SurveyError(f"expected a table, got {_kind(data)}", file, path or None)
        self.data, self.file, self.path, self.todo = data, file, path, todo
        for key in data:
            if key not in allowed:
                close = difflib.get_close_matches(key, allowed, n=1)
                homes = [h for h in KEY_HOMES.get(key, ()) if h != f"[{_generic(path)}]"]
                hint = (f" (did you mean '{close[0]}'?)" if close else
                        f" here (it belongs in {' or '.join(homes)})" if homes else "")
                raise SurveyError(f"unknown key{hint}; allowed: {', '.join(allowed)}", file,
                                  self._f(_clip(key)))

    def _f(self, key: str) -> str:
        return f"{self.path}.{key}" if self.path else key

    def err(self, key: str, msg: str) -> SurveyError:
        return SurveyError(msg, self.file, self._f(key))

    def pending(self, key: str) -> bool:
        """True when `key` is a placeholder (recorded in todo)."""
        v = self.data.get(key)
        return isinstance(v, str) and v.strip().lower() == PLACEHOLDER

    def _get(self, key, default):
        """(value, given): a missing required key or a placeholder gives (None, False)."""
        if key in self.data:
            if self.pending(key):
                self.todo.append(self._f(key))
                return None, False
            return self.data[key], True
        if default is _REQUIRED:
            self.todo.append(self._f(key))
            return None, False
        return default, False

    def num(self, key, default=_REQUIRED, lo=-math.inf, hi=math.inf, unit="", lo_open=False):
        v, given = self._get(key, default)
        if not given:
            return math.nan if default is _REQUIRED or self.pending(key) else v
        if isinstance(v, bool) or not isinstance(v, int | float):
            raise self.err(key, f"expected a number{_u(unit)}, got {_short(v)}"
                                f"{_text_hint(v, unit, hi)}")
        v = float(v)
        if not math.isfinite(v):
            raise self.err(key, f"expected a finite number{_u(unit)}, got {v}")
        if v < lo or v > hi or (lo_open and v == lo):
            rng = f"({lo:g}, {hi:g}]" if lo_open else f"[{lo:g}, {hi:g}]"
            raise self.err(key, f"expected a value in {rng}{_u(unit)}, got {v:g}"
                                f"{_range_hint(v, lo, hi, unit)}")
        return v

    def fraction(self, key, default=_REQUIRED):
        v = self.data.get(key)
        if isinstance(v, int | float) and not isinstance(v, bool) and 1.0 < v <= 100.0:
            raise self.err(key, f"expected a fraction 0–1, got {v:g} — was it given in percent?")
        return self.num(key, default, 0.0, 1.0, "-")

    def int(self, key, default=_REQUIRED, lo=-(2**62), hi=2**62):
        v, given = self._get(key, default)
        if not given:
            return v
        if isinstance(v, bool) or not isinstance(v, int):
            raise self.err(key, f"expected a whole number, got {_short(v)}{_text_hint(v, '', hi)}")
        if v < lo or v > hi:
            raise self.err(key, f"expected a whole number in [{lo}, {hi}], got {v}")
        return v

    def str(self, key, default=_REQUIRED, choices=None):
        v, given = self._get(key, default)
        if not given:
            return "" if v is None and (default is _REQUIRED or self.pending(key)) else v
        if not isinstance(v, str):
            raise self.err(key, f"expected text, got {_short(v)}")
        if choices is not None and v not in choices:
            raise self.err(key, f"expected one of {', '.join(choices)}; got {_short(v)}")
        return v

    def text(self, key, default=_REQUIRED):
        """Free text: length limit, no control characters."""
        v = self.str(key, default)
        if isinstance(v, str) and (why := check_text(v)):
            raise self.err(key, why)
        return v

    def ident(self, key, default=_REQUIRED):
        """An identifier used in file names (see `check_identifier`)."""
        v = self.str(key, default)
        if v and (why := check_identifier(v)):
            raise self.err(key, why)
        return v

    def bool(self, key, default=_REQUIRED):
        v, given = self._get(key, default)
        if not given:
            return bool(v)
        if not isinstance(v, bool):
            raise self.err(key, f"expected true or false, got {_short(v)}")
        return v

    def date(self, key):
        """A date: a TOML date (``2026-01-14``) or text; returned as text (ISO for dates)."""
        v = self.data.get(key, "")
        if isinstance(v, dt.datetime | dt.date):
            return v.date().isoformat() if isinstance(v, dt.datetime) else v.isoformat()
        return self.text(key, "")

    def hhmm(self, key):
        """A local time ``"HH:MM"`` (text or a TOML local time); None when absent."""
        v, given = self._get(key, None)
        if not given:
            return None
        if isinstance(v, dt.time):
            return f"{v.hour:02d}:{v.minute:02d}"
        m = _HHMM.match(v) if isinstance(v, str) else None
        if not m:
            raise self.err(key, f"expected a local time \"HH:MM\" (24 h), got {_short(v)}")
        return f"{int(m.group(1)):02d}:{m.group(2)}"

    def nums(self, key, default=_REQUIRED, n=None, lo=-math.inf, hi=math.inf, unit=""):
        v, given = self._get(key, default)
        if not given:
            return v
        if not isinstance(v, list):
            raise self.err(key, f"expected a list of numbers{_u(unit)}, got {_short(v)}")
        if n is not None and len(v) != n:
            raise self.err(key, f"expected exactly {n} values{_u(unit)}, got {len(v)}")
        out = []
        for i, x in enumerate(v):
            if isinstance(x, bool) or not isinstance(x, int | float) or not math.isfinite(x):
                raise self.err(f"{key}[{i}]", f"expected a finite number{_u(unit)}, got {_short(x)}"
                                              f"{_text_hint(x, unit, hi)}")
            if x < lo or x > hi:
                raise self.err(f"{key}[{i}]", f"expected a value in [{lo:g}, {hi:g}]{_u(unit)}, "
                                              f"got {x:g}{_range_hint(x, lo, hi, unit)}")
            out.append(float(x))
        return tuple(out)

    def point(self, key, default=_REQUIRED):
        return self.nums(key, default, n=2, unit=" px")

    def points(self, key, unit):
        v, given = self._get(key, _REQUIRED)
        if not given:
            return ()
        if not isinstance(v, list) or not v:
            raise self.err(key, f"expected a list of [x, y] pairs{_u(unit)}, got {_short(v)}")
        out = []
        for i, p in enumerate(v):
            if (not isinstance(p, list) or len(p) != 2
                    or any(isinstance(c, bool) or not isinstance(c, int | float) for c in p)
                    or not all(math.isfinite(c) for c in p)):
                raise self.err(f"{key}[{i}]", f"expected [x, y] with two finite numbers{_u(unit)}, got {_short(p)}")
            out.append((float(p[0]), float(p[1])))
        return tuple(out)

    def names(self, key, known=None, what="element"):
        v = self.data.get(key, [])
        if not isinstance(v, list) or not all(isinstance(x, str) for x in v):
            raise self.err(key, f"expected a list of names, got {_short(v)}")
        for i, x in enumerate(v):
            if known is not None and x not in known:
                raise self.err(f"{key}[{i}]", f"no {what} named {_short(x)}")
        return tuple(v)

    def sub(self, key, allowed, default=_REQUIRED):
        """A sub-table; a missing optional one gives `default` as a table ({}) or None."""
        if key not in self.data and default is _REQUIRED:
            return Table({}, self.file, self._f(key), allowed, self.todo)
        v = self.data.get(key, default)
        if v is None:
            return None
        return Table(v, self.file, self._f(key), allowed, self.todo)

    def array(self, key, allowed):
        v = self.data.get(key, [])
        if not isinstance(v, list):
            raise self.err(key, "expected an array of tables ([[...]])")
        return [Table(x, self.file, f"{self._f(key)}[{i}]", allowed, self.todo)
                for i, x in enumerate(v)]


def _generic(path: str) -> str:
    """``thermograms[2].export`` → ``thermograms.export`` (the table's name in messages)."""
    return re.sub(r"\[\d+\]", "", path)


_TEMPERATURE_UNITS = {"c": "°C", "°c": "°C", "degc": "°C", "k": "K", "f": "°F", "°f": "°F",
                      "degf": "°F"}


def _text_hint(v, unit: str, hi: float) -> str:
    """How to write a number given as text (``"21 C"``, ``"0,93"``, ``"55%"``), or ""."""
    if not isinstance(v, str):
        return ""
    m = _NUMBER_TEXT.match(v)
    if not m:
        return ""
    digits, suffix = m.group(1).replace(",", "."), m.group(2)
    try:
        x = float(digits)
    except ValueError:
        return ""
    u = unit.strip()
    if suffix == "%":
        if hi <= 1.0:
            return f"; write the fraction without quotes or %: {x / 100:g}"
        return f"; write the number alone, without quotes or %{_u(unit)}"
    if suffix:
        given = _TEMPERATURE_UNITS.get(suffix.lower().replace(" ", ""))
        if u == "°C" and given in ("K", "°F"):
            return (f"; write the number alone, without quotes or unit, in °C (the unit in the "
                    f"key's name), not in {given}")
        return f"; write the number alone, without quotes or unit: {digits}{_u(unit)}"
    return f"; write the number without quotes{' and with a decimal point' if ',' in m.group(1) else ''}: {digits}"


def _range_hint(v: float, lo: float, hi: float, unit: str) -> str:
    """A likely slip for a number out of range: kelvin or °F for °C, percent for a fraction."""
    u = unit.strip()
    slip = celsius_slip(v, lo, hi) if u == "°C" else None
    if slip is not None:
        unit, c = slip
        if unit == "K":
            return f" — was it given in kelvin? {v:g} K is {c:.2f} °C"
        return f" — was it given in °F? {v:g} °F is {c:.1f} °C"
    if u == "m" and v > hi:
        for div, name in ((100.0, "centimetres"), (1000.0, "millimetres")):
            if lo < v / div <= hi:
                return f" — was it given in {name}? {v:g} {name[0]}m is {v / div:g} m"
    if u == "-" and max(hi, 5.0) <= v <= 100.0 and lo <= v / 100.0 <= hi:
        return f" — was it given in percent? write {v / 100.0:g}"
    return ""


def _u(unit: str) -> str:
    return f" [{unit.strip()}]" if unit.strip() else ""


def _kind(v) -> str:
    return {list: "a list", dict: "a table", str: "text", bool: "true/false"}.get(
        type(v), type(v).__name__)


def _clip(s: str, n: int = 40) -> str:
    s = "".join(c if c.isprintable() else "?" for c in s)
    return s if len(s) <= n else s[: n - 1] + "…"


def _short(v) -> str:
    """A value for a message: printable, at most 40 characters."""
    return _clip(repr(v))



REQUIRED = _REQUIRED
short = _short
