"""How numbers print in every report: one uncertainty convention, precision from the
interval, U never below zero, plain ranges for the homeowner.

Conventions (stated in the reports' method notes):

- **One uncertainty convention: the 95 % interval**, written ``value (95 %: low–high)``.
  Where the results hold only a standard uncertainty (``_std``), the interval is
  ``value ± 1.96 std`` (normal distribution, JCGM 100:2008 §6.3) and says so.
- **Precision from the interval**: the half-width of the 95 % interval is kept to two
  significant digits when its leading digits are below 355, to one otherwise (the rounding
  rule of the Particle Data Group, Review of Particle Physics, Introduction §5.3), and the
  value is rounded to the same decimal place.
- **U never below zero**: a U-value cannot be negative. An interval whose lower end reaches
  zero is printed as ``≤ high`` ("up to"), and a central value at or below zero as ``≈ 0``.
- **Homeowner ranges** are rounded to two significant figures; a range whose low end rounds
  to nothing is phrased ``up to about high`` with the central value beside it, never
  ``0 to high``.
"""

from __future__ import annotations

import math

from envelope.constants import Z95

__all__ = ["MINUS", "is_num", "decimals_for", "num", "pct", "interval", "ValueText",
           "u_text", "value_text", "from_std", "plain_amount", "plain_range", "plain_money",
           "money_symbol",
           "plural"]

MINUS = "\u2212"


def is_num(value) -> bool:
    """True for a finite real number (bools excluded)."""
    return (isinstance(value, int | float) and not isinstance(value, bool)
            and math.isfinite(value))


def decimals_for(half_width, default: int = 2, most: int = 4) -> int:
    """Decimal places that keep a 95 % half-width to one or two significant digits.

    Parameters
    ----------
    half_width : float
        Half the width of the 95 % interval, in the unit printed.
    default : int
        Used when the half-width is missing or zero.
    most : int
        Upper bound on the decimals.

    Examples
    --------
    >>> decimals_for(0.33), decimals_for(0.024), decimals_for(14.9), decimals_for(870.0)
    (2, 3, 0, -2)
    """
    if not is_num(half_width) or half_width <= 0:
        return default
    exp = math.floor(math.log10(half_width))
    lead = half_width / 10 ** (exp - 2)  # three leading digits, 100-999
    sig = 2 if lead < 355 else 1
    return min(most, sig - 1 - exp)


def num(value, decimals: int = 2, unit: str = "", missing: str = "n/a") -> str:
    """A number with `decimals` places (negative: rounded to tens, hundreds...), thousands
    separated, a true minus sign and an optional unit."""
    if not is_num(value):
        return missing
    if decimals < 0:
        value = round(value, decimals)
        decimals = 0
    text = f"{value:,.{decimals}f}"
    if text.startswith("-"):
        text = MINUS + text[1:] if float(text.replace(",", "")) != 0 else text[1:]
    return f"{text} {unit}" if unit else text


def pct(share, decimals: int = 0, missing: str = "n/a") -> str:
    """A fraction 0–1 as a percentage (``0.57`` → ``"57 %"``)."""
    return f"{100.0 * share:.{decimals}f} %" if is_num(share) else missing


def _reaches(lo, hi, floor, decimals) -> bool:
    """The low end is at the floor once printed (``round(lo, decimals) <= floor``)."""
    return round(lo, decimals) <= floor or lo <= floor + 1e-6 * max(abs(hi), 1.0)


def interval(lo, hi, decimals: int, floor: float | None = None, unit: str = "") -> str:
    """``low–high`` with `decimals`; ``≤ high`` when `floor` is given and the low end prints
    at or below it."""
    if not (is_num(lo) and is_num(hi)):
        return "n/a"
    if floor is not None and _reaches(lo, hi, floor, decimals):
        return f"≤ {num(hi, decimals, unit)}"
    return f"{num(lo, decimals)}–{num(hi, decimals, unit)}"


class ValueText(dict):
    """Printed forms of a value with its 95 % interval: ``value``, ``interval``, ``full``
    (value and interval together), ``decimals``, ``reaches_floor`` (the interval reaches the
    physical lower bound), ``from_std`` (interval made from a standard uncertainty)."""

    def __getattr__(self, key):
        try:
            return self[key]
        except KeyError as exc:
            raise AttributeError(key) from exc

    def __str__(self) -> str:
        return self["full"]


def value_text(value, lo=None, hi=None, unit: str = "", floor: float | None = None,
               default_decimals: int = 2, std=None) -> ValueText:
    """Print `value` with its 95 % interval in the one convention of the reports.

    Parameters
    ----------
    value : float
    lo, hi : float, optional
        The 95 % interval. When missing and `std` is given, ``value ± 1.96 std``.
    unit : str
        Unit printed after the value and after the interval.
    floor : float, optional
        Physical lower bound (0 for U, energy, heat flow): an interval reaching it prints
        ``≤ high`` and a value at or below it prints ``≈ floor``.
    default_decimals : int
        Decimals when there is no interval.
    std : float, optional
        Standard uncertainty, used only when `lo`/`hi` are missing.
    """
    made_from_std = False
    if not (is_num(lo) and is_num(hi)) and is_num(std) and is_num(value):
        lo, hi = value - Z95 * std, value + Z95 * std
        made_from_std = True
    has_iv = is_num(lo) and is_num(hi) and hi >= lo
    dec = decimals_for(0.5 * (hi - lo)) if has_iv else default_decimals
    if not is_num(value):
        v = "n/a"
    elif floor is not None and value <= floor:
        v = f"≈ {num(floor, max(dec, 0))}"
    else:
        v = num(value, dec)
    reaches = bool(has_iv and floor is not None and _reaches(lo, hi, floor, dec))
    iv = interval(lo, hi, dec, floor) if has_iv else ""
    u = f" {unit}" if unit else ""
    full = f"{v}{u}" if not iv else f"{v}{u} (95 %: {iv}{u})"
    return ValueText(value=v, interval=iv, full=full, decimals=dec, reaches_floor=reaches,
                     from_std=made_from_std, unit=unit)


def u_text(value, lo=None, hi=None, std=None, default_decimals: int = 2) -> ValueText:
    """A U-value [W/(m²·K)] in the reports' convention (never below zero); without an
    interval it keeps `default_decimals` (e.g. those of the same element's other U)."""
    return value_text(value, lo, hi, "", floor=0.0, std=std,
                      default_decimals=max(default_decimals, 0))


def from_std(value, std) -> tuple[float | None, float | None]:
    """The 95 % interval ``value ± 1.96 std`` (None, None when either is missing)."""
    if not (is_num(value) and is_num(std)):
        return None, None
    return value - Z95 * std, value + Z95 * std


def _two_sig(x: float) -> float:
    if x == 0:
        return 0.0
    mag = 10 ** (math.floor(math.log10(abs(x))) - 1)
    return round(x / mag) * mag


def plain_amount(value, unit: str = "") -> str:
    """A number for the homeowner: two significant figures, whole numbers from 10 up
    (``6509`` → ``"6,500"``, ``45.6`` → ``"46"``, ``1.23`` → ``"1.2"``)."""
    if not is_num(value):
        return "not estimated"
    r = _two_sig(max(value, 0.0))
    text = f"{r:,.0f}" if r >= 10 or r == 0 else f"{r:.1f}".rstrip("0").rstrip(".")
    return f"{text} {unit}".strip() if unit else text


def plain_range(lo, mid, hi, unit: str = "") -> str:
    """A range for the homeowner, never ``0 to high``.

    ``about 190 to 810 kWh``; when the low end rounds to zero or is under a tenth of the
    high end: ``up to about 590 kWh (most likely about 190 kWh)``; when both ends round to
    the same figure: ``about 190 kWh``.
    """
    if not is_num(mid) and not (is_num(lo) and is_num(hi)):
        return "not estimated"
    if not (is_num(lo) and is_num(hi)):
        return f"about {plain_amount(mid, unit)}"
    lo_t, hi_t = plain_amount(lo), plain_amount(hi)
    if is_num(mid) and hi_t == lo_t:
        return f"about {plain_amount(mid, unit)}"
    if _two_sig(max(lo, 0.0)) == 0 or lo < 0.1 * hi:
        most = f" (most likely about {plain_amount(mid, unit)})" if is_num(mid) else ""
        return f"up to about {plain_amount(hi, unit)}{most}"
    return f"about {lo_t} to {plain_amount(hi, unit)}"


def plain_money(lo, mid, hi, symbol: str = "") -> str:
    """A yearly money range for the homeowner in whole units, symbol first (``€5 to €10``),
    phrased like `plain_range`."""
    def amount(x):
        return f"{symbol}{plain_amount(round(x)) if x >= 0.5 else '0'}"

    if not is_num(mid) and not (is_num(lo) and is_num(hi)):
        return "not estimated"
    if not (is_num(lo) and is_num(hi)):
        return f"about {amount(mid)}"
    if round(hi) < 1:
        return f"less than {symbol}1"
    if amount(lo) == amount(hi):
        return f"about {amount(mid if is_num(mid) else hi)}"
    if round(lo) < 1 or lo < 0.1 * hi:
        most = f" (most likely about {amount(mid)})" if is_num(mid) and round(mid) >= 1 else ""
        return f"up to about {amount(hi)}{most}"
    return f"about {amount(lo)} to {amount(hi)}"


def money_symbol(currency) -> str:
    """Symbol for a currency code where one is common (EUR €, GBP £, USD $), else the code."""
    return {"EUR": "€", "GBP": "£", "USD": "$"}.get(str(currency or "").upper(),
                                                    str(currency or ""))


def plural(n: int, one: str, many: str | None = None) -> str:
    """``"1 problem spot"``, ``"6 problem spots"`` (no "(s)")."""
    return f"{n} {one if n == 1 else (many or one + 's')}"
