"""Tests for envelope.editor (logic, and the matplotlib glue on Agg) and the overlay figure.

Outside references: RFC 7946 (Sec. 3.1.6: a polygon ring is closed, first position repeated;
Sec. 3.3: a FeatureCollection holds a list of Features), the PNG signature (ISO/IEC 15948,
Sec. 5.2: the eight bytes 89 50 4E 47 0D 0A 1A 0A), and hand arithmetic on rectangles.
"""

from __future__ import annotations

import json

import matplotlib

matplotlib.use("Agg")
import matplotlib.pyplot as plt  # noqa: E402
import numpy as np  # noqa: E402
import pytest  # noqa: E402
from matplotlib.backend_bases import KeyEvent, MouseButton, MouseEvent  # noqa: E402

from envelope.editor import OutlineEditor, build_editor_figure  # noqa: E402
from envelope.geometry import (  # noqa: E402
    element_regions,
    parse_outlines,
    read_outlines,
    scale_homography,
)
from envelope.plots.thermogram import thermogram_figure  # noqa: E402

SHAPE = (60, 80)
PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"  # ISO/IEC 15948 Sec. 5.2


def image():
    return 15.0 + np.linspace(0, 3, SHAPE[0] * SHAPE[1]).reshape(SHAPE)


# -- logic ---------------------------------------------------------------------------------
def test_draw_close_and_geojson_structure():
    ed = OutlineEditor(shape_px=SHAPE)
    for x, y in [(10, 10), (50, 11), (51, 40), (9, 41)]:
        ed.click(x, y, 1)
    assert ed.key("enter") == "close"
    assert ed.set_name("wall_a")
    # snapping: 11 is within 4 px of 10 -> horizontal edge; 51 of 50 -> vertical edge
    assert ed.polygons[0]["vertices"] == [[10, 10], [50, 10], [50, 40], [10, 40]]
    gj = ed.to_geojson()
    ring = gj["features"][0]["geometry"]["coordinates"][0]
    assert gj["type"] == "FeatureCollection" and ring[0] == ring[-1]  # RFC 7946 3.1.6
    out = parse_outlines(gj, SHAPE, ["wall_a"])
    assert out[0].polygon.area == 40 * 30  # hand arithmetic: 40 px x 30 px


def test_snap_to_vertex_toggle_undo_and_delete():
    ed = OutlineEditor(shape_px=SHAPE)
    for x, y in [(10, 10), (30, 10), (30, 30)]:
        ed.click(x, y, 1)
    ed.key("c")
    ed.key("n")
    ed.click(31.5, 32.0, 1)  # near (30, 30) of outline 0, no outline open -> picks it
    assert ed.selected == (0, 2)
    ed.release()
    ed.key("n")
    ed.click(60, 30, 1)
    ed.click(32, 28, 1)  # while drawing: snaps onto outline 0's vertex (30, 30)
    assert ed.polygons[1]["vertices"][-1] == [30, 30]
    ed.key("x")
    ed.click(45.3, 52.7, 1)  # snapping off: taken as clicked
    assert ed.polygons[1]["vertices"][-1] == [45.3, 52.7]
    assert ed.key("u") == "undo"
    assert len(ed.polygons[1]["vertices"]) == 2
    assert ed.click(60.5, 30.5, 3) == "delete-vertex"  # right click deletes nearest
    assert ed.polygons[1]["vertices"] == [[30, 30]]
    ed.click(200, -5, 1)  # clamped to the frame
    assert ed.polygons[1]["vertices"][-1] == [80, 0]


def test_drag_moves_vertex_and_role_toggle():
    ed = OutlineEditor(shape_px=SHAPE)
    for x, y in [(10, 10), (40, 10), (40, 40)]:
        ed.click(x, y, 1)
    ed.close_polygon()
    ed.click(40, 40, 1)
    ed.drag(45.0, 50.0)
    ed.release()
    assert ed.polygons[0]["vertices"][2] == [45.0, 50.0]
    assert ed.key("r") == "role" and ed.polygons[0]["role"] == "reference"
    ed.undo()
    assert ed.polygons[0]["role"] == "element"


def test_save_never_overwrites(tmp_path):
    ed = OutlineEditor()
    path = tmp_path / "o.geojson"
    ed.save(path)
    with pytest.raises(FileExistsError):
        ed.save(path)
    ed.save(path, overwrite=True)
    assert json.loads(path.read_text()) == {"features": [], "type": "FeatureCollection"}


# -- GUI glue on Agg --------------------------------------------------------------------------
def _mouse(fig, ax, name, x, y, button=MouseButton.LEFT):
    dx, dy = ax.transData.transform((x, y))
    ev = MouseEvent(name, fig.canvas, dx, dy, button=button)
    fig.canvas.callbacks.process(name, ev)


def _key(fig, key):
    fig.canvas.callbacks.process("key_press_event", KeyEvent("key_press_event", fig.canvas,
                                                             key))


def _type_name(fig, name):
    _key(fig, "e")
    for ch in name:
        _key(fig, ch)
    _key(fig, "enter")


def test_gui_draws_names_saves_and_reloads(tmp_path):
    path = tmp_path / "outlines.geojson"
    fig, ed, handlers = build_editor_figure(image(), path, element_names=("wall_a", "win_a"))
    fig.canvas.draw()
    ax = handlers["axes"]
    for x, y in [(5, 5), (70, 5), (70, 55), (5, 55)]:
        _mouse(fig, ax, "button_press_event", x, y)
        _mouse(fig, ax, "button_release_event", x, y)
    _key(fig, "enter")
    _type_name(fig, "wall_a")
    _key(fig, "n")
    for x, y in [(20, 20), (40, 20), (40, 40), (20, 40)]:
        _mouse(fig, ax, "button_press_event", x, y)
        _mouse(fig, ax, "button_release_event", x, y)
    # drag the last vertex a little with the mouse
    _mouse(fig, ax, "button_press_event", 20, 40)
    _mouse(fig, ax, "motion_notify_event", 20, 45)
    _mouse(fig, ax, "button_release_event", 20, 45)
    _key(fig, "c")
    _type_name(fig, "win_a")
    assert [p["element"] for p in ed.polygons] == ["wall_a", "win_a"]
    assert all(p["closed"] for p in ed.polygons)
    _key(fig, "s")
    saved = json.loads(path.read_text())
    plt.close(fig)

    outl = read_outlines(path, SHAPE, ["wall_a", "win_a"])
    regs = element_regions(outl, {"wall_a": ("wall", None), "win_a": ("window", None)}, SHAPE,
                           scale_homography((0, 0), (10, 0), 1.0))
    # data-coordinate round trip through the display transform is good to ~1e-6 px,
    # stored to 0.01 px. wall 65x50 px, window 20 wide, 20..45 on the left, 20..40 on the
    # right: trapezoid 20 * (25 + 20) / 2 = 450 px2; at 0.1 m/px: 32.5 - 4.5 = 28.0 m2
    assert regs["wall_a"].area_m2 == pytest.approx(28.0, abs=1e-3)

    fig2, ed2, _ = build_editor_figure(image(), path)  # existing file is loaded
    assert ed2.to_geojson() == saved
    _key(fig2, "s")  # exists: first s only asks
    assert "press s again" in ed2.message
    _key(fig2, "s")
    assert json.loads(path.read_text()) == saved
    plt.close(fig2)


# -- overlay figure ----------------------------------------------------------------------------
def test_overlay_writes_png(tmp_path):
    gj = {"type": "FeatureCollection", "features": [
        {"type": "Feature", "properties": {"element": "w", "role": "element"},
         "geometry": {"type": "Polygon", "coordinates": [[[2, 2], [78, 2], [78, 58], [2, 58]]]}},
        {"type": "Feature", "properties": {"element": "d", "role": "element"},
         "geometry": {"type": "Polygon", "coordinates": [[[30, 20], [45, 20], [45, 58],
                                                          [30, 58]]]}},
        {"type": "Feature", "properties": {"element": "w", "role": "reference"},
         "geometry": {"type": "Polygon", "coordinates": [[[5, 5], [20, 5], [20, 20],
                                                          [5, 20]]]}}]}
    outl = parse_outlines(gj, SHAPE, ["w", "d"])
    regs = element_regions(outl, {"w": ("wall", None), "d": ("door", None)}, SHAPE,
                           scale_homography((0, 0), (10, 0), 1.0))
    p1 = thermogram_figure(image(), regs, [], tmp_path / "a.png", title="t")
    assert p1.read_bytes()[:8] == PNG_SIGNATURE


# -- issue 13: an editor that works the first time -----------------------------------------
def _survey_for_editor(tmp_path):
    from conftest import SURVEY_TOML, write_survey

    toml = SURVEY_TOML.replace(
        "[thermograms.known_length]\npixel_a = [0, 119.5]\npixel_b = [160, 119.5]\nlength_m = 4.0\n", "")
    root = write_survey(tmp_path / "s", toml)
    (root / "outlines" / "room-north.geojson").unlink()
    return root


def test_default_key_map_is_off_in_the_editor_window(tmp_path):
    from matplotlib.backend_bases import key_press_handler

    fig, _ed, _h = build_editor_figure(image(), tmp_path / "o.geojson")
    connected = [ref() for ref in fig.canvas.callbacks.callbacks.get("key_press_event", {}).values()]
    # matplotlib's default handler (s: save dialog, p: pan) must not be connected
    assert all(getattr(f, "__func__", f) is not key_press_handler for f in connected)
    assert fig.canvas.manager.key_press_handler_id is None
    plt.close(fig)


def test_editor_from_no_file_to_saved_outlines_and_scale(tmp_path):
    import tomllib

    from envelope.survey import load_survey

    root = _survey_for_editor(tmp_path)
    path = root / "outlines" / "room-north.geojson"
    toml_before = (root / "survey.toml").read_text()
    fig, ed, handlers = build_editor_figure(
        image(), path, element_names=("test-wall", "test-window"),
        view_elements=("test-wall", "test-window"), survey_file=root / "survey.toml",
        thermogram_id="room-north")
    assert not path.exists() and ed.polygons == []          # opens with no outlines file
    ax = handlers["axes"]
    for x, y in [(1, 1), (79, 1), (79, 59), (1, 59)]:
        _mouse(fig, ax, "button_press_event", x, y)
        _mouse(fig, ax, "button_release_event", x, y)
    _key(fig, "enter")
    _key(fig, "1")                                          # name from the view's list
    assert ed.polygons[0]["element"] == "test-wall"
    _type_name(fig, "kitchen-wall")                         # not a survey element: refused
    assert ed.polygons[0]["element"] == "test-wall" and "not an element" in ed.message
    assert handlers["textbox"].text == ""                   # the box is cleared
    _key(fig, "n")
    for x, y in [(50, 15), (70, 15), (70, 40)]:
        _mouse(fig, ax, "button_press_event", x, y)
        _mouse(fig, ax, "button_release_event", x, y)
    _key(fig, "u")                                          # undo the last vertex
    assert len(ed.polygons[1]["vertices"]) == 2
    for x, y in [(70, 40), (50, 40)]:
        _mouse(fig, ax, "button_press_event", x, y)
        _mouse(fig, ax, "button_release_event", x, y)
    _key(fig, "c")
    _key(fig, "2")
    # scale from a known length: 40 px along a row are 2.0 m
    _key(fig, "k")
    for x, y in [(20, 50), (60, 50)]:
        _mouse(fig, ax, "button_press_event", x, y)
        _mouse(fig, ax, "button_release_event", x, y)
    for ch in "2.0":
        _key(fig, ch)
    _key(fig, "enter")
    assert ed.scale[0] == "known_length" and ed.scale[1]["length_m"] == 2.0
    _key(fig, "s")
    plt.close(fig)
    saved = read_outlines(path, SHAPE, ["test-wall", "test-window"])
    assert sorted(o.element for o in saved) == ["test-wall", "test-window"]
    new_text = (root / "survey.toml").read_text()
    assert new_text.startswith(toml_before.rstrip("\n").split("[[measures]]")[0][:200])
    kl = tomllib.loads(new_text)["thermograms"][0]["known_length"]
    assert kl == {"pixel_a": [20.0, 50.0], "pixel_b": [60.0, 50.0], "length_m": 2.0}
    s = load_survey(root)                                   # the edited survey loads
    assert s.thermograms[0].known_length.length_m == 2.0
    # every line the surveyor typed is still there, in order
    old_lines = [ln for ln in toml_before.splitlines() if ln.strip()]
    it = iter(new_text.splitlines())
    assert all(any(ln == m for m in it) for ln in old_lines)
    fig2, ed2, _ = build_editor_figure(image(), path, element_names=("test-wall", "test-window"))
    assert [p["element"] for p in ed2.polygons] == ["test-wall", "test-window"]  # reload
    plt.close(fig2)


def test_reference_points_need_four_and_undo_scale(tmp_path):
    ed = OutlineEditor(shape_px=SHAPE)
    assert ed.key("g") == "scale-points"
    for i, (x, y) in enumerate([(0, 0), (80, 0), (80, 60), (0, 60)]):
        ed.click(x, y, 1)
        assert ed.wants_text()
        assert ed.scale_text(["0, 1.5", "2, 1.5", "2, 0", "0, 0"][i])
        if i == 2:
            assert ed.key("g") == ""  # three points are not enough
    assert ed.key("g") == "scale"
    assert ed.scale[0] == "reference_points" and len(ed.scale[1]["pixel_xy"]) == 4
    ed.undo()
    assert ed.scale is None and ed.mode == "points"
