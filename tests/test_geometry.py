"""Tests for envelope.geometry and envelope.outlines.

Outside references used here: Heckbert's closed-form square-to-quadrilateral projective map
(Heckbert 1989, "Fundamentals of Texture Mapping and Image Warping", MSc thesis, UC
Berkeley, Sec. 2.2.3 — from memory, its corners are checked below before use), a pinhole
camera written out in the test (Hartley & Zisserman 2004, Eq. 6.8: x = K [R | t] X, with a
plane Z = 0 giving H = K [r1 r2 t], Sec. 8.1.1), hand shoelace arithmetic, hand rectangle
arithmetic, central finite differences for the Jacobian, and shapely's own area.
"""

from __future__ import annotations

import json

import numpy as np
import pytest
import shapely
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st
from numpy.testing import assert_allclose
from shapely.geometry import Polygon, box

from envelope.errors import GeometryError
from envelope.geometry import (
    Outline,
    element_regions,
    fit_homography,
    parse_outlines,
    pixel_area_map,
    rasterise,
    read_outlines,
    rectify,
    scale_homography,
)

SHAPE = (120, 160)  # (H, W) px: small frames keep the tests fast


def heckbert_square_to_quad(q):
    """Projective map of the unit square onto quad q (corners (0,0),(1,0),(1,1),(0,1))
    after Heckbert (1989) Sec. 2.2.3, in column-vector form [[a,b,c],[d,e,f],[g,h,1]]."""
    (x0, y0), (x1, y1), (x2, y2), (x3, y3) = q
    sx, sy = x0 - x1 + x2 - x3, y0 - y1 + y2 - y3
    dx1, dx2, dy1, dy2 = x1 - x2, x3 - x2, y1 - y2, y3 - y2
    den = dx1 * dy2 - dx2 * dy1
    g = (sx * dy2 - dx2 * sy) / den
    h = (dx1 * sy - sx * dy1) / den
    return np.array([[x1 - x0 + g * x1, x3 - x0 + h * x3, x0],
                     [y1 - y0 + g * y1, y3 - y0 + h * y3, y0],
                     [g, h, 1.0]])


def pinhole_homography(f_px=300.0, yaw_deg=35.0, pitch_deg=8.0, dist_m=9.0, c=(80.0, 60.0)):
    """Façade metres (X right, Y up, Z=0) → pixels, H = K [r1 r2 t] (H&Z 2004 Sec. 8.1.1)."""
    yaw, pitch = np.radians(yaw_deg), np.radians(pitch_deg)
    ry = np.array([[np.cos(yaw), 0, np.sin(yaw)], [0, 1, 0], [-np.sin(yaw), 0, np.cos(yaw)]])
    rx = np.array([[1, 0, 0], [0, np.cos(pitch), -np.sin(pitch)],
                   [0, np.sin(pitch), np.cos(pitch)]])
    flip = np.diag([1.0, -1.0, 1.0])  # façade Y up -> camera y down
    r = rx @ ry @ flip
    k = np.array([[f_px, 0, c[0]], [0, f_px, c[1]], [0, 0, 1.0]])
    centre = np.array([2.0, 1.25, 0.0])  # the camera looks at the wall's middle
    t = np.array([0.0, 0.0, dist_m]) - r @ centre
    return k @ np.column_stack([r[:, 0], r[:, 1], t])


def project(hm, xy):
    p = np.c_[xy, np.ones(len(xy))] @ hm.T
    return p[:, :2] / p[:, 2:]


def feature(element, coords, role="element", gtype="Polygon"):
    return {"type": "Feature", "properties": {"element": element, "role": role},
            "geometry": {"type": gtype, "coordinates": coords}}


def collection(*features):
    return {"type": "FeatureCollection", "features": list(features)}


def rect(x0, y0, x1, y1):
    return [[[x0, y0], [x1, y0], [x1, y1], [x0, y1], [x0, y0]]]


# -- homography ----------------------------------------------------------------------------
def test_four_points_reproduce_heckbert_matrix():
    quad = [(1.0, 0.5), (5.2, 0.9), (4.6, 3.7), (0.7, 3.1)]
    ref = heckbert_square_to_quad(quad)
    square = np.array([[0, 0], [1, 0], [1, 1], [0, 1]], dtype=float)
    # the formula (from memory) must send the corners to the quad before we trust it
    assert_allclose(project(ref, square), quad, atol=1e-12)
    h = fit_homography(square, quad)
    assert_allclose(h.matrix, ref / ref[2, 2], atol=1e-9)
    assert h.rms_error_m == 0.0 and h.n_points == 4 and h.method == "dlt"
    assert not h.fronto_parallel_assumed


def test_eight_noisy_points_report_small_rms():
    hm = np.linalg.inv(pinhole_homography())  # pixels -> metres
    hm /= hm[2, 2]
    metres = np.array([[0, 0], [4, 0], [4, 2.5], [0, 2.5], [2, 0], [2, 2.5], [1, 1], [3, 1.5]])
    pixels = project(np.linalg.inv(hm), metres)
    rng = np.random.default_rng(7)
    sigma_px = 0.3
    h = fit_homography(pixels + rng.normal(0, sigma_px, pixels.shape), metres)
    # metres per pixel at this distance, from the exact map's Jacobian (finite differences)
    mpp = np.sqrt(pixel_area_map(h, SHAPE)[60, 80])
    assert h.n_points == 8
    # least squares with 8 parameters on 16 coordinates: expected RMS about
    # sigma * sqrt((16 - 8) / 16) = 0.7 sigma (H&Z 2004 Sec. 5.1.3); allow 2 sigma
    assert 0.0 < h.rms_error_m < 2 * sigma_px * mpp
    assert_allclose(h.to_metres(pixels), metres, atol=0.05)  # 5 cm at 9 m: common practice


def test_round_trip_and_inverse():
    h = fit_homography([[10, 10], [150, 14], [140, 110], [12, 100]],
                       [[0, 0], [4, 0], [4, 2.5], [0, 2.5]])
    pts = np.array([[30.0, 40.0], [100.5, 77.25]])
    assert_allclose(h.to_pixels(h.to_metres(pts)), pts, atol=1e-9)
    assert_allclose(h.inverse @ h.matrix / (h.inverse @ h.matrix)[0, 0], np.eye(3), atol=1e-12)


def test_scale_homography_is_pure_scale_y_down():
    h = scale_homography((10, 20), (110, 20), 2.0, shape_px=SHAPE)
    assert h.fronto_parallel_assumed and h.method == "known-length"
    # 100 px = 2 m by construction: 0.02 m/px, Y grows downwards like y
    assert_allclose(h.to_metres([[60, 70]]), [[1.2, 1.4]], atol=1e-12)
    assert_allclose(pixel_area_map(h, SHAPE), 0.02**2, rtol=1e-12)


def test_area_map_matches_finite_differences():
    h = fit_homography(project(pinhole_homography(), [[0, 0], [4, 0], [4, 2.5], [0, 2.5]]),
                       [[0, 0], [4, 0], [4, 2.5], [0, 2.5]])
    amap = pixel_area_map(h, SHAPE)
    e = 1e-3
    for col, row in [(5, 5), (80, 60), (150, 110)]:
        x, y = col + 0.5, row + 0.5
        jx = (h.to_metres([[x + e, y]]) - h.to_metres([[x - e, y]]))[0] / (2 * e)
        jy = (h.to_metres([[x, y + e]]) - h.to_metres([[x, y - e]]))[0] / (2 * e)
        # central differences: error O(e^2) relative
        assert amap[row, col] == pytest.approx(abs(jx[0] * jy[1] - jx[1] * jy[0]), rel=1e-6)


# -- areas -------------------------------------------------------------------------------------
def test_oblique_rectangle_area_and_area_map():
    hm = pinhole_homography()
    wall_m = np.array([[0, 0], [4, 0], [4, 2.5], [0, 2.5]])  # 4 m x 2.5 m = 10 m2
    win_m = np.array([[1.4, 0.9], [2.6, 0.9], [2.6, 1.9], [1.4, 1.9]])  # 1.2 x 1.0 = 1.2 m2
    wall_px, win_px = project(hm, wall_m), project(hm, win_m)
    assert np.all((wall_px > 0) & (wall_px < SHAPE[::-1]))  # the wall is in the frame
    h = fit_homography(wall_px, wall_m)
    outlines = parse_outlines(collection(feature("w", [wall_px.tolist()]),
                                         feature("win", [win_px.tolist()])), SHAPE, ["w", "win"])
    regs = element_regions(outlines, {"w": ("wall", None), "win": ("window", None)}, SHAPE, h)
    # hand arithmetic: 10 - 1.2 = 8.8 m2 net, 10 m2 gross
    assert regs["w"].area_m2 == pytest.approx(8.8, rel=0.01)
    assert regs["w"].area_gross_m2 == pytest.approx(10.0, rel=0.01)
    assert regs["win"].area_m2 == pytest.approx(1.2, rel=0.01)
    assert regs["w"].openings == ("win",)
    # perimeter: 2(4 + 2.5) + 2(1.2 + 1.0) = 17.4 m
    assert regs["w"].perimeter_m == pytest.approx(17.4, rel=0.01)
    # area map summed over the mask: off by at most the edge pixels (half a pixel of
    # boundary length each side, at the largest pixel area in the element)
    amap = pixel_area_map(h, SHAPE)
    m = regs["w"]
    perim_px = m.polygon_net.length
    tol = 0.5 * perim_px * amap[m.mask].max()
    assert abs(m.pixel_area_m2 - 8.8) < tol


def test_shoelace_hand_example():
    # pentagon (1,1) (6,1) (7,4) (4,6) (0,4); shoelace terms x_i*y_(i+1) - x_(i+1)*y_i:
    # (1-6) + (24-7) + (42-16) + (16-0) + (0-4) = -5 + 17 + 26 + 16 - 4 = 50 -> area 25 px2
    pent = [[1, 1], [6, 1], [7, 4], [4, 6], [0, 4]]
    outl = parse_outlines(collection(feature("a", [pent])), SHAPE, ["a"])
    assert outl[0].polygon.area == 25.0
    h = scale_homography((0, 0), (10, 0), 1.0)  # 0.1 m/px -> 0.01 m2 per px2
    reg = element_regions(outl, {"a": ("wall", None)}, SHAPE, h)["a"]
    assert reg.area_m2 == pytest.approx(0.25, rel=1e-12)
    assert reg.area_m2 == pytest.approx(Polygon(np.array(pent) * 0.1).area, rel=1e-12)


def test_window_cut_from_wall_hand_arithmetic():
    # 0.05 m/px: wall 100x60 px = 5 m x 3 m = 15 m2; window 20x30 px = 1 m x 1.5 m = 1.5 m2
    h = scale_homography((0, 0), (20, 0), 1.0)
    obj = collection(feature("wall", rect(20, 20, 120, 80)),
                     feature("win", rect(50, 30, 70, 60)),
                     feature("wall", rect(90, 30, 110, 70), role="reference"))
    regs = element_regions(parse_outlines(obj, SHAPE, ["wall", "win"]),
                           {"wall": ("wall", None), "win": ("window", "wall")}, SHAPE, h)
    wall = regs["wall"]
    assert wall.area_m2 == pytest.approx(13.5, rel=1e-12)   # 15 - 1.5
    assert wall.area_gross_m2 == pytest.approx(15.0, rel=1e-12)
    assert wall.perimeter_m == pytest.approx(21.0, rel=1e-12)  # 2(5+3) + 2(1+1.5)
    assert wall.mask.sum() == 100 * 60 - 20 * 30                # integer edges: exact count
    assert not (wall.mask & regs["win"].mask).any()
    assert wall.reference_mask.sum() == 20 * 40
    assert wall.pixel_area_m2 == pytest.approx(13.5, rel=1e-9)


def test_rasterised_count_matches_area_within_perimeter():
    poly = Polygon([(10.3, 7.9), (140.2, 20.6), (120.7, 111.1), (60.4, 80.2), (5.5, 100.8)])
    mask = rasterise(poly, SHAPE)
    # each boundary pixel is misjudged by at most half a pixel of area per px of edge
    assert abs(mask.sum() - poly.area) <= 0.5 * poly.length
    # and the mask agrees with shapely point-by-point over the whole frame
    gx, gy = np.meshgrid(np.arange(SHAPE[1]) + 0.5, np.arange(SHAPE[0]) + 0.5)
    assert (mask == shapely.contains_xy(poly, gx, gy)).all()


def test_rasterise_large_polygon_matches_shapely():
    # big enough for the tiled path
    poly = Polygon([(3.2, 2.1), (600.0, 40.0), (620.5, 470.3), (10.0, 430.0)]).difference(
        box(200.2, 100.7, 300.9, 250.1))
    shape = (480, 640)
    gx, gy = np.meshgrid(np.arange(shape[1]) + 0.5, np.arange(shape[0]) + 0.5)
    assert (rasterise(poly, shape) == shapely.contains_xy(poly, gx, gy)).all()


# -- rectification -----------------------------------------------------------------------------
def test_rectify_identity_grid_and_nan():
    img = np.arange(SHAPE[0] * SHAPE[1], dtype=float).reshape(SHAPE)
    img[30, 40] = np.nan
    h = scale_homography((0, 0), (10, 0), 1.0)  # 10 cm per px
    r = rectify(img, h, cm_per_px=10.0)
    assert r.y_down and r.image.shape == SHAPE
    ok = np.isfinite(img)
    assert_allclose(r.image[ok], img[ok], atol=1e-9)  # grid centres = pixel centres
    assert np.isnan(r.image[30, 40]) and r.valid.sum() == ok.sum()
    assert r.extent_m == pytest.approx((0.0, 16.0, 0.0, 12.0))
    # half a cell off: each cell centre sits between four pixel centres, so the NaN pixel
    # spoils exactly the 2 x 2 cells whose bilinear stencil holds it
    r2 = rectify(img, h, cm_per_px=10.0, bounds_m=(0.05, 0.05, 15.05, 11.05))
    assert r2.image.shape == (110, 150)
    assert sorted(zip(*np.nonzero(~r2.valid), strict=True)) == [(29, 39), (29, 40), (30, 39),
                                                                 (30, 40)]
    ok2 = r2.valid
    want = 0.25 * (img[:-1, :-1] + img[1:, :-1] + img[:-1, 1:] + img[1:, 1:])[:110, :150]
    assert_allclose(r2.image[ok2], want[ok2], atol=1e-9)  # bilinear = mean of the four


def test_rectify_oblique_linear_field():
    hm = pinhole_homography()
    wall_m = np.array([[0, 0], [4, 0], [4, 2.5], [0, 2.5]])
    h = fit_homography(project(hm, wall_m), wall_m)
    gx, gy = np.meshgrid(np.arange(SHAPE[1]) + 0.5, np.arange(SHAPE[0]) + 0.5)
    xy_m = h.to_metres(np.stack([gx, gy], axis=-1))
    img = 2.0 * xy_m[..., 0] + xy_m[..., 1]  # linear in façade metres
    r = rectify(img, h, cm_per_px=5.0, bounds_m=(0.5, 0.5, 3.5, 2.0))
    assert not r.y_down  # Y up: row 0 at the top of the wall
    xs = 0.5 + (np.arange(r.image.shape[1]) + 0.5) * 0.05
    ys = 2.0 - (np.arange(r.image.shape[0]) + 0.5) * 0.05
    want = 2.0 * xs[None, :] + ys[:, None]
    # bilinear sampling of a field that is only nearly linear in pixels: error well under
    # one pixel's change (~0.03 m of X here)
    assert np.nanmax(np.abs(r.image - want)) < 0.02
    assert r.valid.all()


# -- bad input ---------------------------------------------------------------------------------
def _raises(match_field, fn, *args):
    with pytest.raises(GeometryError) as info:
        fn(*args)
    assert info.value.field is not None and match_field in info.value.field, info.value
    return info.value


def test_bad_reference_points():
    m4 = [[0, 0], [1, 0], [1, 1], [0, 1]]
    _raises("reference_points", fit_homography, [[0, 0], [10, 0], [20, 0], [5, 9]], m4)
    _raises("reference_points", fit_homography, [[0, 0], [10, 0], [10, 10]], m4[:3])
    _raises("reference_points", fit_homography, [[0, 0], [0, 0], [10, 10], [0, 10]], m4)
    _raises("reference_points", fit_homography, [[0, 0], [10, 0], [np.nan, 10], [0, 10]], m4)
    _raises("reference_points", fit_homography, [[i, 2 * i] for i in range(6)],
            [[i, i % 2] for i in range(6)])
    _raises("known_length", scale_homography, (0, 0), (0, 0), 1.0)


BAD_OUTLINES = [
    # (case, GeoJSON, element names, field that must be named)
    ("bowtie", collection(feature("w", [[[0, 0], [50, 50], [50, 0], [0, 50], [0, 0]]])),
     "features[0].geometry.coordinates"),
    ("outside frame", collection(feature("w", rect(-10, 0, 50, 50))),
     "features[0].geometry.coordinates"),
    ("unknown element", collection(feature("nope", rect(0, 0, 50, 50))),
     "features[0].properties.element"),
    ("duplicate names", collection(feature("w", rect(0, 0, 50, 50)),
                                   feature("w", rect(60, 0, 90, 50))), "features[1]"),
    ("empty coordinates", collection(feature("w", [])), "features[0].geometry.coordinates"),
    ("non-numeric vertex", collection(feature("w", [[[0, 0], ["a", 1], [5, 5]]])),
     "features[0].geometry.coordinates[0][1]"),
    ("two distinct vertices", collection(feature("w", [[[0, 0], [5, 5], [0, 0]]])),
     "features[0].geometry.coordinates[0]"),
    ("zero area", collection(feature("w", [[[0, 0], [5, 5], [10, 10]]])),
     "features[0].geometry.coordinates"),
    ("unknown role", collection(feature("w", rect(0, 0, 5, 5), role="hole")),
     "features[0].properties.role"),
    ("missing properties", collection({"type": "Feature", "geometry": None}),
     "features[0].properties"),
    ("infinite vertex", collection(feature("w", [[[0, 0], [1e400, 1], [5, 5]]])),
     "features[0].geometry.coordinates[0][1]"),
    ("not a collection", {"type": "Feature"}, "type"),
    ("outline in metres", collection(feature("w", rect(0, 0, 4.2, 2.4))),
     "features[0].geometry.coordinates"),
    ("reference zone of one pixel", collection(feature("w", rect(0, 0, 50, 50)),
                                               feature("w", rect(10, 10, 11, 11), role="reference")),
     "features[1].geometry.coordinates"),
    ("vertex far outside", collection(feature("w", [[[0, 0], [1e300, 1], [5, 5]]])),
     "features[0].geometry.coordinates[0][1]"),
]


@pytest.mark.parametrize("case,obj,field", BAD_OUTLINES, ids=[c[0] for c in BAD_OUTLINES])
def test_bad_outlines_name_the_feature(case, obj, field):
    err = _raises(field, parse_outlines, obj, SHAPE, ["w", "win"], "house.geojson")
    assert err.file == "house.geojson"
    if field.startswith("features[0].geometry"):
        assert "'w'" in str(err)  # the element is named


def test_outline_in_fractions_of_the_image_says_pixels():
    obj = collection(feature("w", rect(0.1, 0.1, 0.9, 0.9)))
    err = _raises("features[0].geometry.coordinates", parse_outlines, obj, SHAPE, ["w"])
    assert "covers 0.64 px², less than 16; outlines are in the thermogram's pixel coordinates" in str(err)


def test_outline_names_differing_in_case_or_spaces_suggest_the_element():
    for wrong in ("W-North", "w-north "):
        obj = collection(feature(wrong, rect(0, 0, 50, 50)))
        err = _raises("features[0].properties.element", parse_outlines, obj, SHAPE, ["w-north"])
        assert "(did you mean 'w-north'?)" in str(err)


def test_outline_file_with_bom_reads_and_an_empty_one_is_named(tmp_path):
    obj = collection(feature("w", rect(0, 0, 50, 50)))
    (tmp_path / "bom.geojson").write_bytes(b"\xef\xbb\xbf" + json.dumps(obj).encode())
    assert [o.element for o in read_outlines(tmp_path / "bom.geojson", SHAPE, ["w"])] == ["w"]
    (tmp_path / "empty.geojson").write_text("\n")
    with pytest.raises(GeometryError, match="the outline file is empty"):
        read_outlines(tmp_path / "empty.geojson", SHAPE, ["w"])


def test_window_not_inside_any_wall():
    obj = collection(feature("w", rect(0, 0, 50, 50)), feature("win", rect(60, 60, 80, 80)))
    outl = parse_outlines(obj, SHAPE, ["w", "win"])
    h = scale_homography((0, 0), (10, 0), 1.0)
    with pytest.raises(GeometryError, match="window 'win' is not inside any wall") as info:
        element_regions(outl, {"w": ("wall", None), "win": ("window", None)}, SHAPE, h)
    assert info.value.field == "features[1]"


def test_reference_outside_element():
    obj = collection(feature("w", rect(0, 0, 50, 50)),
                     feature("w", rect(40, 40, 70, 70), role="reference"))
    h = scale_homography((0, 0), (10, 0), 1.0)
    with pytest.raises(GeometryError, match="reference zone") as info:
        element_regions(parse_outlines(obj, SHAPE, ["w"]), {"w": ("wall", None)}, SHAPE, h)
    assert info.value.field == "features[1]"


def test_read_outlines_file_and_multipolygon(tmp_path):
    obj = collection(feature("w", [rect(0, 0, 40, 40), rect(60, 0, 100, 40)],
                             gtype="MultiPolygon"),
                     feature("win", rect(100, 50, 160.8, 90)))
    path = tmp_path / "o.geojson"
    path.write_text(json.dumps(obj))
    outl = read_outlines(path, SHAPE, ["w", "win"])
    assert [(o.element, o.index) for o in outl] == [("w", 0), ("win", 1)]
    # the second feature pokes 0.8 px beyond the 160 px frame: within tolerance, clipped
    assert outl[1].polygon.bounds[2] == 160.0
    assert outl[0].polygon.area == 3200.0  # two 40x40 squares
    (tmp_path / "bad.geojson").write_text("{not json")
    with pytest.raises(GeometryError, match="not valid JSON"):
        read_outlines(tmp_path / "bad.geojson", SHAPE, ["w"])


json_leaf = st.one_of(st.none(), st.booleans(), st.integers(-500, 500),
                      st.floats(allow_nan=True, allow_infinity=True), st.text(max_size=4))
json_val = st.recursive(json_leaf, lambda c: st.lists(c, max_size=5)
                        | st.dictionaries(st.text(max_size=4), c, max_size=4), max_leaves=20)
ring = st.lists(st.lists(st.floats(-20, 200, allow_nan=False), min_size=2, max_size=3),
                min_size=0, max_size=7)
geometry = st.fixed_dictionaries({
    "type": st.sampled_from(["Polygon", "MultiPolygon", "Point", 3]),
    "coordinates": st.one_of(st.lists(ring, max_size=2), st.lists(st.lists(ring, max_size=2),
                                                                  max_size=2), json_val)})
feat = st.fixed_dictionaries({
    "type": st.sampled_from(["Feature", "Feature", "X"]),
    "properties": st.one_of(st.fixed_dictionaries({
        "element": st.sampled_from(["w", "win", "", 4]),
        "role": st.sampled_from(["element", "reference", "x"])}), json_val),
    "geometry": st.one_of(geometry, json_val)})
docs = st.one_of(st.fixed_dictionaries({"type": st.just("FeatureCollection"),
                                        "features": st.lists(feat, max_size=3)}), json_val)


@settings(max_examples=80, deadline=None, suppress_health_check=[HealthCheck.too_slow])
@given(docs)
def test_parse_outlines_only_raises_geometry_error(doc):
    try:
        out = parse_outlines(doc, SHAPE, ["w", "win"])
    except GeometryError:
        return
    for o in out:
        assert isinstance(o, Outline) and o.polygon.is_valid and o.polygon.area > 0
