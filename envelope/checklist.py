"""What a survey still needs before `envelope assess` (edge: used by `envelope inspect`).

`survey_checklist` loads a survey the way `assess` does, but instead of stopping at the
first thing missing it goes through everything `assess` would refuse or fail on and sorts it
into three lists:

``problems``
    Wrong input that `assess` refuses or fails a view on: an unreadable pixel file, an invalid
    outline, an outline of an element the survey does not declare, a window outside its wall.
``todo``
    Input still to give: required keys missing or left as ``"fill in"``, pixel files waiting
    for a declared ``scale`` / ``unit`` / ``page``, outline files with no outline yet, views
    without a scale, elements a view should show but does not outline.
``notes``
    Computable but worth a look: elements seen in no view (left out of the heat loss),
    export settings in a file's header that differ from the survey's ``[thermograms.export]``.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from .errors import GeometryError, SurveyError
from .readers import DeclarationNeeded, check_view_readings, read_export

__all__ = ["Checklist", "survey_checklist"]


@dataclass
class Checklist:
    """The survey as loaded (``todo`` filled in), what each view holds, and the lists."""

    survey: object
    views: list = field(default_factory=list)
    problems: list = field(default_factory=list)
    todo: list = field(default_factory=list)
    notes: list = field(default_factory=list)

    @property
    def ready(self) -> bool:
        """True when `assess` would take the survey as it is."""
        return not self.problems and not self.todo


def survey_checklist(folder) -> Checklist:
    """Check a survey folder as `assess` would, listing everything instead of stopping.

    Raises
    ------
    SurveyError
        Only when survey.toml itself cannot be read (no folder, bad TOML, a wrong value).
    """
    from . import geometry
    from .loader import load

    s = load(folder, incomplete=True)
    cl = Checklist(s)
    cl.todo += [f"survey.toml: {key}: still to fill in" for key in s.todo]
    seen: set[str] = set()
    for i, t in enumerate(s.thermograms):
        view = {"id": t.id, "side": t.side, "shape_px": None, "elements": [],
                "reference_zones": [], "reading_range_c": None, "read_as": ""}
        cl.views.append(view)
        if t.file is None:
            continue
        label = str(t.file.relative_to(s.root))
        waiting = [k for k in s.todo if k.startswith(f"thermograms[{i}].export.")
                   and k.rsplit(".", 1)[1] in ("unit", "scale", "offset", "page")]
        if waiting:
            cl.todo.append(f"{label}: pixels not read until {', '.join(waiting)} "
                           f"{'is' if len(waiting) == 1 else 'are'} set")
            continue
        try:
            ex = read_export(t.file, label, t.export)
        except DeclarationNeeded as exc:
            cl.todo.append(f"{label}: {exc.detail}")
            continue
        except SurveyError as exc:
            cl.problems.append(str(exc))
            continue
        img = ex.readings_c
        view.update(shape_px=list(img.shape), read_as=ex.dialect,
                    reading_range_c=[round(float(np.nanmin(img)), 2), round(float(np.nanmax(img)), 2)])
        _header_differs(cl, t, ex, label)
        try:
            check_view_readings(img, t, s.conditions, s.camera, label)
        except SurveyError as exc:
            cl.problems.append(str(exc))
        if t.outlines is None:
            continue
        olabel = str(t.outlines.relative_to(s.root))
        try:
            outl = geometry.read_outlines(t.outlines, img.shape, tuple(s.elements))
        except GeometryError as exc:
            cl.problems.append(str(GeometryError(exc.detail, olabel, exc.field)))
            continue
        except SurveyError as exc:
            cl.problems.append(str(exc))
            continue
        view["elements"] = sorted({o.element for o in outl if o.role == "element"})
        view["reference_zones"] = sorted({o.element for o in outl if o.role == "reference"})
        seen.update(view["elements"])
        if not outl:
            cl.todo.append(f"{olabel}: no outline yet: draw them with `envelope outline "
                           f"{folder} {t.id}`")
            continue
        for name in t.elements:
            if name not in view["elements"]:
                cl.todo.append(f"{olabel}: element '{name}' is listed for this view but has no "
                               "outline")
        scaled = t.reference_points is not None or t.known_length is not None
        if not scaled:
            cl.todo.append(f"survey.toml: thermograms[{t.id}]: no scale: pick it in `envelope "
                           "outline` or add [thermograms.known_length] / reference_points")
        try:
            h = (_scale(t, img.shape) if scaled else
                 geometry.scale_homography((0.0, 0.0), (1.0, 0.0), 1.0, img.shape))
            geometry.element_regions(outl, {n: (e.kind, e.host) for n, e in s.elements.items()},
                                     img.shape, h, source=olabel)
        except SurveyError as exc:
            cl.problems.append(str(exc))
    missing = [n for n in s.elements if n not in seen]
    if missing and s.thermograms:
        cl.notes.append("elements in no view yet (no outline; left out of the heat loss): "
                        + ", ".join(missing))
    return cl


def _scale(t, shape):
    from . import geometry

    if t.reference_points is not None:
        try:
            return geometry.fit_homography(t.reference_points.pixel_xy, t.reference_points.metre_xy)
        except SurveyError as exc:
            raise SurveyError(exc.detail, "survey.toml", f"thermograms[{t.id}].reference_points") from None
    k = t.known_length
    return geometry.scale_homography(k.pixel_a, k.pixel_b, k.length_m, shape)


def _header_differs(cl: Checklist, t, ex, label: str) -> None:
    """Note export settings in the file's header that the survey contradicts."""
    survey_side = {"emissivity": t.export.emissivity, "reflected_c": t.export.reflected_c,
                   "transmittance": t.export.transmittance, "atmosphere_c": t.export.atmosphere_c}
    for key, tol in (("emissivity", 0.005), ("reflected_c", 0.05), ("transmittance", 0.005),
                     ("atmosphere_c", 0.05)):
        hv, sv = ex.settings.get(key), survey_side[key]
        if hv is None or sv is None or (isinstance(sv, float) and math.isnan(sv)):
            continue
        if abs(hv - sv) > tol:
            cl.notes.append(f"{label}: the file's header says {key} {hv:g}, the survey's "
                            f"[thermograms.export] says {sv:g} (thermogram {t.id}); the export "
                            "settings are the ones the camera used")
