"""Figures: colour limits from the elements' own pixels, print-size text, the figure plan,
the marking of what lies below the fRsi limits, and drawing without pyplot.

The views come from a real pipeline run of the small test survey (`small_run` in conftest),
plus small synthetic images where a property needs a planted case.
"""

from __future__ import annotations

import json
import subprocess
import sys

import matplotlib.text
import numpy as np
import pytest
import shapely

from envelope.geometry import ElementRegion
from envelope.plots import common, energy, series
from envelope.plots.common import (
    CLASS_COLOURS,
    DPI,
    MIN_FONT_PT,
    OKABE_ITO,
    clipped_share,
    element_limits,
    extend_of,
    scale_bar_length_m,
)
from envelope.plots.frsi import frsi_figure
from envelope.plots.plan import plan_figures
from envelope.plots.thermogram import crop_window, thermogram_figure, view_scales, warm_mask

PNG_SIGNATURE = b"\x89PNG\r\n\x1a\n"  # ISO/IEC 15948, 5.2
MAX_CLIPPED = 0.02  # issue 16: no element with more than 2 % of its pixels at a colour limit


@pytest.fixture
def captured(monkeypatch):
    """Figures passed to `save`, kept for inspection (the PNG is still written)."""
    figs = []
    real = common.save

    def keep(fig, path):
        figs.append(fig)
        return real(fig, path)

    for module in (common, energy, series):
        monkeypatch.setattr(module, "save", keep)
    return figs


def _region(name, kind, mask, poly=None, ref=None):
    h, w = mask.shape
    return ElementRegion(name, kind, poly if poly is not None else shapely.box(0, 0, w, h),
                         mask, None, 1.0, 1.0, 1.0, 1.0, (), ref)


def test_no_element_has_more_than_2_percent_of_its_pixels_at_a_colour_limit(small_run):
    a, _, _ = small_run
    checked = 0
    for v in a.views:
        if v.status != "assessed":
            continue
        defects = [d for d in a.defects if d.thermogram == v.thermogram.id]
        sc = view_scales(v.object_c, v.regions, warm_mask(defects, v.object_c.shape))
        for name, (mask, layer) in sc.element_masks.items():
            lim = sc.opaque if layer == "opaque" else sc.own
            share = clipped_share(v.object_c[mask], lim)
            assert share <= MAX_CLIPPED, (v.thermogram.id, name, share)
            checked += 1
    assert checked >= 2  # wall and window


def test_a_warm_patch_or_a_window_does_not_flatten_the_wall():
    # an invented wall at 18 °C with a 2 K colder patch, a window at 10 °C and a radiator
    # patch at 45 °C: the wall's colour range spans the wall and its patch only
    rng = np.random.default_rng(3)
    img = 18.0 + rng.normal(0, 0.05, (100, 150))
    img[60:80, 20:50] -= 2.0  # the defect to show
    img[20:50, 90:130] = 10.0  # window
    img[70:90, 100:140] = 45.0  # radiator (a warm spot)
    wall = np.ones(img.shape, bool)
    wall[20:50, 90:130] = False
    window = ~wall
    radiator = np.zeros(img.shape, bool)
    radiator[70:90, 100:140] = True
    regions = {"wall": _region("wall", "wall", wall), "window": _region("win", "window", window)}
    sc = view_scales(img, regions, radiator)
    lo, hi = sc.opaque
    assert lo <= 16.1 and 17.9 <= hi <= 18.5  # patch and wall inside, radiator outside
    assert clipped_share(img[sc.element_masks["wall"][0]], sc.opaque) <= MAX_CLIPPED
    assert sc.own[0] <= 10.0 and sc.own[1] >= 44.0  # window and radiator on the own scale
    # without the warm-spot mask the 2 % rule still holds: the range then takes the radiator
    sc2 = view_scales(img, regions)
    assert clipped_share(img[wall], sc2.opaque) <= MAX_CLIPPED


def test_element_limits_are_per_element_percentiles():
    img = np.concatenate([np.linspace(0, 1, 1000), np.linspace(10, 12, 1000)])[None, :]
    a = np.zeros(img.shape, bool)
    a[:, :1000] = True
    lo, hi = element_limits(img, [a, ~a])
    # numpy percentile (linear) of a uniform ramp: 0.5 % and 99.5 % points
    assert lo == pytest.approx(0.005, abs=1e-3) and hi == pytest.approx(11.99, abs=1e-2)
    assert element_limits(img, [np.zeros(img.shape, bool)]) is None
    assert extend_of([0.0, 5.0], (1.0, 4.0)) == "both"
    assert extend_of([2.0], (1.0, 4.0)) == "neither"


def test_plan_is_what_gets_drawn_and_recorded(small_run):
    a, results, out = small_run
    plan = plan_figures(a)
    recorded = {t["id"]: t["figures"] for t in results["thermograms"]}
    assert plan == recorded
    figs = plan["room-north"]
    # one picture per view (not three), the factor map of an interior view, close-ups
    assert set(figs) == {"thermogram", "frsi", "defect:D1", "element:test-wall"}
    for rel in figs.values():
        path = out / rel
        assert path.read_bytes()[:8] == PNG_SIGNATURE
        assert path.resolve().parent == (out / "figures").resolve()


def test_print_size_and_text_of_at_least_8_pt(small_run, tmp_path, captured):
    a, results, _ = small_run
    from envelope.plots.draw import draw_figures
    from envelope.report.figures import draw_charts

    draw_figures(a, tmp_path)
    draw_charts(results, tmp_path / "figures")
    assert len(captured) >= 6
    for fig in captured:
        for t in fig.findobj(matplotlib.text.Text):
            if t.get_visible() and t.get_text().strip():
                assert t.get_fontsize() >= MIN_FONT_PT, (t.get_text(), t.get_fontsize())
    # the thermogram picture is 90 mm wide at print size: 90 / 25.4 * DPI pixels (the Agg
    # canvas takes whole pixels, hence within one)
    from PIL import Image

    with Image.open(tmp_path / "figures" / "room-north-thermogram.png") as im:
        assert abs(im.width - 90 / 25.4 * DPI) < 1.0
        assert im.mode == "P"  # 256-colour palette (small files)


def test_user_text_never_reaches_mathtext(tmp_path, captured):
    img = np.full((40, 60), 18.0)
    mask = np.ones(img.shape, bool)
    regions = {"$x^2$ wall": _region("$x^2$ wall", "wall", mask)}
    thermogram_figure(img, regions, [], tmp_path / "a.png", title="view $\\alpha$")
    texts = [t for t in captured[0].findobj(matplotlib.text.Text) if "$" in t.get_text()]
    assert len(texts) >= 2 and all(t.get_parse_math() is False for t in texts)


def test_frsi_map_marks_and_measures_what_is_below_the_limits(tmp_path, captured):
    y, x = np.mgrid[0:40, 0:50]
    f = 0.85 - 0.4 * np.exp(-((x - 15) ** 2 + (y - 20) ** 2) / 40.0)
    share_m = float(np.mean(f < 0.75))
    share_c = float(np.mean(f < 0.55))
    frsi_figure(f, tmp_path / "f.png", limit=0.75, condensation=0.55, title="invented")
    texts = [t.get_text() for t in captured[0].findobj(matplotlib.text.Text)]
    assert any(t.startswith(f"below the mould limit 0.75: {100 * share_m:.1f} %") for t in texts)
    assert any(t.startswith(f"below the condensation limit 0.55: {100 * share_c:.1f} %")
               for t in texts)
    assert "mould" in texts and "condensation" in texts  # limits marked on the colour bar
    assert "temperature factor fRsi on the survey night [-]" in texts


def test_frsi_map_says_which_factor_it_shows(tmp_path, captured):
    # the limits are defined at the design convention (Rsi 0.25 opaque, 0.13 glazing: ISO
    # 13788 as used with BRE IP 1/06, from memory): a design-convention map says so
    f = np.full((20, 30), 0.8)
    frsi_figure(f, tmp_path / "d.png", limit=0.75, convention="design")
    texts = [t.get_text() for t in captured[0].findobj(matplotlib.text.Text)]
    assert "fRsi at design Rsi 0.25 m²K/W (glazing 0.13) [-]" in texts
    with pytest.raises(ValueError, match="convention"):
        frsi_figure(f, tmp_path / "e.png", convention="measured")


def test_drawn_frsi_figures_show_the_design_convention(small_run, tmp_path, captured):
    # the drawn map is the one the risk verdicts use when the view has it
    from envelope.plots.draw import draw_figures

    assessment, _, _ = small_run
    assert any(v.frsi_design is not None for v in assessment.views)
    draw_figures(assessment, tmp_path)
    texts = {t.get_text() for fig in captured for t in fig.findobj(matplotlib.text.Text)}
    assert "fRsi at design Rsi 0.25 m²K/W (glazing 0.13) [-]" in texts
    assert "temperature factor fRsi on the survey night [-]" not in texts


def test_palette_is_okabe_ito_and_scale_bars_round():
    assert set(CLASS_COLOURS.values()) - {"#FFFFFF"} <= set(OKABE_ITO.values())
    # a bar near a fifth of the width, on the 1-2-5 series (common practice for scale bars)
    assert [scale_bar_length_m(s) for s in (4.0, 2.4, 30.0, 0.3)] == [1.0, 0.5, 10.0, 0.1]


def test_crop_window_is_landscape_and_inside_the_image():
    r0, r1, c0, c1 = crop_window((100, 50, 120, 200), (480, 640), 0.01)
    assert 0 <= r0 < r1 <= 480 and 0 <= c0 < c1 <= 640
    assert (c1 - c0) >= (r1 - r0)  # at least square
    assert c0 <= 100 and c1 >= 120 and r0 <= 50 and r1 >= 200  # the target is inside


def test_plots_import_no_pyplot_and_switch_no_backend():
    code = ("import matplotlib, sys; b = matplotlib.get_backend(); "
            "import envelope.plots.draw, envelope.report; "
            "print(json.dumps(['matplotlib.pyplot' in sys.modules, matplotlib.get_backend() == b]))")
    out = subprocess.run([sys.executable, "-c", "import json; " + code], capture_output=True,
                         text=True, check=True)
    assert json.loads(out.stdout) == [False, True]


def test_u_map_hatches_and_says_an_element_whose_u_is_not_valid(tmp_path, captured):
    from envelope.plots.umap import u_map_figure

    mask = np.zeros((30, 40), bool)
    mask[5:25, 5:35] = True
    u = np.where(mask, 0.2, np.nan)  # an exterior view under night-sky cooling (issue 16)
    note = "not a valid result: the exterior surface is colder than the outdoor air (night-sky)"
    u_map_figure(u, {"east wall": _region("east wall", "wall", mask)}, tmp_path / "u.png",
                 not_valid={"east wall": note})
    texts = [t.get_text() for t in captured[0].findobj(matplotlib.text.Text)]
    assert "hatched: U NOT VALID (night-sky cooling)" in texts
    u_map_figure(u, {"east wall": _region("east wall", "wall", mask)}, tmp_path / "v.png")
    texts = [t.get_text() for t in captured[1].findobj(matplotlib.text.Text)]
    assert not any("NOT VALID" in t for t in texts)
