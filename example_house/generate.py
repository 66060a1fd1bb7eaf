"""Generate the demo survey ``example_house/`` of an invented house, with its ground truth.

Corrow House, 12 Pellin Road, Wendlemere (all invented) is surveyed on a still, overcast
winter night. Every thermogram is made by the project's forward model (`envelope.synth`,
`envelope.radiometry`, `envelope.films`): per-pixel U maps on the plane of each element
-> surface temperatures from the surface heat balance -> apparent temperature with camera
noise and a systematic offset -> what the camera exports with its own settings. Areas,
defect positions and heat flows are computed analytically on the element planes and written
to ``truth.json`` so that the tool's results can be compared with what was planted.

Run ``python example_house/generate.py`` (or ``--out DIR``); the output is deterministic
(fixed seed, TIFFs without timestamps, JSON with sorted keys).

The synthetic scene checks the tool's consistency with its own forward model only; it does
not replace the outside references of the unit tests.
"""

from __future__ import annotations

import argparse
import json
import math
import sys
from dataclasses import dataclass, field
from pathlib import Path

import numpy as np
import shapely
import tifffile
from scipy import ndimage
from shapely.geometry import Polygon, box

from envelope import atmosphere, condensation, convection, films, radiometry, synth

SEED = 2026
SHAPE = (480, 640)
SERIES_SHAPE = (120, 160)
SUPERSAMPLE = 2
"""Sub-samples per pixel side: edge pixels get the area-weighted mix of the surfaces."""
BAND_UM = (7.5, 14.0)
OFFSET_K = 0.8
"""Systematic camera error [K], the same in every frame (within the ±2 K specification)."""
NOISE_K = 0.05

T_AI_C = 21.0
RH_I = 0.50
RH_E = 0.88
WIND_M_S = 1.2
OKTAS = 8
SURVEY_HOUR = 13.0
"""Survey time in hours after noon on 2026-01-14 (01:00 on the 15th)."""


# --------------------------------------------------------------------------- climate
def outdoor_air_c(hours):
    """Invented outdoor air temperature [°C], hours after noon on 2026-01-14."""
    h = np.asarray(hours, dtype=float)
    return 1.2 + 4.3 / (1.0 + np.exp((h - 6.5) / 1.8)) - 0.3 * np.exp(-(((h - 16.5) / 2.0) ** 2))


T_AE_C = round(float(outdoor_air_c(SURVEY_HOUR)), 1)
DT_K = T_AI_C - T_AE_C
DEW_E_C = float(condensation.dew_point(T_AE_C, RH_E))
SURVEY_TIME = "01:00"
"""Local time of the survey (the thermograms' time, and the sky model's hourly term)."""
T_SKY_C = float(films.sky_temperature(T_AE_C, dew_point_c=DEW_E_C, cloud_oktas=OKTAS,
                                      model="berdahl_martin", hour_local=1.0))
T_GROUND_C = float(films.ground_temperature(T_AE_C))
F_SKY = films.view_factors(90.0)[0]
H_CE = float(films.convective_coefficient("iso6946_wind", wind_m_s=WIND_M_S))
INTERIOR_MODEL = "alamdari_hammond"
"""Interior convection of the invented house: the Alamdari–Hammond correlations at each
surface's own surface–air difference (not ISO 6946's design convention, which the tool must
not take for physics). The tool's default ensemble holds it as one member among others."""
HYDRAULIC_DIAMETER_M = 4.0
MONTHLY_C = [2.4, 2.9, 5.0, 7.6, 11.0, 14.1, 16.2, 15.9, 13.2, 9.7, 5.6, 3.0]
MONTHLY_RH = [0.88, 0.85, 0.81, 0.76, 0.75, 0.76, 0.77, 0.79, 0.82, 0.86, 0.89, 0.90]
DAYS = [31, 28, 31, 30, 31, 30, 31, 31, 30, 31, 30, 31]
HDD_BASE_C = 15.5
HDD_KD = round(sum(max(HDD_BASE_C - t, 0.0) * d for t, d in zip(MONTHLY_C, DAYS, strict=True)))


def _exterior_reflected_c():
    """Reflected apparent temperature of a vertical façade: half sky, half ground (band)."""
    w = (F_SKY * radiometry.band_radiance(T_SKY_C + 273.15, BAND_UM)
         + (1 - F_SKY) * radiometry.band_radiance(T_GROUND_C + 273.15, BAND_UM))
    return round(float(radiometry.band_temperature(w, BAND_UM)) - 273.15, 1)


T_REFL_E_C = _exterior_reflected_c()


# --------------------------------------------------------------------------- scene model
@dataclass
class Surface:
    """A surface patch on the view's plane (metres) or off it (pixel-free background)."""

    poly: object
    u: float = 0.0
    eps: float = 0.93
    side: str = "interior"  # interior | exterior | fixed (object temperature given)
    h_c: float | None = None  # None (interior): from INTERIOR_MODEL at the surface's temperature
    flow: str = "horizontal"  # heat-flow direction of an interior surface
    height_m: float = 2.5
    host: object = None  # a patch (defect, glazing) shares its host surface's boundary layer
    t_fixed_c: float | None = None
    reflected_c: float | None = None  # local reflected temperature (default: the view's)


@dataclass
class View:
    id: str
    side: str
    width_m: float
    height_m: float
    yaw_deg: float
    pitch_deg: float
    distance_m: float
    reflected_c: float
    export: tuple  # (emissivity, reflected_c)
    hours_since_sun: float
    surfaces: list = field(default_factory=list)  # painted in order, later on top
    outlines: list = field(default_factory=list)  # (element, role, polygon in metres)
    shape: tuple = SHAPE
    shift_px: tuple = (0.0, 0.0)
    extra_u: object = None  # extra U on the cells of LEAK_GRID (air leak plume)
    ref_corners: tuple = ()
    probe_m: tuple | None = None  # façade point [m] of the contact-probe reading
    note: str = ""

    @property
    def homography(self):
        h = synth.camera_homography(self.width_m, self.height_m, self.shape, self.yaw_deg,
                                    self.pitch_deg, self.distance_m)
        sx, sy = self.shift_px
        shift = np.array([[1.0, 0.0, -sx], [0.0, 1.0, -sy], [0.0, 0.0, 1.0]])
        return h @ shift

    @property
    def view_angle_deg(self):
        c = math.cos(math.radians(self.yaw_deg)) * math.cos(math.radians(self.pitch_deg))
        return math.degrees(math.acos(c))


def _apply(h, x, y):
    w = h[2, 0] * x + h[2, 1] * y + h[2, 2]
    return (h[0, 0] * x + h[0, 1] * y + h[0, 2]) / w, (h[1, 0] * x + h[1, 1] * y + h[1, 2]) / w, w


def to_pixels(view: View, poly):
    """Polygon in façade metres -> pixel polygon clipped to the frame."""
    inv = np.linalg.inv(view.homography)
    px = shapely.transform(poly, lambda c: np.column_stack(_apply(inv, c[:, 0], c[:, 1])[:2]))
    return px.intersection(box(0, 0, view.shape[1], view.shape[0]))


def _samples(view: View):
    rows, cols = view.shape
    s = SUPERSAMPLE
    yy, xx = np.mgrid[0:rows * s, 0:cols * s]
    x_m, y_m, w = _apply(view.homography, (xx + 0.5) / s, (yy + 0.5) / s)
    _, _, w0 = _apply(view.homography, cols / 2.0, rows / 2.0)
    return x_m, y_m, np.sign(w) == np.sign(w0)


def _inside(poly, x_m, y_m):
    """Sub-samples inside a façade polygon (bounds test for rectangles, fast)."""
    x0, y0, x1, y1 = poly.bounds
    hit = (x_m > x0) & (x_m < x1) & (y_m > y0) & (y_m < y1)
    if not poly.equals(poly.envelope):
        hit[hit] = shapely.contains_xy(poly, x_m[hit], y_m[hit])
    return hit


def interior_h_c(s: Surface, t_ai_c, t_ae_c, reflected_c) -> float:
    """The surface's convective coefficient [W/(m²·K)]: fixed, or INTERIOR_MODEL at its own
    clear-field temperature (fixed point; one boundary layer per surface, so a defect on it
    keeps the surface's coefficient)."""
    if s.h_c is not None:
        return s.h_c
    if s.host is not None:
        return interior_h_c(s.host, t_ai_c, t_ae_c, reflected_c)
    h = 2.0
    for _ in range(30):
        t_s = float(synth.surface_temperature_for_u(s.u, t_ai_c, t_ae_c, reflected_c, s.eps, h))
        h_new = float(convection.interior_coefficient(
            INTERIOR_MODEL, t_s, t_ai_c, heat_flow=s.flow, height_m=s.height_m,
            hydraulic_diameter_m=HYDRAULIC_DIAMETER_M))
        if abs(h_new - h) < 1e-12:
            break
        h = h_new
    return h


def _surface_temperature(s: Surface, u, t_ai_c, t_ae_c, reflected_c):
    if s.side == "interior":
        h = interior_h_c(s, t_ai_c, t_ae_c, reflected_c)
        return synth.surface_temperature_for_u(u, t_ai_c, t_ae_c, reflected_c, s.eps, h)
    if s.side == "exterior":
        return synth.exterior_surface_temperature_for_u(u, t_ai_c, t_ae_c, T_SKY_C, T_GROUND_C,
                                                        F_SKY, s.eps, s.h_c)
    return np.full(np.shape(u), s.t_fixed_c) if np.ndim(u) else s.t_fixed_c


def render_object(view: View, t_ai_c=T_AI_C, t_ae_c=T_AE_C):
    """Per-pixel object temperature [°C], emissivity and local reflected temperature [°C].

    Each of SUPERSAMPLE² points per pixel takes the top surface that holds it; the pixel
    is their mean (area-weighted mix at edges). ``t_ae_c`` is the outdoor temperature that
    drives the heat flow through the element (the lagged one for the time series).
    """
    x_m, y_m, on_plane = _samples(view)
    top = np.zeros(x_m.shape, dtype=np.int16)
    for k, s in enumerate(view.surfaces):
        if s.poly is None:
            top[:] = k
        else:
            top[_inside(s.poly, x_m, y_m) & on_plane] = k
    surf = view.surfaces
    refl_s = np.array([view.reflected_c if s.reflected_c is None else s.reflected_c for s in surf])
    t_s = np.array([_surface_temperature(s, s.u, t_ai_c, t_ae_c, view.reflected_c) for s in surf])
    t, eps, refl = t_s[top], np.array([s.eps for s in surf])[top], refl_s[top]
    if view.extra_u is not None:
        x0, y0, _, _, cell = LEAK_GRID
        sub = np.diag([1.0 / SUPERSAMPLE, 1.0 / SUPERSAMPLE, 1.0])  # sub-sample -> pixel
        extra = synth.project_facade(view.extra_u, cell, view.homography @ sub, x_m.shape,
                                     fill=0.0, origin_m=(x0, y0))
        for k, s in enumerate(surf):
            hit = (top == k) & (extra > 0)
            if s.side != "fixed" and hit.any():
                t[hit] = _surface_temperature(s, s.u + extra[hit], t_ai_c, t_ae_c, view.reflected_c)

    def mean(a):
        n = SUPERSAMPLE
        return a.reshape(view.shape[0], n, view.shape[1], n).mean(axis=(1, 3))

    return mean(t), mean(eps), mean(refl)


def air_and_rh(view: View):
    return (T_AI_C, RH_I) if view.side == "interior" else (T_AE_C, RH_E)


def render_reading(view: View, t_obj, eps, refl, rng):
    """Exported per-pixel readings [°C] (float32) of a view."""
    air, rh = air_and_rh(view)
    tau = atmosphere.atmospheric_transmittance(view.distance_m, air, rh, BAND_UM)
    app = synth.render_apparent(t_obj, eps, refl, tau, air, noise_k=NOISE_K, offset_k=OFFSET_K,
                                rng=rng, band_um=BAND_UM)
    ex_eps, ex_refl = view.export
    out = radiometry.export_reading(app, ex_eps, ex_refl, 1.0, None, BAND_UM)
    return np.asarray(out, dtype=np.float32)


# --------------------------------------------------------------------------- the house
def rect(x0, y0, x1, y1):
    return box(x0, y0, x1, y1)


BIG = 50.0
PLASTER, PLASTERBOARD, GLASS, FRAME, BRICK, RENDER, TIMBER = 0.93, 0.90, 0.84, 0.90, 0.93, 0.93, 0.90
U_CAVITY = 0.55
U_WINDOW_GLASS, U_WINDOW_FRAME, FRAME_M = 3.1, 2.0, 0.07


def room_background(width_m, height_m, ceiling_u=0.0, floor_u=0.0, floor_eps=TIMBER):
    """Off-plane surfaces round an interior wall: side walls, ceiling and floor (partitions)."""
    return [
        Surface(None, u=0.0, eps=PLASTER),  # side partition walls
        Surface(rect(-BIG, height_m, BIG, BIG), u=ceiling_u, eps=PLASTER, flow="upward"),
        Surface(rect(-BIG, -BIG, BIG, 0.0), u=floor_u, eps=floor_eps, flow="downward"),
    ]


def window(x0, y0, x1, y1, side):
    """Window surfaces: frame ring and glazing (outer frame edge given) [m]."""
    outer = rect(x0, y0, x1, y1)
    glass = rect(x0 + FRAME_M, y0 + FRAME_M, x1 - FRAME_M, y1 - FRAME_M)
    h = H_CE if side == "exterior" else None
    height = y1 - y0
    whole = Surface(outer, window_u(outer, glass), GLASS, side, h, height_m=height)
    return outer, glass, [Surface(outer, U_WINDOW_FRAME, FRAME, side, h, height_m=height,
                                  host=whole),
                          Surface(glass, U_WINDOW_GLASS, GLASS, side, h, height_m=height,
                                  host=whole)]


def window_u(outer, glass):
    return (glass.area * U_WINDOW_GLASS + (outer.area - glass.area) * U_WINDOW_FRAME) / outer.area


def leak_noise(rng):
    """Smooth random field (unit standard deviation) shaping the leak plume, on its grid."""
    noise = ndimage.gaussian_filter(rng.normal(size=(LEAK_GRID[3], LEAK_GRID[2])), 4.0)
    return noise / noise.std()


LEAK_GRID = (0.45, 0.35, 76, 170, 0.01)
"""Plume grid on the dining wall: lower-left corner (x, y) [m], columns, rows, cell [m]."""


def leak_field(strength, threshold, noise):
    """Cold plume of an air leak at the left jamb of the dining window, as extra U [W/m²K].

    The plume leaves the gap between frame and wall along the jamb (y 1.15–1.95 m) and sinks,
    spreading, below it; the noise field makes its edge irregular. `strength` is the peak
    extra U; `threshold` removes the weak part (the baseline shows only the core).
    Returns the extra U on the cells of `LEAK_GRID` (row 0 at the bottom).
    """
    x0, y0, nx, ny, cell = LEAK_GRID
    xg, yg = np.meshgrid(x0 + (np.arange(nx) + 0.5) * cell, y0 + (np.arange(ny) + 0.5) * cell)
    below = np.clip(1.15 - yg, 0.0, None)
    above = np.clip(yg - 1.95, 0.0, None)
    dx = np.clip(1.2 - xg, 0.0, None)
    plume = (np.exp(-dx / (0.08 + 0.30 * below)) * np.exp(-below / 0.45)
             * np.exp(-above / 0.04) * np.exp(0.5 * noise))
    grid = strength * np.clip((plume - threshold) / (1.0 - threshold), 0.0, 1.0) * (xg < 1.2)

    return grid


def build_views():
    """All views of the survey and the truth about the planted features."""
    views, truth_el, truth_def = [], {}, []

    # 1. kitchen: cavity wall of known U, probe, tape, glossy metal splashback (reflection)
    w, h = 4.2, 2.4
    wall = rect(0, 0, w, h)
    splash = rect(2.6, 0.95, 3.5, 1.55)
    tape = rect(2.0, 1.3, 2.05, 1.35)
    v = View("kitchen-south", "interior", w, h, 6.0, -3.0, 5.0, 19.6, (0.95, 20.0), 9.5)
    v.surfaces = room_background(w, h) + [
        Surface(wall, U_CAVITY, PLASTER),
        Surface(tape, U_CAVITY, 0.95),
        Surface(splash, U_CAVITY, 0.25, reflected_c=50.0),
    ]
    v.outlines = [("kitchen-south-wall", "element", wall),
                  ("kitchen-south-wall", "reference", rect(0.4, 0.5, 1.8, 1.9))]
    v.ref_corners = ((0, 0), (w, 0), (w, h), (0, h))
    v.probe_m = (1.1, 1.0)
    v.note = ("Cavity wall (partial fill, U 0.55) with a contact-probe spot, an emissivity tape and"
              " a polished steel splashback that mirrors a 50 °C radiator.")
    views.append(v)
    truth_el["kitchen-south-wall"] = dict(kind="wall", u=U_CAVITY, poly=wall, view=v,
                                          u_map=[(splash, U_CAVITY)])

    # 2. bedroom: internally insulated wall (spec 0.30, true 0.28) with one missing batt
    w, h = 3.8, 2.5
    wall, batt = rect(0, 0, w, h), rect(2.3, 0.6, 2.9, 1.8)
    v = View("bedroom-east", "interior", w, h, -5.0, -2.0, 4.6, 19.9, (0.95, 20.0), 14.0)
    v.surfaces = room_background(w, h) + [wall_s := Surface(wall, 0.28, PLASTER),
                                          Surface(batt, 1.6, PLASTER, host=wall_s)]
    v.outlines = [("bedroom-east-wall", "element", wall),
                  ("bedroom-east-wall", "reference", rect(0.4, 0.7, 1.6, 1.9))]
    v.ref_corners = ((0, 0), (w, 0), (w, h), (0, h))
    v.probe_m = (1.0, 1.3)
    v.note = "Internally insulated solid wall (spec U 0.30, built 0.28) with one missing batt."
    views.append(v)
    truth_el["bedroom-east-wall"] = dict(kind="wall", u=0.28, poly=wall, view=v, u_map=[(batt, 1.6)])
    truth_def.append(dict(cls="missing insulation", view=v, element="bedroom-east-wall",
                          poly=batt, u_ref=0.28, u_def=1.6,
                          note="batt of 0.6 m x 1.2 m left out; bare brick and plaster there"))

    # 3. loft room: timber-frame gable, studs 45 mm at 600 mm centres (exported with eps 1)
    w, h_eave, h_ridge = 4.8, 1.2, 2.6
    gable = Polygon([(0, 0), (w, 0), (w, h_eave), (w / 2, h_ridge), (0, h_eave)])
    studs = [rect(0.6 * k - 0.0225, -1, 0.6 * k + 0.0225, 10).intersection(gable) for k in range(1, 8)]
    v = View("loft-gable-west", "interior", w, h_ridge, 4.0, 5.0, 5.4, 19.7, (1.0, 20.0), 9.0)
    v.surfaces = [
        Surface(None, u=0.18, eps=PLASTERBOARD, flow="upward"),  # sloping ceilings
        Surface(rect(-BIG, -BIG, BIG, 0.0), u=0.0, eps=TIMBER, flow="downward"),
        gable_s := Surface(gable, 0.32, PLASTERBOARD),
    ] + [Surface(s, 0.90, PLASTERBOARD, host=gable_s) for s in studs]
    v.outlines = [("gable-west-wall", "element", gable),
                  ("gable-west-wall", "reference", rect(1.29, 0.3, 1.71, 1.0))]
    v.ref_corners = ((0, 0), (w, 0), (w, h_eave), (0, h_eave))
    v.probe_m = (1.5, 0.6)
    v.note = ("Timber-frame gable of the loft room (spec U 0.35): clear field 0.32, studs 45 mm"
              " wide at 600 mm centres 0.90. Exported with emissivity 1.")
    views.append(v)
    truth_el["gable-west-wall"] = dict(kind="wall", u=0.32, poly=gable, view=v,
                                       u_map=[(s, 0.90) for s in studs])
    truth_def.append(dict(cls="repeating thermal bridge", view=v, element="gable-west-wall",
                          poly=shapely.union_all(studs), parts=studs, u_ref=0.32, u_def=0.90,
                          width_m=0.045, spacing_m=0.6,
                          note="timber studs 45 mm wide at 600 mm centres"))

    # 4. lounge: cavity wall with a wall–floor junction bridge next to the suspended floor
    w, h, strip_m, psi = 4.0, 2.4, 0.15, 0.15
    wall, strip = rect(0, 0, w, h), rect(0, 0, w, strip_m)
    floor_poly = rect(0, -BIG, w, 0)
    u_strip = U_CAVITY + psi / strip_m
    v = View("lounge-south", "interior", w, h, -4.0, 4.0, 4.7, 19.8, (0.95, 20.0), 9.5)
    v.surfaces = room_background(w, h, floor_u=0.45) + [
        wall_s := Surface(wall, U_CAVITY, PLASTER), Surface(strip, u_strip, PLASTER, host=wall_s)]
    v.outlines = [("lounge-south-wall", "element", wall),
                  ("lounge-south-wall", "reference", rect(0.5, 0.8, 2.0, 1.9)),
                  ("lounge-floor", "element", floor_poly)]
    v.ref_corners = ((0, 0), (w, 0), (w, h), (0, h))
    v.probe_m = (1.2, 1.4)
    v.note = ("Cavity wall with a cold strip along the wall–floor junction (psi 0.15 W/mK) above"
              " the suspended timber floor.")
    views.append(v)
    truth_el["lounge-south-wall"] = dict(kind="wall", u=U_CAVITY, poly=wall, view=v,
                                         u_map=[(strip, u_strip)])
    truth_el["lounge-floor"] = dict(kind="floor", u=0.45, poly=None, view=v, u_map=[])
    truth_def.append(dict(cls="linear thermal bridge", view=v, element="lounge-south-wall",
                          poly=strip, u_ref=U_CAVITY, u_def=u_strip, psi=psi, length_m=w,
                          note="wall–floor junction: uninsulated cavity closer at the floor"))

    # 5./6. dining room: window with warm frame, baseline and depressurised (50 Pa) views
    w, h = 3.6, 2.4
    wall = rect(0, 0, w, h)
    outer, glass, win = window(1.2, 0.9, 2.4, 2.1, "interior")
    noise = leak_noise(np.random.default_rng([SEED, 99]))
    for vid, grid, shift in (("dining-west", leak_field(0.45, 0.45, noise), (0.0, 0.0)),
                             ("dining-west-50pa", leak_field(1.6, 0.04, noise), (2.0, 1.0))):
        v = View(vid, "interior", w, h, 3.0, -2.0, 4.4, 19.6, (0.95, 20.0), 9.0, shift_px=shift)
        v.surfaces = room_background(w, h) + [Surface(wall, U_CAVITY, PLASTER)] + win
        v.extra_u = grid
        v.outlines = [("dining-west-wall", "element", wall),
                      ("dining-west-wall", "reference", rect(2.7, 0.5, 3.3, 1.8)),
                      ("dining-window", "element", outer)]
        v.ref_corners = ((0, 0), (w, 0), (w, h), (0, h))
        v.probe_m = (3.0, 1.2)
        views.append(v)
        truth_def.append(dict(cls="air leakage", view=v, element="dining-west-wall", grid=grid,
                              u_ref=U_CAVITY,
                              note="cold plume from the gap between frame and wall at the left"
                                   " jamb, sinking below it"))
    views[-2].note = ("Double-glazed window (U 2.86: glazing 3.1, warmer PVC-U frame 2.0) in a cavity"
                      " wall; baseline of the pressure pair.")
    views[-1].note = ("Same view depressurised by 50 Pa, camera moved by (2, 1) px: the leak at the"
                      " left jamb grows into a cold plume.")
    truth_el["dining-west-wall"] = dict(kind="wall", u=U_CAVITY, poly=wall.difference(outer),
                                        view=views[-2], u_map=[])
    truth_el["dining-window"] = dict(kind="window", u=window_u(outer, glass), poly=outer,
                                     view=views[-2], u_map=[], glass=glass)

    # 7. landing ceiling below the cold loft, with a gap in the loft insulation
    w, h = 3.0, 2.2
    ceiling = rect(0, 0, w, h)
    gap = Polygon([(1.85, 0.8), (2.45, 0.9), (2.4, 1.75), (1.95, 1.7)])
    v = View("landing-ceiling", "interior", w, h, 3.0, 6.0, 3.4, 19.5, (0.95, 20.0), 9.0)
    v.surfaces = [Surface(None, u=0.0, eps=PLASTER),
                  ceiling_s := Surface(ceiling, 0.25, PLASTERBOARD, flow="upward"),
                  Surface(gap, 2.2, PLASTERBOARD, flow="upward", host=ceiling_s)]
    v.outlines = [("landing-ceiling", "element", ceiling),
                  ("landing-ceiling", "reference", rect(0.3, 0.3, 1.4, 1.8))]
    v.ref_corners = ((0, 0), (w, 0), (w, h), (0, h))
    v.probe_m = (0.8, 1.0)
    v.note = "Ceiling below the cold loft (U 0.25) seen from below; one gap in the insulation."
    views.append(v)
    truth_el["landing-ceiling"] = dict(kind="ceiling", u=0.25, poly=ceiling, view=v, u_map=[(gap, 2.2)])
    truth_def.append(dict(cls="missing insulation", view=v, element="landing-ceiling", poly=gap,
                          u_ref=0.25, u_def=2.2, note="insulation pulled back over the landing"))

    # 8. front façade, oblique exterior view (45°): solid brick wall and two windows
    w, h = 7.6, 5.4
    wall = rect(0, 0, w, h)
    o1, g1, win1 = window(1.0, 0.9, 2.6, 2.2, "exterior")
    o2, g2, win2 = window(4.6, 3.3, 5.8, 4.5, "exterior")
    v = View("front-oblique", "exterior", w, h, 45.0, -4.0, 11.0, T_REFL_E_C, (0.95, 20.0), 40.0)
    v.surfaces = [Surface(None, side="fixed", eps=1.0, t_fixed_c=T_SKY_C - 2.0),  # sky
                  Surface(rect(-BIG, -BIG, BIG, 0.0), side="fixed", eps=0.95, t_fixed_c=T_GROUND_C),
                  Surface(wall, 1.7, BRICK, "exterior", H_CE)] + win1 + win2
    v.outlines = [("front-wall", "element", wall), ("front-wall", "reference", rect(3.0, 0.6, 4.2, 2.8)),
                  ("front-window-ground", "element", o1), ("front-window-first", "element", o2)]
    v.ref_corners = ((0, 0), (w, 0), (w, h), (0, h))
    v.probe_m = (3.6, 1.6)
    v.note = ("Street façade (north, solid brick, U 1.7) from the pavement at 45°, true"
              " perspective; two double-glazed windows.")
    views.append(v)
    truth_el["front-wall"] = dict(kind="wall", u=1.7, poly=wall.difference(o1.union(o2)), view=v, u_map=[])
    truth_el["front-window-ground"] = dict(kind="window", u=window_u(o1, g1), poly=o1, view=v, u_map=[])
    truth_el["front-window-first"] = dict(kind="window", u=window_u(o2, g2), poly=o2, view=v, u_map=[])

    # 9. garden room, exterior: well-insulated wall colder than the air (night-sky cooling)
    w, h = 5.0, 2.7
    wall = rect(0, 0, w, h)
    v = View("garden-room-east", "exterior", w, h, -8.0, 0.0, 7.5, T_REFL_E_C, (0.95, 0.0), 14.0)
    v.surfaces = [Surface(None, side="fixed", eps=1.0, t_fixed_c=T_SKY_C - 2.0),
                  Surface(rect(-BIG, -BIG, BIG, 0.0), side="fixed", eps=0.95, t_fixed_c=T_GROUND_C),
                  Surface(rect(-BIG, 0, 0, h), side="fixed", eps=0.95, t_fixed_c=T_AE_C - 0.6),
                  Surface(rect(w, 0, BIG, h), side="fixed", eps=0.95, t_fixed_c=T_AE_C - 0.6),
                  Surface(wall, 0.22, RENDER, "exterior", H_CE)]
    v.outlines = [("garden-room-east-wall", "element", wall),
                  ("garden-room-east-wall", "reference", rect(0.8, 0.6, 4.2, 2.1))]
    v.ref_corners = ((0, 0), (w, 0), (w, h), (0, h))
    v.probe_m = (2.5, 1.3)
    v.note = ("Rendered timber-frame garden room (U 0.22) from outside: its surface is colder than"
              " the air under the night sky, so the exterior method must not be trusted here.")
    views.append(v)
    truth_el["garden-room-east-wall"] = dict(kind="wall", u=0.22, poly=wall, view=v, u_map=[])

    # 10. study: the wall of the night-long series (small frames), the frame at 01:00
    w, h = 3.2, 2.4
    wall = rect(0, 0, w, h)
    v = View("study-south", "interior", w, h, 2.0, 0.0, 4.6, 19.8, (0.95, 20.0), 9.5,
             shape=SERIES_SHAPE)
    v.surfaces = room_background(w, h) + [Surface(wall, U_CAVITY, PLASTER)]
    v.outlines = [("study-south-wall", "element", wall),
                  ("study-south-wall", "reference", rect(0.5, 0.5, 2.7, 1.9))]
    v.ref_corners = ((0, 0), (w, 0), (w, h), (0, h))
    v.probe_m = (1.6, 1.2)
    v.note = ("160 x 120 px frame of the study wall at 01:00, one of the night-long series"
              " (19:00–06:30, every 30 min); the wall lags the falling outdoor air.")
    views.append(v)
    truth_el["study-south-wall"] = dict(kind="wall", u=U_CAVITY, poly=wall, view=v, u_map=[])
    return views, truth_el, truth_def


# --------------------------------------------------------------------------- truth
def _r(x, nd=4):
    return None if x is None else round(float(x), nd)


def _px_box(poly):
    x0, y0, x1, y1 = poly.bounds
    c = poly.centroid
    return [_r(c.x, 2), _r(c.y, 2)], [_r(x0, 2), _r(y0, 2), _r(x1, 2), _r(y1, 2)]


def element_truth(name, spec, specified):
    poly, u = spec["poly"], spec["u"]
    out = {"kind": spec["kind"], "u_true_w_m2k": _r(u), "thermogram": spec["view"].id,
           "u_specified_w_m2k": specified.get(name)}
    if poly is None:
        out.update(net_area_m2=MEASURED_AREA_M2.get(name), u_whole_w_m2k=_r(u),
                   note="seen at a grazing angle below the wall; its area is not on the view's"
                        " plane, so the survey gives the taped area (area_m2)")
        return out
    extra = sum((ui - u) * p.intersection(poly).area for p, ui in spec["u_map"])
    out.update(net_area_m2=_r(poly.area), u_whole_w_m2k=_r(u + extra / poly.area))
    if "glass" in spec:
        g = spec["glass"]
        out.update(u_glazing_w_m2k=U_WINDOW_GLASS, u_frame_w_m2k=U_WINDOW_FRAME,
                   frame_width_m=FRAME_M, glazing_area_m2=_r(g.area),
                   emissivity_glazing=GLASS, emissivity_frame=FRAME,
                   note="U is the area-weighted glazing and frame value; the frame (PVC-U,"
                        " emissivity 0.90) is warmer than the glazing")
    return out


def leak_truth(d):
    """Area, heat flow and pixel position of a leak plume from its façade grid."""
    grid, view = d["grid"], d["view"]
    x0, y0, _, _, cell = LEAK_GRID
    rows, cols = np.nonzero(grid > 0.1)
    inv = np.linalg.inv(view.homography)
    xc, yc = x0 + (cols + 0.5) * cell, y0 + (rows + 0.5) * cell
    px, py, _ = _apply(inv, xc, yc)
    wgt = grid[rows, cols]
    corners = [_apply(inv, xc + sx * cell / 2, yc + sy * cell / 2)[:2]
               for sx in (-1, 1) for sy in (-1, 1)]
    allx = np.concatenate([c[0] for c in corners])
    ally = np.concatenate([c[1] for c in corners])
    return dict(
        thermogram=view.id, area_m2=_r(rows.size * cell**2),
        extra_w=_r(grid.sum() * cell**2 * DT_K, 3),
        peak_extra_u_w_m2k=_r(grid.max()),
        centroid_px=[_r(np.average(px, weights=wgt), 2), _r(np.average(py, weights=wgt), 2)],
        bbox_px=[_r(allx.min(), 2), _r(ally.min(), 2), _r(allx.max(), 2), _r(ally.max(), 2)],
    )


def defects_truth(defs):
    out, leak = [], [d for d in defs if d["cls"] == "air leakage"]
    for d in defs:
        if d["cls"] == "air leakage":
            continue
        view, poly = d["view"], d["poly"]
        du = d["u_def"] - d["u_ref"]
        cen, bb = _px_box(to_pixels(view, poly))
        e = {"class": d["cls"], "thermogram": view.id, "element": d["element"],
             "centroid_px": cen, "bbox_px": bb, "area_m2": _r(poly.area),
             "u_reference_w_m2k": _r(d["u_ref"]), "u_defect_w_m2k": _r(d["u_def"]),
             "extra_w": _r(du * poly.area * DT_K, 3), "note": d["note"]}
        if d["cls"] == "linear thermal bridge":
            e.update(psi_w_mk=_r(du * (poly.bounds[3] - poly.bounds[1])), length_m=d["length_m"],
                     width_m=_r(poly.bounds[3] - poly.bounds[1]), junction="wall–floor",
                     junction_element="lounge-floor")
        if d["cls"] == "repeating thermal bridge":
            parts = []
            for p in d["parts"]:
                c, b = _px_box(to_pixels(view, p))
                parts.append({"centroid_px": c, "bbox_px": b, "length_m": _r(p.bounds[3] - p.bounds[1])})
            e.update(count=len(parts), spacing_m=d["spacing_m"], width_m=d["width_m"],
                     psi_per_stud_w_mk=_r(du * d["width_m"]),
                     length_m=_r(sum(p["length_m"] for p in parts)), parts=parts)
        out.append(e)
    base, dep = leak_truth(leak[0]), leak_truth(leak[1])
    e = {"class": "air leakage", "element": leak[0]["element"], "note": leak[0]["note"],
         "u_reference_w_m2k": U_CAVITY, "pressure_difference_pa": 50.0,
         "camera_shift_px": list(leak[1]["view"].shift_px),
         "area_definition": "façade area where the plume adds more than 0.1 W/m²K",
         "extra_w_definition": "surface-equivalent heat flow of the plume, integral of its extra"
                               " U times (T_ai - T_ae); extra_w is at survey conditions (the"
                               " baseline), depressurised.extra_w at 50 Pa"}
    e.update(base)
    e["depressurised"] = dep
    out.append(e)
    for i, e in enumerate(out, start=1):
        e["id"] = f"D{i}"
    return out


# --------------------------------------------------------------------------- writers
def write_tiff(path: Path, image):
    path.parent.mkdir(parents=True, exist_ok=True)
    tifffile.imwrite(path, np.asarray(image, dtype=np.float32), compression="zlib",
                     compressionargs={"level": 1},
                     metadata=None, datetime=None, software=None, description=None)


def write_json(path: Path, obj):
    path.parent.mkdir(parents=True, exist_ok=True)
    path.write_text(json.dumps(obj, indent=1, sort_keys=True, ensure_ascii=False) + "\n",
                    encoding="utf-8")


def outline_collection(view: View):
    feats = []
    for element, role, poly in view.outlines:
        px = to_pixels(view, poly)
        ring = [[_r(x, 2), _r(y, 2)] for x, y in px.exterior.coords]
        feats.append({"type": "Feature", "properties": {"element": element, "role": role},
                      "geometry": {"type": "Polygon", "coordinates": [ring]}})
    return {"type": "FeatureCollection", "features": feats}


def _pixel_of(view: View, x_m, y_m):
    """Centre (x, y) of the pixel that sees façade point (x_m, y_m), and its (row, col)."""
    px, py, _ = _apply(np.linalg.inv(view.homography), x_m, y_m)
    col, row = int(math.floor(px)), int(math.floor(py))
    return [col + 0.5, row + 0.5], (row, col)


def _toml(v):
    if isinstance(v, bool):
        return "true" if v else "false"
    if isinstance(v, int):
        return str(v)
    if isinstance(v, float):
        return repr(round(v, 4))
    if isinstance(v, str):
        return json.dumps(v, ensure_ascii=False)
    if isinstance(v, list | tuple):
        return "[" + ", ".join(_toml(x) for x in v) + "]"
    raise TypeError(type(v))


def _table(lines, header, items):
    lines.append(f"\n{header}")
    for k, v in items.items():
        if v is not None:
            lines.append(f"{k} = {_toml(v)}")


ELEMENTS = {  # name: (kind, material, heat_flow, height_m, tilt_deg, host)
    "kitchen-south-wall": ("wall", "painted-plaster", "horizontal", 2.4, 90.0, None),
    "bedroom-east-wall": ("wall", "painted-plaster", "horizontal", 2.5, 90.0, None),
    "gable-west-wall": ("wall", "plasterboard", "horizontal", 2.6, 90.0, None),
    "lounge-south-wall": ("wall", "painted-plaster", "horizontal", 2.4, 90.0, None),
    "lounge-floor": ("floor", "timber", "downward", 2.5, 0.0, None),
    "dining-west-wall": ("wall", "painted-plaster", "horizontal", 2.4, 90.0, None),
    "dining-window": ("window", "glass", "horizontal", 1.2, 90.0, "dining-west-wall"),
    "landing-ceiling": ("ceiling", "plasterboard", "upward", 2.2, 0.0, None),
    "front-wall": ("wall", "brick", "horizontal", 5.4, 90.0, None),
    "front-window-ground": ("window", "glass", "horizontal", 1.3, 90.0, "front-wall"),
    "front-window-first": ("window", "glass", "horizontal", 1.2, 90.0, "front-wall"),
    "garden-room-east-wall": ("wall", "render", "horizontal", 2.7, 90.0, None),
    "study-south-wall": ("wall", "painted-plaster", "horizontal", 2.4, 90.0, None),
}
# the installer's claims: the internal insulation (0.30), the new gable (0.35) and the
# "A-rated" replacement window in the dining room (1.6, but the unit fitted is an older one)
SPECIFIED = {"bedroom-east-wall": 0.30, "gable-west-wall": 0.35, "dining-window": 1.6}
MEASURED_AREA_M2 = {"lounge-floor": 14.4}  # taped on site: the floor is seen at a grazing angle
MEASURES = [
    dict(name="Internal insulation, kitchen wall", kind="add_layer",
         elements=["kitchen-south-wall"], thickness_m=0.06, conductivity_w_mk=0.022, cost=2900.0),
    dict(name="Seal round the dining-room window", kind="seal_leak", elements=["dining-west-wall"],
         defect_classes=["air leakage"], leak_fraction_removed=0.8, cost=160.0),
    dict(name="Insulate the lounge wall–floor junction", kind="fix_bridge",
         elements=["lounge-south-wall"], new_psi_w_mk=0.05, cost=650.0),
    dict(name="Top up the loft insulation over the landing", kind="add_layer",
         elements=["landing-ceiling"], thickness_m=0.2, conductivity_w_mk=0.04, cost=480.0),
    dict(name="Refit the missing batt in the bedroom wall", kind="repair_defect",
         elements=["bedroom-east-wall"], defect_classes=["missing insulation"], cost=420.0),
    dict(name="Close the gap in the loft insulation", kind="repair_defect",
         elements=["landing-ceiling"], defect_classes=["missing insulation"], cost=90.0),
]


LABELS = {
    "kitchen-south-wall": "Kitchen wall (south)", "bedroom-east-wall": "Bedroom wall (east)",
    "gable-west-wall": "Loft-room gable (west)", "lounge-south-wall": "Lounge wall (south)",
    "lounge-floor": "Lounge floor", "dining-west-wall": "Dining-room wall (west)",
    "dining-window": "Dining-room window", "landing-ceiling": "Landing ceiling",
    "front-wall": "Front wall (street side)", "front-window-ground": "Front window, ground floor",
    "front-window-first": "Front window, first floor",
    "garden-room-east-wall": "Garden-room wall (east)", "study-south-wall": "Study wall (south)",
}
HEAT_CAPACITY = {"study-south-wall": 66.0}
"""Areal heat capacity [kJ/(m²·K)] of the study wall: a response time of about WALL_LAG_H at
its U for a homogeneous wall (what the tool assumes without layers)."""
AIRTIGHTNESS = {"n50_per_h": 7.5, "volume_m3": 310.0, "envelope_area_m2": 345.0, "storeys": 2,
                "shielding": "normal"}
"""An invented blower-door result (EN ISO 9972 style): 7.5 air changes an hour at 50 Pa."""
JUNCTIONS = [{"elements": ["lounge-south-wall", "lounge-floor"], "junction_type": "wall-floor",
              "psi_specified_w_mk": 0.08}]
"""The builder's design value for the lounge's wall–floor junction (the truth is 0.15)."""


def survey_toml(views, probes, tapes, history):
    out_hist, in_hist = history
    lines = ["# Demo survey of an invented house, written by example_house/generate.py.",
             "# Do not edit by hand: change the generator and run it again.",
             'format = "envelope-survey"', "version = 1"]
    _table(lines, "[site]", {"name": "Corrow House", "address": "12 Pellin Road",
                             "town": "Wendlemere", "latitude_deg": 52.4})
    _table(lines, "[survey]", {"date": "2026-01-14", "surveyor": "Ione Marchbank",
                               "client": "Rafe and Dilys Anselm"})
    _table(lines, "[conditions]", {
        "indoor_air_c": T_AI_C, "outdoor_air_c": T_AE_C, "indoor_rh": RH_I, "outdoor_rh": RH_E,
        "wind_m_s": WIND_M_S, "rain": False, "hours_since_rain": 30.0,
        "sky_cloud_oktas": float(OKTAS), "air_uncertainty_k": 0.3, "wind_uncertainty_m_s": 0.5,
        "outdoor_history_c": out_hist, "indoor_history_c": in_hist, "history_interval_h": 1.0,
        "time": SURVEY_TIME})
    _table(lines, "[camera]", {"label": "survey camera 2 (640 x 480)", "band_um": list(BAND_UM),
                               "accuracy_k": 2.0, "relative_accuracy_k": 0.2, "noise_k": NOISE_K})
    _table(lines, "[climate]", {
        "heating_degree_days_kd": float(HDD_KD), "design_indoor_c": 21.0, "design_outdoor_c": -4.0,
        "monthly_outdoor_c": MONTHLY_C, "monthly_outdoor_rh": MONTHLY_RH,
        "monthly_indoor_c": [21.0] * 12, "indoor_humidity": "humidity_class", "humidity_class": 3,
        "frsi_criterion": "iso13788"})
    _table(lines, "[prices]", {"currency": "EUR", "energy_price_per_kwh": 0.12,
                               "heating_efficiency": 0.89, "co2_kg_per_kwh": 0.2})
    _table(lines, "[airtightness]", AIRTIGHTNESS)
    _table(lines, "[analysis]", {"exterior_convection": "iso6946_wind", "sky_model": "berdahl_martin",
                                 "monte_carlo_draws": 20000, "seed": 20260115,
                                 "defect_threshold": 0.03, "defect_min_area_m2": 0.01})
    for name, (kind, material, flow, height, tilt, host) in ELEMENTS.items():
        _table(lines, "[[elements]]", {"name": name, "label": LABELS[name], "kind": kind,
                                       "host": host,
                                       "u_specified_w_m2k": SPECIFIED.get(name),
                                       "material": material, "heat_flow": flow,
                                       "height_m": height, "tilt_deg": tilt,
                                       "area_m2": MEASURED_AREA_M2.get(name),
                                       "heat_capacity_kj_m2k": HEAT_CAPACITY.get(name)})
    for v in views:
        air, _ = air_and_rh(v)
        folder = "series/frames" if v.shape == SERIES_SHAPE else "thermograms"
        name = f"{v.id}-12" if v.shape == SERIES_SHAPE else v.id
        _table(lines, "[[thermograms]]", {
            "id": v.id, "file": f"{folder}/{name}.tif", "outlines": f"outlines/{v.id}.geojson",
            "side": v.side, "reflected_c": v.reflected_c,
            # interior: crumpled-foil reflector read three times (±0.5 K); exterior: the sky
            "reflected_uncertainty_k": 0.5 if v.side == "interior" else 2.0,
            "emissivity": 0.93, "emissivity_uncertainty": 0.02, "distance_m": v.distance_m,
            "atmosphere_c": air, "view_angle_deg": float(round(v.view_angle_deg)),
            "hours_since_sun": v.hours_since_sun})
        _table(lines, "[thermograms.export]", {"emissivity": v.export[0], "reflected_c": v.export[1]})
        inv = np.linalg.inv(v.homography)
        corners = [_apply(inv, x, y)[:2] for x, y in v.ref_corners]
        _table(lines, "[thermograms.reference_points]", {
            "pixel_xy": [[_r(px, 2), _r(py, 2)] for px, py in corners],
            "metre_xy": [[float(x), float(y)] for x, y in v.ref_corners]})
        for p in probes.get(v.id, []):
            _table(lines, "[[thermograms.probes]]", p)
        for t in tapes.get(v.id, []):
            _table(lines, "[[thermograms.tapes]]", t)
    _table(lines, "[[pressure_pairs]]", {"baseline": "dining-west", "depressurised": "dining-west-50pa",
                                         "pressure_difference_pa": 50.0})
    for j in JUNCTIONS:
        _table(lines, "[[junctions]]", j)
    _table(lines, "[[series]]", {"id": "study-night", "thermogram": "study-south",
                                 "element": "study-south-wall", "air_log": "series/study-log.csv"})
    for m in MEASURES:
        _table(lines, "[[measures]]", m)
    return "\n".join(lines) + "\n"


# --------------------------------------------------------------------------- series
SERIES_START_H, SERIES_STEP_H, SERIES_FRAMES, LOG_STEP_H = 7.0, 0.5, 24, 1.0 / 6.0
WALL_LAG_H = 6.0
"""Time constant [h] of the first-order lag of the study wall behind the outdoor air."""


def indoor_air_c(hours):
    """Indoor air with a small thermostat cycle [°C]."""
    return T_AI_C + 0.12 * np.sin(2 * np.pi * (np.asarray(hours, dtype=float) - 7.0) / 1.5)


def lagged_outdoor_c(hours):
    """Outdoor temperature as felt through the wall: first-order lag (tau WALL_LAG_H) of the air.

    Exact step of dT/dt = (T_air - T)/tau on a one-minute grid from noon, steady at noon.
    """
    grid = np.arange(0.0, 24.0 + 1e-9, 1.0 / 60.0)
    air = outdoor_air_c(grid)
    lag = np.empty_like(grid)
    lag[0] = air[0]
    a = math.exp(-(1.0 / 60.0) / WALL_LAG_H)
    for k in range(1, grid.size):
        lag[k] = a * lag[k - 1] + (1 - a) * 0.5 * (air[k] + air[k - 1])
    return np.interp(hours, grid, lag)


def clock(hours):
    """ISO time for hours after noon on 2026-01-14."""
    minutes = int(round(hours * 60))
    day, rest = divmod(12 * 60 + minutes, 24 * 60)
    return f"2026-01-{14 + day:02d}T{rest // 60:02d}:{rest % 60:02d}"


def write_series(out: Path, view: View):
    """Frames and air log of the night-long series; returns its truth entry."""
    times = SERIES_START_H + SERIES_STEP_H * np.arange(SERIES_FRAMES)
    q, dt = [], []
    for k, t in enumerate(times):
        t_ai, t_lag = float(indoor_air_c(t)), float(lagged_outdoor_c(t))
        obj, eps, refl = render_object(view, t_ai, t_lag)
        write_tiff(out / "series" / "frames" / f"{view.id}-{k:02d}.tif",
                   render_reading(view, obj, eps, refl, np.random.default_rng([SEED, 1000 + k])))
        q.append(U_CAVITY * (t_ai - t_lag))
        dt.append(t_ai - float(outdoor_air_c(t)))
    rows = ["time,indoor_air_c,outdoor_air_c,frame,reflected_c"]
    n_log = int(round((times[-1] - times[0]) / LOG_STEP_H)) + 1
    for i in range(n_log):
        t = SERIES_START_H + i * LOG_STEP_H
        k = (t - SERIES_START_H) / SERIES_STEP_H
        frame = f"frames/{view.id}-{int(round(k)):02d}.tif" if abs(k - round(k)) < 1e-9 else ""
        rows.append(f"{clock(t)},{float(indoor_air_c(t)):.2f},{float(outdoor_air_c(t)):.2f},"
                    f"{frame},{view.reflected_c:.1f}")
    (out / "series" / "study-log.csv").write_text("\n".join(rows) + "\n", encoding="utf-8")
    k_survey = int(round((SURVEY_HOUR - SERIES_START_H) / SERIES_STEP_H))
    return {
        "id": "study-night", "thermogram": view.id, "element": "study-south-wall",
        "u_true_w_m2k": U_CAVITY, "frames": SERIES_FRAMES, "interval_h": SERIES_STEP_H,
        "start": clock(times[0]), "end": clock(times[-1]), "wall_lag_time_constant_h": WALL_LAG_H,
        "average_method_u_w_m2k": _r(sum(q) / sum(dt)),
        "survey_frame": f"series/frames/{view.id}-{k_survey:02d}.tif",
        "survey_frame_steady_u_w_m2k": _r(q[k_survey] / dt[k_survey]),
        "note": "the wall's heat flow is U (T_ai - T_lag) with T_lag the outdoor air lagged by a"
                " first-order response; the average method over this short night converges to"
                " average_method_u_w_m2k, not to the true U (ISO 9869-1 asks for at least 72 h)",
    }


# --------------------------------------------------------------------------- main
def main(out_dir=None) -> Path:
    """Write the whole survey folder into `out_dir` (default: this script's folder)."""
    out = Path(out_dir) if out_dir is not None else Path(__file__).resolve().parent
    views, el_truth, def_truth = build_views()
    probes, probe_truth, tapes, therm_truth, reflection = {}, {}, {}, {}, None
    for k, v in enumerate(views):
        write_json(out / "outlines" / f"{v.id}.geojson", outline_collection(v))
        air, rh = air_and_rh(v)
        therm_truth[v.id] = {
            "side": v.side, "shape_px": list(v.shape), "note": v.note,
            "reflected_c": v.reflected_c, "distance_m": v.distance_m,
            "view_angle_deg": _r(v.view_angle_deg, 2), "yaw_deg": v.yaw_deg, "pitch_deg": v.pitch_deg,
            "transmittance": _r(atmosphere.atmospheric_transmittance(v.distance_m, air, rh, BAND_UM), 6),
            "export_emissivity": v.export[0], "export_reflected_c": v.export[1],
            "pixel_to_metre_homography": [[_r(x, 9) for x in row] for row in v.homography],
            "camera_shift_px": list(v.shift_px),
        }
        if v.shape == SERIES_SHAPE:  # frames written by write_series; this one at 01:00
            obj, _, _ = render_object(v, float(indoor_air_c(SURVEY_HOUR)),
                                      float(lagged_outdoor_c(SURVEY_HOUR)))
        else:
            obj, eps, refl = render_object(v)
            write_tiff(out / "thermograms" / f"{v.id}.tif",
                       render_reading(v, obj, eps, refl, np.random.default_rng([SEED, k])))
        if v.probe_m is not None:
            xy, (r, c) = _pixel_of(v, *v.probe_m)
            probes[v.id] = [{"pixel_xy": xy, "surface_c": round(float(obj[r, c]), 2),
                             "uncertainty_k": 0.2}]
            probe_truth[v.id] = {"pixel_xy": xy, "surface_true_c": _r(obj[r, c], 3)}
        if v.id == "kitchen-south":
            t_xy, _ = _pixel_of(v, 2.025, 1.325)
            s_xy, _ = _pixel_of(v, 2.15, 1.325)
            tapes[v.id] = [{"pixel_xy": t_xy, "emissivity": 0.95, "surface_pixel_xy": s_xy}]
            splash = rect(2.6, 0.95, 3.5, 1.55)
            cen, bb = _px_box(to_pixels(v, splash))
            _, (r, c) = _pixel_of(v, 3.05, 1.25)
            reflection = {
                "thermogram": v.id, "element": "kitchen-south-wall", "centroid_px": cen,
                "bbox_px": bb, "area_m2": _r(splash.area), "emissivity_true": 0.25,
                "local_reflected_c": 50.0, "surface_c": _r(obj[r, c], 2),
                "apparent_c": _r(radiometry.apparent_temperature(obj[r, c], 0.25, 50.0), 2),
                "note": "polished steel splashback mirroring a 50 °C radiator: warm in the image,"
                        " not a defect; the survey declares the room's reflected temperature"}
    series = write_series(out, views[-1])
    elements = {n: element_truth(n, s, SPECIFIED) for n, s in el_truth.items()}
    elements["dining-west-wall"]["thermograms"] = ["dining-west", "dining-west-50pa"]
    elements["dining-window"]["thermograms"] = ["dining-west", "dining-west-50pa"]
    truth = {
        "generator": "example_house/generate.py", "seed": SEED,
        "camera": {"offset_k": OFFSET_K, "noise_k": NOISE_K, "band_um": list(BAND_UM),
                   "note": "offset added to the apparent temperature of every frame"},
        "conditions": {"indoor_air_c": T_AI_C, "outdoor_air_c": T_AE_C, "delta_t_k": _r(DT_K),
                       "sky_c": _r(T_SKY_C, 3), "ground_c": T_GROUND_C, "f_sky": F_SKY,
                       "exterior_reflected_c": T_REFL_E_C, "h_ce_w_m2k": H_CE,
                       "interior_convection": f"{INTERIOR_MODEL} at each surface's own "
                                              "surface–air difference",
                       "heating_degree_days_base_c": HDD_BASE_C},
        "elements": elements, "defects": defects_truth(def_truth), "reflection": reflection,
        "thermograms": therm_truth, "series": series,
        "probes": probe_truth, "tapes": tapes,
    }
    history = ([round(float(outdoor_air_c(h)), 1) for h in np.arange(7.0, SURVEY_HOUR + 0.5)],
               [round(float(indoor_air_c(h)), 1) for h in np.arange(7.0, SURVEY_HOUR + 0.5)])
    (out / "survey.toml").write_text(survey_toml(views, probes, tapes, history), encoding="utf-8")
    write_json(out / "truth.json", truth)
    return out


if __name__ == "__main__":
    parser = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    parser.add_argument("--out", default=None, help="output folder (default: example_house/)")
    args = parser.parse_args()
    print(main(args.out))
    sys.exit(0)
