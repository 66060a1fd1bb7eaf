"""Project error and warning classes.

`SurveyError` is a user error: bad input that the user can fix. The CLI turns it into a
one-line message and exit code 2. Everything else that escapes is a bug.
"""

from __future__ import annotations


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
