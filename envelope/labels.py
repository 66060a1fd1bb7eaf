"""Human names for what the results call by code: elements, defect classes, inputs.

Shared by the figures (`envelope.plots`), the reports (`envelope.report`) and the terminal
summary (`envelope.terminal`), so one element reads the same everywhere. No imports from
the rest of the package: any module may use it without an import cycle.
"""

from __future__ import annotations

import re
import unicodedata

__all__ = ["readable", "element_label", "class_words", "INPUT_WORDS", "INPUT_SHORT",
           "strip_control", "safe_slug"]

_SEPARATORS = re.compile(r"[-_]+")
_CONTROL = re.compile(r"[\x00-\x1f\x7f-\x9f]")
_UNSAFE = re.compile(r"[^A-Za-z0-9_.-]+")

CLASS_WORDS = {
    "missing insulation": "patch of missing or slipped insulation",
    "linear thermal bridge": "cold line along a junction",
    "repeating thermal bridge": "framing showing through as cold lines",
    "air leakage": "draught",
    "unexplained": "spot that needs a closer look",
}
"""Plain words for each defect class (homeowner)."""

INPUT_WORDS = {
    "emissivity": "emissivity",
    "emissivity (tape)": "emissivity from the reference tape",
    "reflected": "reflected apparent temperature",
    "mrt": "mean radiant temperature",
    "t_ai": "indoor air temperature",
    "t_ae": "outdoor air temperature",
    "air_noise": "air-temperature fluctuation",
    "camera_relative": "camera relative accuracy",
    "camera_absolute": "camera absolute accuracy",
    "camera_offset": "camera offset (absolute accuracy)",
    "camera_noise": "camera noise",
    "probe": "contact-probe reading",
    "tape": "emissivity tape reading",
    "flux": "heat-flux meter reading",
    "transmittance": "atmospheric transmittance",
    "h_c": "convective film coefficient",
    "h_c_model": "choice of convection model",
    "wind": "wind speed",
    "sky": "sky temperature",
    "t_sky": "sky temperature",
    "noise": "camera noise",
}
"""Readable names of the Monte Carlo inputs of the uncertainty budget."""


INPUT_SHORT = {
    "emissivity": "emissivity", "emissivity (tape)": "tape emissivity",
    "reflected": "reflected temp.", "mrt": "mean radiant", "t_ai": "indoor air",
    "t_ae": "outdoor air", "air_noise": "air noise", "camera_relative": "camera rel.",
    "camera_absolute": "camera abs.", "camera_offset": "camera offset",
    "camera_noise": "camera noise", "probe": "probe", "tape": "tape", "flux": "flux meter",
    "transmittance": "transm.", "h_c": "h_c", "h_c_model": "h_c model", "wind": "wind",
    "sky": "sky", "t_sky": "sky", "noise": "noise",
}
"""Column headings of the uncertainty budget (the full names in `INPUT_WORDS`)."""


def strip_control(text) -> str:
    """`text` as a string without control characters (safe for a terminal or a PDF)."""
    return _CONTROL.sub("", "" if text is None else str(text))


def readable(name) -> str:
    """A readable form of a code name: ``"landing-ceiling"`` → ``"Landing ceiling"``.

    Hyphens and underscores become spaces and the first letter is capitalised; the rest is
    kept as written (``"WC-wall"`` → ``"WC wall"``).
    """
    text = _SEPARATORS.sub(" ", strip_control(name)).strip()
    text = " ".join(text.split())
    return text[:1].upper() + text[1:] if text else ""


def element_label(element, lower: bool = False) -> str:
    """The human label of an element: its ``label`` key, else a readable form of ``name``.

    Parameters
    ----------
    element : mapping or str
        An element of the results (``label``, ``name``) or a bare name.
    lower : bool
        For use inside a sentence: a label made from the name starts in lower case
        ("the landing ceiling"); a label the surveyor wrote is kept as written.
    """
    if isinstance(element, str):
        label, name = None, element
    else:
        label, name = element.get("label"), element.get("name")
    if label:
        return strip_control(label).strip()
    text = readable(name)
    if lower and text and not (len(text) > 1 and text[1].isupper()):
        text = text[:1].lower() + text[1:]
    return text


def class_words(defect_class) -> str:
    """Plain words for a defect class (falls back to the class itself)."""
    return CLASS_WORDS.get(str(defect_class), str(defect_class or "problem spot"))


def safe_slug(name, limit: int = 60) -> str:
    """A file-name piece from any text: ASCII letters, digits, ``-``, ``_``, ``.`` only."""
    text = unicodedata.normalize("NFKD", str(name)).encode("ascii", "ignore").decode()
    text = _UNSAFE.sub("_", text).strip("._") or "x"
    return text[:limit]
