"""Tests of the defects engine (`envelope.defects`, `envelope.anomalies`).

Synthetic scenes come from the project's forward model (`envelope.synth`): per-pixel U →
interior surface temperature → apparent temperature with camera noise → corrected object
temperature → fRsi and heat flux. They check consistency of the chain; the outside
references are named beside each value (ISO 10211 definition of psi, ISO 6946 surface
coefficients, scipy's spline shift as the known displacement).
"""

from __future__ import annotations

import json
import math

import numpy as np
import pytest
import shapely
from scipy import ndimage

from envelope import geometry
from envelope.anomalies import (
    describe_region,
    find_repetition,
    pixel_polygon,
    reference_level,
)
from envelope.condensation import temperature_factor
from envelope.defects import (
    Defect,
    DefectSettings,
    DepressurisedPair,
    defect_to_dict,
    find_defects,
    rank_defects,
)
from envelope.radiometry import object_temperature
from envelope.registration import register_translation
from envelope.synth import render_apparent, surface_temperature_for_u
from envelope.transmittance import heat_flux_interior

T_AI, T_AE, T_R = 20.0, 0.0, 20.0  # survey night [°C]; ΔT = 20 K (≥ 10 K, common practice)
EPS = 0.9  # painted plaster, handbook value (from memory)
H_C = 2.5  # ISO 6946:2017 Table 7 conventional h_ci for horizontal heat flow [W/m2K]
PX_M = 0.01  # 1 cm per pixel, fronto-parallel
NOISE_K = 0.05  # NETD-like camera noise [K] (typical uncooled microbolometer; from memory)
HDD = 2500.0  # heating degree-days [K day] (invented site)


def element(name, kind, poly, shape, reference=None):
    mask = geometry.rasterise(poly, shape)
    return geometry.ElementRegion(
        name=name, kind=kind, polygon_net=poly, mask=mask,
        reference_mask=None if reference is None else geometry.rasterise(reference, shape),
        area_m2=poly.area * PX_M**2, area_gross_m2=poly.area * PX_M**2,
        pixel_area_m2=mask.sum() * PX_M**2, perimeter_m=poly.length * PX_M, openings=())


def chain(object_c, eps_map, refl_map, seed, shift=None):
    """Render, move the camera by `shift` px, add noise, then correct with the surveyor's
    values (emissivity 0.9, reflected temperature 20 °C)."""
    app = np.asarray(render_apparent(object_c, eps_map, refl_map), dtype=float)
    if shift is not None:
        app = ndimage.shift(app, shift, order=3, mode="nearest")
    if seed is not None:
        app = app + np.random.default_rng(seed).normal(0.0, NOISE_K, app.shape)
    t_s = np.asarray(object_temperature(app, EPS, T_R), dtype=float)
    frsi = np.asarray(temperature_factor(t_s, T_AI, T_AE), dtype=float)
    q = np.asarray(heat_flux_interior(t_s, T_AI, T_R, EPS, H_C), dtype=float)
    return t_s, frsi, q


# --- the survey scene -------------------------------------------------------------------
H, W = 260, 400
WINDOW = shapely.box(30, 50, 90, 160)
BATT = (slice(40, 100), slice(140, 200))  # missing batt, 0.6 m x 0.6 m
STUD_COLS = (230, 290, 350)  # studs at 600 mm centres (common practice), 40 mm wide
STRIP_ROWS = slice(226, 240)  # wall–floor junction, 140 mm band above the floor
GLOSS = (slice(150, 190), slice(150, 190))  # glossy patch reflecting a radiator
LEAK_CENTRE = (120.0, 100.0)  # (row, col), beside the window's right jamb


def leak_drop():
    """Irregular plume of cold air: three lobes drifting down from the window jamb [K]."""
    yy, xx = np.mgrid[0:H, 0:W] + 0.5
    drop = np.zeros((H, W))
    for (r, c, s, a) in ((-15, -5, 7, 3.0), (2, 4, 9, 2.6), (18, 12, 6, 2.2), (8, -2, 5, 2.0)):
        drop += a * np.exp(-(((yy - LEAK_CENTRE[0] - r) / (1.6 * s)) ** 2
                             + ((xx - LEAK_CENTRE[1] - c) / s) ** 2))
    drop[WINDOW_MASK] = 0.0
    return drop


WINDOW_MASK = geometry.rasterise(WINDOW, (H, W))


def scene(seed=1, shift=(0.6, -0.8)):
    u = np.full((H, W), 0.30)  # insulated timber-frame wall [W/m2K]
    u[STRIP_ROWS, :] = 1.2
    u[BATT] = 2.0  # no batt between the studs: about an uninsulated wall (common practice)
    for c in STUD_COLS:
        u[20:200, c - 2:c + 2] = 0.8
    u[WINDOW_MASK] = 1.4
    u[240:, :] = 0.25  # floor
    t_obj = surface_temperature_for_u(u, T_AI, T_AE, T_R, EPS, H_C)
    eps = np.full((H, W), EPS)
    refl = np.full((H, W), T_R)
    eps[GLOSS] = 0.3  # glossy tile, low emissivity
    refl[GLOSS] = 45.0  # radiator reflected in it
    base = chain(t_obj, eps, refl, seed)
    dep = chain(t_obj - leak_drop(), eps, refl, seed + 100, shift=shift)
    wall = shapely.box(0, 0, W, 240).difference(WINDOW)
    regions = {
        "North wall": element("North wall", "wall", wall, (H, W)),
        "Window W1": element("Window W1", "window", WINDOW, (H, W)),
        "Ground floor": element("Ground floor", "floor", shapely.box(0, 240, W, H), (H, W)),
    }
    return base, dep, regions


@pytest.fixture(scope="module")
def survey_defects():
    (t, f, q), (t_dep, _, _), regions = scene()
    area = np.full((H, W), PX_M**2)
    found = find_defects(t, f, q, area, regions, "interior", T_AI - T_AE, HDD,
                         limits=(0.75, 0.60), pair=DepressurisedPair(t_dep, 50.0),
                         u_rel_std=0.1, thermogram_id="IR-01")
    return found


def _hit(defects, rows, cols):
    """Defects whose centroid lies inside the planted rectangle."""
    return [d for d in defects if rows.start <= d.centroid_px[1] < rows.stop
            and cols.start <= d.centroid_px[0] < cols.stop]


def test_every_planted_defect_found_and_classed(survey_defects):
    d = survey_defects
    strip = _hit(d, slice(220, 240), slice(0, W))
    batt = _hit(d, BATT[0], BATT[1])
    # the three studs are one defect (a repetition group), spanning every stud column
    studs = [x for x in d if x.defect_class == "repeating thermal bridge"]
    leak = _hit(d, slice(90, 150), slice(90, 125))
    gloss = _hit(d, GLOSS[0], GLOSS[1])
    assert len(strip) == 1 and len(batt) == 1 and len(studs) == 1 and len(leak) == 1
    assert studs[0].count == 3
    assert all(studs[0].bbox_px[0] <= c <= studs[0].bbox_px[2] for c in STUD_COLS)
    classes = {
        "strip": strip[0].defect_class == "linear thermal bridge",
        "studs": all(s.defect_class == "repeating thermal bridge" for s in studs),
        "batt": batt[0].defect_class == "missing insulation",
        "leak": leak[0].defect_class == "air leakage",
    }
    assert sum(classes.values()) >= 3, classes  # with the reflection below: ≥ 4 of 5
    assert strip[0].junction == "wall–floor"
    assert studs[0].spacing_m == pytest.approx(0.6, abs=0.02)  # planted 600 mm centres
    # the reflection is either absent or "unexplained" with the warm note
    for g in gloss:
        assert g.defect_class == "unexplained" and any("warmer" in n for n in g.notes)
    planted = {id(x) for x in strip + batt + studs + leak + gloss}
    false = [x for x in d if id(x) not in planted]
    assert len(false) <= 1, [(x.defect_class, x.centroid_px) for x in false]


def test_reasons_confidence_and_serialisation(survey_defects):
    for d in survey_defects:
        assert sum(d.confidence.values()) == pytest.approx(1.0)
        assert d.reasons
    strip = _hit(survey_defects, slice(220, 240), slice(0, W))[0]
    assert any("wall–floor" in r for r in strip.reasons)
    assert strip.psi_w_mk is not None and strip.chi_w_k is None
    out = json.loads(json.dumps([defect_to_dict(x) for x in survey_defects]))
    assert out[0]["rank"] == 1 and out[0]["outline_px"]
    assert [x["id"] for x in out] == [f"D{i}" for i in range(1, len(out) + 1)]


def test_risk_against_limits(survey_defects):
    # batt: U 2.0 → fRsi ≈ 1 - U R_si = 1 - 2.0 * 0.13 = 0.74 (R_si of ISO 6946:2017 Table 7),
    # under the 0.75 mould limit of BRE IP 1/06 for dwellings (from memory), above 0.60
    batt = _hit(survey_defects, BATT[0], BATT[1])[0]
    assert batt.risk in ("mould", "condensation")
    assert batt.rank < max(d.rank for d in survey_defects)
    assert batt.frsi_min <= batt.frsi_p05


# --- analytic psi ----------------------------------------------------------------------
@pytest.mark.parametrize("seed", [None, 7])
def test_psi_of_strip_matches_one_dimensional_value(seed):
    # ISO 10211:2017, definition of the linear thermal transmittance: psi = L2D - Σ U_j l_j.
    # With no lateral conduction (per-pixel 1-D model) a strip of width w and U_s in a
    # wall of U_w gives exactly psi = (U_s - U_w) w.
    h, w = 120, 300
    u_wall, u_strip, width_px = 0.35, 1.25, 12
    u = np.full((h, w), u_wall)
    u[50:50 + width_px, :] = u_strip
    t_obj = surface_temperature_for_u(u, T_AI, T_AE, T_R, EPS, H_C)
    t, f, q = chain(t_obj, EPS, T_R, seed)
    regions = {"Wall": element("Wall", "wall", shapely.box(0, 0, w, h), (h, w))}
    found = find_defects(t, f, q, np.full((h, w), PX_M**2), regions, "interior",
                         T_AI - T_AE, HDD)
    assert len(found) == 1
    d = found[0]
    assert d.defect_class == "linear thermal bridge"
    expected = (u_strip - u_wall) * width_px * PX_M  # 0.108 W/(m K)
    assert d.psi_w_mk == pytest.approx(expected, rel=0.05)
    # kWh/yr = psi L HDD 24/1000 for the same band (definition of degree-days)
    assert d.annual_kwh == pytest.approx(d.psi_w_mk * w * PX_M * HDD * 24 / 1000, rel=1e-9)


# --- registration ----------------------------------------------------------------------
@pytest.mark.parametrize("shift", [(0.6, -0.8), (-2.3, 1.45), (0.15, 3.7)])
def test_register_translation_recovers_subpixel_shift(shift):
    # scipy.ndimage.shift (cubic spline) applies the known displacement; 0.1 px tolerance
    # from the task (Guizar-Sicairos et al. 2008 report ~0.01-0.05 px at moderate noise).
    (t, _, _), _, _ = scene(seed=3, shift=(0.0, 0.0))
    rng = np.random.default_rng(11)
    moved = ndimage.shift(t, shift, order=3, mode="nearest") + rng.normal(0, NOISE_K, t.shape)
    dy, dx = register_translation(t, moved)
    assert dy == pytest.approx(-shift[0], abs=0.1)
    assert dx == pytest.approx(-shift[1], abs=0.1)


# --- ranking ---------------------------------------------------------------------------
def _defect(risk, kwh, x=0.0):
    return Defect(id="", thermogram="T", element="E", defect_class="unexplained",
                  confidence={"unexplained": 1.0}, reasons=["r"], area_m2=0.1, length_m=0.3,
                  width_m=0.3, orientation_deg=0.0, junction=None, extra_w=1.0,
                  extra_w_std=0.1, psi_w_mk=None, chi_w_k=0.05, incidence_factor=1.2,
                  annual_kwh=kwh, frsi_min=0.6, frsi_p05=0.62, risk=risk, score_risk=0,
                  score_annual_kwh=0.0, rank=0, centroid_px=(x, 0.0), bbox_px=(0, 0, 1, 1))


def test_ranking_risk_first_then_energy():
    items = [_defect("none", 500.0), _defect("mould", 143.2), _defect("condensation", 5.0),
             _defect("mould", 300.0), _defect("none", 20.0)]
    ranked = rank_defects(items)
    # hand-sorted: condensation(2) > mould(1) > none(0); then kWh/yr descending
    assert [(d.risk, d.annual_kwh) for d in ranked] == [
        ("condensation", 5.0), ("mould", 300.0), ("mould", 143.2), ("none", 500.0),
        ("none", 20.0)]
    assert [d.rank for d in ranked] == [1, 2, 3, 4, 5]
    assert [d.id for d in ranked] == ["D1", "D2", "D3", "D4", "D5"]
    assert ranked[2].score_text == "risk: mould (1) · energy: 143 kWh/yr"
    assert (ranked[0].score_risk, ranked[3].score_annual_kwh) == (2, 500.0)


# --- pieces ----------------------------------------------------------------------------
def test_reference_level_is_robust_to_a_large_defect():
    # median/MAD: breakdown point 50 % (Hampel 1974); 30 % of pixels anomalous here
    rng = np.random.default_rng(0)
    f = 0.95 + rng.normal(0, 0.004, (100, 100))
    f[:30] = 0.6
    level, sigma = reference_level(f, np.ones_like(f, bool))
    assert level == pytest.approx(0.95, abs=0.003)
    assert sigma < 0.02


def test_shape_of_a_known_rectangle():
    # rectangle 80 x 10 px at 1 cm/px: second-moment length/width are exact for a rectangle
    m = np.zeros((40, 120), bool)
    m[10:20, 20:100] = True
    el = element("Wall", "wall", shapely.box(0, 0, 120, 40), (40, 120))
    r = describe_region(m[10:20, 20:100], (slice(10, 20), slice(20, 100)),
                        np.full(m.shape, 0.8), np.full(m.shape, PX_M**2), el)
    assert (r.length_m, r.width_m) == (pytest.approx(0.80), pytest.approx(0.10))
    assert r.orientation_deg == pytest.approx(0.0, abs=1e-9)
    assert r.area_m2 == pytest.approx(0.08)
    assert r.edge_distance_m == pytest.approx(0.10)  # 10 px to the top edge
    assert r.solidity == pytest.approx(1.0)
    assert pixel_polygon(m).area == m.sum()


def test_repetition_needs_regular_spacing():
    el = element("Wall", "wall", shapely.box(0, 0, 300, 100), (100, 300))
    area = np.full((100, 300), PX_M**2)
    f = np.full((100, 300), 0.8)

    def strips(cols):
        out = []
        for c in cols:
            m = np.ones((80, 4), bool)
            out.append(describe_region(m, (slice(10, 90), slice(c, c + 4)), f, area, el))
        return out

    regular = strips([20, 80, 140, 200])
    assert len(find_repetition(regular, DefectSettings())) == 1
    assert regular[0].spacing_m == pytest.approx(0.60)
    assert find_repetition(strips([20, 45, 140, 150]), DefectSettings()) == []


def test_no_pair_below_five_pascal_gives_note():
    (t, f, q), (t_dep, _, _), regions = scene(seed=5)
    found = find_defects(t, f, q, np.full((H, W), PX_M**2), regions, "interior",
                         T_AI - T_AE, HDD, pair=(t_dep, 3.0))
    assert not any(d.defect_class == "air leakage" for d in found)
    assert any("under the 5 Pa" in n for d in found for n in d.notes)
    assert math.isfinite(found[0].extra_w)


def test_defects_figure_writes_png(survey_defects, tmp_path):
    from envelope.plots.thermogram import thermogram_figure

    (t, _, _), _, regions = scene(seed=2)
    out = thermogram_figure(t, regions, survey_defects, tmp_path / "defects.png",
                            title="IR-01 north wall")
    assert out.read_bytes()[:8] == b"\x89PNG\r\n\x1a\n"  # PNG signature (ISO/IEC 15948)


def test_exterior_view_finds_warm_strip_with_its_psi():
    # exterior view: steady 1-D surface temperatures with R_se = 0.04 m2K/W (ISO 6946:2017
    # Table 7); q = (T_se - T_e) / R_se = U ΔT, so psi = (U_s - U_w) w exactly (ISO 10211).
    from envelope.synth import steady_surface_temperatures

    h, w = 100, 240
    u = np.full((h, w), 0.3)
    u[:, 100:110] = 1.1  # vertical strip, e.g. a steel post
    _, t_se = steady_surface_temperatures(u, T_AI, T_AE)
    t_se = t_se + np.random.default_rng(4).normal(0, 0.02, t_se.shape)
    f = (t_se - T_AE) / (T_AI - T_AE)
    q = (t_se - T_AE) / 0.04
    regions = {"Gable": element("Gable", "wall", shapely.box(0, 0, w, h), (h, w))}
    found = find_defects(t_se, f, q, np.full((h, w), PX_M**2), regions, "exterior",
                         T_AI - T_AE, HDD, limits=(0.75, 0.6))
    assert len(found) == 1 and found[0].defect_class == "linear thermal bridge"
    assert found[0].orientation_deg == pytest.approx(90.0, abs=1.0)
    assert found[0].psi_w_mk == pytest.approx(0.8 * 0.10, rel=0.05)
    assert found[0].risk == "not assessed"  # interior fRsi not measured on an exterior view


def test_ceiling_patch_is_missing_insulation():
    h, w = 120, 200
    u = np.full((h, w), 0.2)
    u[40:70, 60:95] = 1.8  # gap in loft insulation
    t_obj = surface_temperature_for_u(u, T_AI, T_AE, T_R, EPS, H_C)
    t, f, q = chain(t_obj, EPS, T_R, 9)
    regions = {"Landing ceiling": element("Landing ceiling", "ceiling",
                                          shapely.box(0, 0, w, h), (h, w))}
    found = find_defects(t, f, q, np.full((h, w), PX_M**2), regions, "interior",
                         T_AI - T_AE, HDD)
    assert [d.defect_class for d in found] == ["missing insulation"]
    assert any("ceiling" in r for r in found[0].reasons)
    # chi = extra W / ΔT; the 1-D excess is (U_gap - U) A = 1.6 * 0.105 W/K
    assert found[0].chi_w_k == pytest.approx(1.6 * 0.30 * 0.35, rel=0.05)


def test_global_ranking_renumbers_ids_across_thermograms():
    a = rank_defects([_defect("none", 10.0), _defect("mould", 1.0)])
    b = rank_defects([_defect("none", 50.0)])
    assert [d.id for d in a + b] == ["D1", "D2", "D1"]
    merged = rank_defects(a + b)
    assert [(d.id, d.risk, d.annual_kwh) for d in merged] == [
        ("D1", "mould", 1.0), ("D2", "none", 50.0), ("D3", "none", 10.0)]
