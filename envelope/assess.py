"""The pipeline: a loaded survey → an `Assessment`, calling the stages in order (SPEC §2).

```
views (edge) ─► correct ─► surface flux ─► fRsi ─► defects ─► undisturbed areas ─► U, risk
      ─► rank defects ─► series ─► builder verdicts ─► heat balance ─► retrofit case
```
Nothing here reads or writes a file: views and series frames come from a `ViewSource`
(`views.SurveyFolder` by default). A view or series that fails with a user error
(`SurveyError`) is listed in ``failures`` and the others go on; any other exception is a
bug and propagates.
"""

from __future__ import annotations

import contextlib
import dataclasses
import math
import time
from collections.abc import Callable

from envelope import validity
from envelope.defects import rank_defects
from envelope.errors import SurveyError
from envelope.junctions import junction_type_from_slug
from envelope.stages.correct import correct_view
from envelope.stages.data import Assessment, Failure, ViewResult
from envelope.stages.elements import design_conditions
from envelope.stages.heat import energy_case, with_verdicts
from envelope.stages.risk import frsi_limits
from envelope.stages.series import assess_series
from envelope.stages.view import assess_view, leak_airtightness
from envelope.survey import Conditions, Survey
from envelope.views import SurveyFolder, ViewSource

__all__ = ["Progress", "StageClock", "survey_checks", "assess_survey"]

Progress = Callable[[str], None]


class StageClock:
    """Wall time per pipeline stage [s] (for the benchmarks; costs nothing when unused)."""

    def __init__(self):
        self.seconds: dict[str, float] = {}

    @contextlib.contextmanager
    def stage(self, name: str):
        t0 = time.perf_counter()
        try:
            yield
        finally:
            self.seconds[name] = self.seconds.get(name, 0.0) + time.perf_counter() - t0


_NO_CLOCK = StageClock()


def survey_checks(conditions: Conditions) -> tuple:
    """Validity checks of the night: temperature difference, wind, rain, drift."""
    c = conditions
    checks = [validity.check_delta_t(c.indoor_air_c, c.outdoor_air_c),
              validity.check_wind(c.wind_m_s), validity.check_rain(c.rain, c.hours_since_rain)]
    if c.outdoor_history_c:
        checks.append(validity.check_drift(c.outdoor_history_c, c.history_interval_h,
                                           name="outdoor drift"))
    if c.indoor_history_c:
        checks.append(validity.check_drift(c.indoor_history_c, c.history_interval_h,
                                           name="indoor drift"))
    return tuple(checks)


def _file_of(survey: Survey, path) -> str:
    try:
        return path.resolve().relative_to(survey.root.resolve()).as_posix()
    except (ValueError, OSError, AttributeError):
        return str(path)


def assess_survey(survey: Survey, *, source: ViewSource | None = None,
                  progress: Progress | None = None, clock: StageClock = _NO_CLOCK) -> Assessment:
    """Assess every view, series and the energy case of a loaded survey.

    Parameters
    ----------
    survey : Survey
        A loaded survey (`envelope.load_survey`) or one built in memory.
    source : ViewSource, optional
        Where pixels, outlines and series frames come from; default `SurveyFolder(survey)`.
    progress : callable, optional
        Called with a stage name after each view, series frame and series.
    clock : StageClock, optional
        Collects the time spent per stage (benchmarks).

    Returns
    -------
    Assessment
    """
    source = source or SurveyFolder(survey)
    tick = progress or (lambda stage: None)
    sfile = survey.file.name
    c = survey.conditions
    if not c.indoor_air_c - c.outdoor_air_c > 0:
        raise SurveyError("indoor air is not warmer than outdoor air; no heat flows outwards",
                          sfile, "conditions.indoor_air_c")
    notes: list[str] = []
    checks = survey_checks(c)
    mould, cond, note = frsi_limits(survey.climate, c, sfile)
    if note:
        notes.append(note)
    limits = (mould, cond)
    design = design_conditions(survey.climate, c, mould)
    hdd = survey.climate.heating_degree_days_kd
    hdd = math.nan if hdd is None else hdd
    junction_psi = {junction_type_from_slug(j.junction_type): j.psi_specified_w_mk
                    for j in survey.junctions if j.psi_specified_w_mk is not None} or None
    airtightness = leak_airtightness(survey.airtightness)
    if airtightness is None:
        notes.append("no blower-door result ([airtightness]): a leak's energy is only the "
                     "conductive surface excess, a lower bound")
    pairs_by_dep = {p.depressurised: p for p in survey.pressure_pairs}
    pairs_by_base = {p.baseline: p for p in survey.pressure_pairs}
    views: dict[str, ViewResult] = {}
    failures: list[Failure] = []
    # depressurised images first: their baselines use them
    for tg in sorted(survey.thermograms, key=lambda t: t.id not in pairs_by_dep):
        try:
            with clock.stage("load"):
                data = source.open_view(tg)
            with clock.stage("correct"):
                cv = correct_view(data, survey.elements, survey.camera, c, sfile)
            if tg.id in pairs_by_dep:
                views[tg.id] = ViewResult(tg, "paired", corrected=cv,
                                          paired_with=pairs_by_dep[tg.id].baseline)
            else:
                pair = None
                p = pairs_by_base.get(tg.id)
                if p is not None:
                    dep = views.get(p.depressurised)
                    if dep is not None and dep.status == "paired":
                        pair = (dep.corrected.object_c, p.pressure_difference_pa)
                    else:
                        notes.append(f"pressure pair {tg.id} / {p.depressurised}: the "
                                     "depressurised view failed; air leakage not assessed there")
                with clock.stage("view"):
                    vr = assess_view(cv, survey.elements, c, survey.camera, survey.analysis,
                                     limits, design, hdd, checks, pair, sfile, junction_psi,
                                     airtightness)
                views[tg.id] = dataclasses.replace(vr, paired_with=p.depressurised if p else None)
        except SurveyError as exc:
            failures.append(Failure(tg.id, _file_of(survey, tg.file), str(exc)))
            views[tg.id] = ViewResult(tg, "failed", error=str(exc))
        tick("thermograms")
    ordered = tuple(views[t.id] for t in survey.thermograms)
    ranked = tuple(rank_defects([dataclasses.replace(d) for v in ordered for d in v.defects]))
    elements = [e for v in ordered for e in v.elements]

    series = []
    for sr in survey.series:
        try:
            view = views.get(sr.thermogram)
            if view is None or view.status != "assessed":
                raise SurveyError(f"its thermogram '{sr.thermogram}' was not assessed",
                                  sfile, f"series[{sr.id}].thermogram")
            with clock.stage("series"):
                data = source.open_series(sr)
                series.append(assess_series(data, view, survey.elements[sr.element], c,
                                            survey.camera, survey.analysis, tick, sfile))
        except SurveyError as exc:
            failures.append(Failure(f"series {sr.id}", _file_of(survey, sr.air_log), str(exc)))
        tick("series")

    with clock.stage("energy"):
        elements = with_verdicts(elements, checks, survey.analysis)
        missing = sorted(set(survey.elements) - {e.name for e in elements})
        if missing:
            notes.append("elements not seen in any assessed thermogram (left out of the heat "
                         "loss): " + ", ".join(missing))
        draws = {(v.thermogram.id, name): d for v in ordered for name, d in v.u_draws.items()}
        energy = energy_case(elements, ranked, survey.measures, c, survey.climate,
                             survey.prices, notes, sfile, draws, survey.analysis.seed)
    return Assessment(survey, checks, mould, cond, ordered, elements, ranked, tuple(series),
                      energy, tuple(failures), tuple(notes))
