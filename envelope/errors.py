"""Project error and warning classes.

`SurveyError` is a user error: bad input that the user can fix. The CLI turns it into a
one-line message and exit code 2. Everything else that escapes is a bug.
"""

from __future__ import annotations

from pathlib import Path


class EnvelopeWarning(UserWarning):
    """Suspicious but computable input (oblique view, small temperature difference...)."""


class SurveyError(ValueError):
    """A user error in the survey, naming the file, the field and what was expected.

    Parameters
    ----------
    message : str
        What is wrong and what was expected.
    file : str, optional
        The file (path relative to the survey folder where possible).
    field : str, optional
        The key, feature or column concerned, e.g. ``thermograms[2].emissivity``.
    """

    def __init__(self, message: str, file: str | None = None, field: str | None = None):
        self.file = file
        self.field = field
        self.detail = message
        where = ": ".join(p for p in (file, field) if p)
        super().__init__(f"{where}: {message}" if where else message)


class GeometryError(SurveyError):
    """A user error in outlines or reference points."""


def raised_at(exc: BaseException) -> str:
    """``module.py:line`` of the innermost frame of `exc`, for a one-line bug message.

    Only the file name and line: the exception's own text may hold input bytes.
    """
    tb = exc.__traceback__
    while tb is not None and tb.tb_next is not None:
        tb = tb.tb_next
    if tb is None:
        return "an unknown place"
    return f"{Path(tb.tb_frame.f_code.co_filename).name}:{tb.tb_lineno}"


def celsius_slip(v: float, lo: float, hi: float) -> tuple[str, float] | None:
    """A °C value above its range ``[lo, hi]`` that fits it once read as kelvin or °F:
    ``("K", °C)`` or ``("°F", °C)``, else None. For messages that name the likely slip.

    >>> celsius_slip(293.15, -30.0, 40.0)
    ('K', 20.0)
    >>> celsius_slip(70.0, 10.0, 35.0)[0]
    '°F'
    """
    if v <= hi:
        return None
    if 200.0 <= v <= 400.0 and lo <= v - 273.15 <= hi:
        return "K", round(v - 273.15, 10)
    c = (v - 32.0) * 5.0 / 9.0
    return ("°F", c) if lo <= c <= hi else None
