"""The pipeline as a library: a survey built in memory, one undisturbed area per element.

Scenes come from the project's forward model (`envelope.synth`) with the same film
coefficients as the method: these tests check the bookkeeping of the pipeline (what is
counted once, what is read from where), not the physics, which has outside checks in
the module tests.
"""

from __future__ import annotations

import builtins
import dataclasses
import io
from pathlib import Path

import numpy as np
import pytest
from conftest import SHAPE, U_WALL, outlines_geojson, readings

import envelope
from envelope import survey as sv
from envelope import synth
from envelope.views import InMemory


def memory_survey(elements, thermograms, draws=2000, measures=()) -> sv.Survey:
    """A survey built from dataclasses: nothing on disk (paths are only labels)."""
    return sv.Survey(
        root=Path("<memory>"), file=Path("<memory>/survey.toml"),
        site=sv.Site("Memory Lodge", town="Nowhere Parva"), date="2026-01-10",
        surveyor="T. Tester", client="",
        conditions=sv.Conditions(indoor_air_c=21.0, outdoor_air_c=1.0, indoor_rh=0.5,
                                 outdoor_rh=0.85, wind_m_s=1.0),
        camera=sv.Camera(accuracy_k=1.0, relative_accuracy_k=0.1, noise_k=0.05),
        climate=sv.Climate(heating_degree_days_kd=2200.0, design_indoor_c=21.0,
                           design_outdoor_c=-3.0),
        prices=sv.Prices(),
        # the scenes' forward model uses ISO 6946's h_ci 2.5: the method is told the same
        analysis=sv.Analysis(monte_carlo_draws=draws, interior_convection="iso6946"),
        elements={e.name: e for e in elements}, thermograms=tuple(thermograms),
        measures=tuple(measures))


def view_entry(tid: str, width_px: int) -> sv.Thermogram:
    return sv.Thermogram(
        id=tid, file=Path(f"<memory>/{tid}.npy"), outlines=Path(f"<memory>/{tid}.geojson"),
        side="interior", reflected_c=20.0, transmittance=1.0,
        export=sv.ExportSettings(emissivity=0.95, reflected_c=20.0),
        known_length=sv.KnownLength((0.0, 119.5), (float(width_px), 119.5), width_px / 40.0))


def refuse_files(monkeypatch):
    """From now on, any attempt to open a file fails the test."""
    def refuse(*args, **kwargs):
        raise AssertionError(f"a file was opened: {args[:1]}")
    monkeypatch.setattr(builtins, "open", refuse)
    monkeypatch.setattr(io, "open", refuse)
    monkeypatch.setattr(sv, "load_pixels", refuse)


def test_assess_survey_in_memory_never_touches_the_disk(monkeypatch):
    els = [sv.Element("test-wall", "wall", u_specified_w_m2k=0.6, emissivity=0.93),
           sv.Element("test-window", "window", host="test-wall", emissivity=0.84)]
    s = memory_survey(els, [view_entry("room-north", SHAPE[1])])
    source = InMemory({"room-north": (readings(), outlines_geojson())},
                      element_names=[e.name for e in els])
    envelope.assess_survey(s, source=source)  # a first run loads the modules it needs
    refuse_files(monkeypatch)
    a = envelope.assess_survey(s, source=source)
    assert not a.failures
    wall = next(e for e in a.elements if e.name == "test-wall")
    # the conftest scene: U 0.5 everywhere on the wall (forward model)
    assert wall.u_low95_w_m2k <= U_WALL <= wall.u_high95_w_m2k
    assert wall.undisturbed_zone == "reference zone"
    monkeypatch.undo()  # files may be opened again (the schema ships as a file)
    r = envelope.to_results(a)
    assert envelope.results.validate(r) == []


def _missing_batt_scene(u_clear=0.35, u_patch=1.5, patch=(40, 64, 60, 92)):
    """A 4 m × 3 m wall (160 × 120 px) with a patch of missing insulation, no window."""
    u = np.full(SHAPE, u_clear)
    r0, r1, c0, c1 = patch
    u[r0:r1, c0:c1] = u_patch
    t_s = synth.surface_temperature_for_u(u, 21.0, 1.0, 20.0, 0.93, 2.5)
    app = synth.render_apparent(t_s, 0.93, 20.0, noise_k=0.05, offset_k=0.0,
                                rng=np.random.default_rng(7))
    area_patch_m2 = (r1 - r0) * (c1 - c0) / 40.0**2
    h_true = u_clear * (12.0 - area_patch_m2) + u_patch * area_patch_m2
    return np.asarray(envelope.radiometry.export_reading(app, 0.95, 20.0, 1.0, None),
                      np.float32), h_true


def test_defect_without_reference_zone_is_counted_once_in_h():
    readings_c, h_true = _missing_batt_scene()
    els = [sv.Element("wall", "wall", emissivity=0.93)]
    s = memory_survey(els, [view_entry("bare", SHAPE[1])])
    outline = {"type": "FeatureCollection", "features": [
        {"type": "Feature", "properties": {"element": "wall"},
         "geometry": {"type": "Polygon", "coordinates": [[[0, 0], [160, 0], [160, 120],
                                                          [0, 120], [0, 0]]]}}]}
    a = envelope.assess_survey(s, source=InMemory({"bare": (readings_c, outline)}, None, ["wall"]))
    (d,) = [d for d in a.defects if d.defect_class != "unexplained"]
    assert d.defect_class == "missing insulation"
    wall = a.elements[0]
    assert wall.undisturbed_zone.startswith("element without")
    assert wall.u_w_m2k == pytest.approx(0.35, rel=0.03)
    # H = U_clear (A - A_patch) + U_patch A_patch = 0.35 × 11.52 + 1.5 × 0.48 = 4.752 W/K;
    # counting the patch in the wall's U and again as extra heat gave +12 %
    assert h_true == pytest.approx(4.752)
    assert a.energy.balance.heat_loss.h_w_k == pytest.approx(h_true, rel=0.02)
    # the whole-area U is the same heat by another route
    assert wall.u_whole_w_m2k * 12.0 == pytest.approx(h_true, rel=0.02)


def _two_view_survey(measures=()):
    els = [sv.Element("test-wall", "wall", emissivity=0.93),
           sv.Element("test-window", "window", host="test-wall", emissivity=0.84),
           sv.Element("other-wall", "wall", emissivity=0.93)]
    s = memory_survey(els, [view_entry("room-north", SHAPE[1]), view_entry("room-east", SHAPE[1])],
                      measures=measures)
    return dataclasses.replace(s, prices=sv.Prices(energy_price_per_kwh=0.1))


def test_measure_on_a_failed_view_is_left_out_with_its_real_index():
    from envelope.retrofit import Measure

    ms = (Measure("line the north wall", "add_layer", elements=("test-wall",), thickness_m=0.05,
                  conductivity_w_mk=0.03, cost=900.0),
          Measure("line the east wall", "add_layer", elements=("other-wall",), thickness_m=0.05,
                  conductivity_w_mk=0.03, cost=700.0))
    s = _two_view_survey(ms)
    # room-east has no pixel data: that view fails with a user error, the run goes on
    source = InMemory({"room-north": (readings(), outlines_geojson())},
                      element_names=list(s.elements))
    a = envelope.assess_survey(s, source=source)
    assert [f.what for f in a.failures] == ["room-east"]
    assert [m.name for m in a.energy.measures] == ["line the north wall"]
    assert any("measures[1]" in n and "other-wall" in n for n in a.notes)


def test_view_whose_outlines_file_has_no_features_fails_alone():
    s = _two_view_survey()
    empty = {"type": "FeatureCollection", "features": []}
    source = InMemory({"room-north": (readings(), outlines_geojson()),
                       "room-east": (readings(), empty)}, element_names=list(s.elements))
    a = envelope.assess_survey(s, source=source)
    (f,) = a.failures
    assert f.what == "room-east" and "no element outline" in f.error
    assert {v.status for v in a.views} == {"assessed", "failed"}


def test_a_bug_in_a_stage_is_not_reported_as_a_failed_view(monkeypatch):
    # per-view isolation catches user errors only; a programming error must surface
    from envelope import assess

    def broken(*args, **kwargs):
        raise ZeroDivisionError("a bug")

    monkeypatch.setattr(assess, "assess_view", broken)
    s = _two_view_survey()
    source = InMemory({"room-north": (readings(), outlines_geojson()),
                       "room-east": (readings(), outlines_geojson())},
                      element_names=list(s.elements))
    with pytest.raises(ZeroDivisionError):
        envelope.assess_survey(s, source=source)
