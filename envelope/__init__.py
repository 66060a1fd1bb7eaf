"""envelope: from a thermal-camera survey of a house to numbers that hold up.

The public API (see ``docs/api.md``)::

    import envelope
    survey = envelope.load_survey("example_house")
    assessment = envelope.assess_survey(survey)
    results = envelope.write_outputs(assessment, "out/example_house")   # or to_results()

The physics modules are namespaces of pure functions named by what they hold:
``envelope.radiometry``, ``geometry``, ``films``, ``transmittance``, ``uncertainty``,
``condensation``, ``defects``, ``energy``, ``retrofit``, ``verdicts``, ``calibration``,
``zones``, ``validity``. Attributes are imported on first use, so ``import envelope`` is
cheap and never touches matplotlib's backend.
"""

from __future__ import annotations

import importlib

__version__ = "0.2.0"

_FUNCTIONS = {
    "load_survey": "envelope.survey",
    "Survey": "envelope.survey",
    "SurveyError": "envelope.errors",
    "EnvelopeWarning": "envelope.errors",
    "assess_survey": "envelope.assess",
    "Assessment": "envelope.stages.data",
    "SurveyFolder": "envelope.views",
    "InMemory": "envelope.views",
    "ViewData": "envelope.views",
    "SeriesData": "envelope.views",
    "to_results": "envelope.results",
    "write_outputs": "envelope.outputs",
}
_MODULES = ("radiometry", "geometry", "outlines", "films", "transmittance", "uncertainty",
            "condensation", "anomalies", "defects", "energy", "retrofit", "verdicts",
            "calibration", "zones", "validity", "synth", "results", "stages")

__all__ = ["__version__", *_FUNCTIONS, *_MODULES]


def __getattr__(name: str):
    if name in _FUNCTIONS:
        value = getattr(importlib.import_module(_FUNCTIONS[name]), name)
    elif name in _MODULES:
        value = importlib.import_module(f"envelope.{name}")
    else:
        raise AttributeError(f"module 'envelope' has no attribute {name!r}")
    globals()[name] = value
    return value


def __dir__():
    return sorted(__all__)
