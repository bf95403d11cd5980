"""The viewer driven from Python (no browser): gestures change the state, views follow it."""

from __future__ import annotations

import numpy as np
import pytest

from atlas.app.card import star_card_html, swatch_css
from atlas.app.data import open_view_atlas
from atlas.app.frames import Frame
from atlas.app.state import ViewState
from atlas.app.strippanel import DEFAULT_PX
from atlas.app.viewer import Viewer


class _Range:
    def __init__(self, x0, x1):
        self.x0, self.x1 = x0, x1


@pytest.fixture
def viewer(built_atlas):
    data = open_view_atlas(built_atlas)
    state = ViewState()
    state.param.update(star="test-star-a", per_page=3)
    return Viewer(data, state)


def shown(v):
    return [s.strip for s in v.strips.slots if s.fig.visible]


def test_pages_step_and_show_other_strips(viewer):
    assert shown(viewer) == [0, 1, 2]
    viewer.controls.key("page+")
    assert viewer.state.page == 2 and shown(viewer) == [3, 4, 5]
    viewer.controls.key("last")
    assert shown(viewer)[0] == 9 and viewer.state.page == 4
    viewer.controls.key("page+")  # stays on the last page
    assert viewer.state.page == 4


def test_strip_steps_move_the_focus_and_turn_pages(viewer):
    viewer.controls.key("strip+")
    assert viewer.vm.zoom_strip() == 0
    for _ in range(3):
        viewer.controls.key("strip+")
    assert viewer.vm.zoom_strip() == 3 and viewer.state.page == 2


def test_a_zoom_narrows_the_range_and_stays_bounded(viewer):
    slot = viewer.strips.slots[1]
    x0, x1 = slot.fig.x_range.start, slot.fig.x_range.end
    n_full = len(slot.src.data["x"])
    assert n_full <= 2 * DEFAULT_PX
    a, b = x0 + 0.4 * (x1 - x0), x0 + 0.45 * (x1 - x0)
    viewer.strips.on_range(slot, _Range(a, b))
    assert viewer.state.lo == pytest.approx(a) and viewer.state.hi == pytest.approx(b)
    assert (slot.fig.x_range.start, slot.fig.x_range.end) == pytest.approx((a, b))
    xs = slot.src.data["x"]
    assert 0 < len(xs) <= 2 * DEFAULT_PX
    assert xs.min() >= a - 0.05 and xs.max() <= b + 0.05
    assert slot.level == 0  # 5% of a strip: real samples
    viewer.controls.key("whole")
    assert viewer.state.lo is None and slot.fig.x_range.start == pytest.approx(x0)


def test_frame_changes_keep_the_zoomed_stretch(viewer):
    slot = viewer.strips.slots[0]
    x0 = slot.fig.x_range.start
    viewer.strips.on_range(slot, _Range(x0 + 10, x0 + 12))
    rec = viewer.vm.record()
    before = Frame("observed", "air", rec["rv_kms"], rec["barycentric_kms"]).from_display_A(
        np.array([viewer.state.lo, viewer.state.hi]))
    viewer.state.frame = "rest"
    after = viewer.vm.frame().from_display_A(np.array([viewer.state.lo, viewer.state.hi]))
    np.testing.assert_allclose(after, before, atol=1e-6)


def test_go_to_a_line_opens_a_window_on_its_shifted_position(viewer, line_rows):
    # markers show the lines predicted for the star: the toy star a is measured as a hot
    # star (B2 here), so He I 5876 is marked and Na I D is not
    viewer.controls.go_to("He I 5876")
    row = line_rows[(line_rows["species"] == "He I") & (abs(line_rows["air_A"] - 5875.62) < 0.01)].iloc[0]
    # observed frame: rest vacuum x D(rv) / D(v_bary), Wright & Eastman (2014, PASP 126, 838)
    expect = Frame("observed", "air", 25.0, -5.0).rest_vac_to_display_A([row["vacuum_A"]])[0]
    assert viewer.state.lo < expect < viewer.state.hi
    assert viewer.state.ref.startswith("He I 5875.6")
    zs = viewer.vm.zoom_strip()
    slot = next(s for s in viewer.strips.slots if s.strip == zs)
    xs = np.asarray(slot.msrc.data["x"])
    assert np.min(np.abs(xs - expect)) < 1e-6


def test_go_to_nonsense_leaves_the_view_and_shows_a_notice(viewer):
    before = viewer.state.values()
    viewer.controls.go_to("nowhere at all")
    assert viewer.state.values() == before
    assert viewer.notice.visible and "go to" in viewer.notice.object


def test_switching_star_resets_page_and_zoom(viewer):
    viewer.controls.key("page+")
    viewer.controls.choose_star("test-star-b")
    assert (viewer.state.star, viewer.state.page, viewer.state.lo) == ("test-star-b", 1, None)


def test_the_card_says_not_measured_for_nulls():
    html = star_card_html({"id": "x", "name": "X", "teff_k": None, "rv_kms": 3.0, "rv_err_kms": 0.5,
                           "colour_srgb": [1.0, 0.5, 0.0]})
    assert html.count("not measured") >= 3
    assert "+3.00 ± 0.50 km/s" in html and "#ff8000" in html


@pytest.mark.parametrize("c,expected", [("#a1b2c3", "#a1b2c3"), ([255, 0, 0], "#ff0000"),
                                        ("red;x", None), ([1, float("nan"), 0], None), (None, None)])
def test_swatch_colours(c, expected):
    assert swatch_css(c) == expected


def test_a_link_with_bad_values_opens_with_defaults_and_a_notice(built_atlas):
    from atlas.app.serve import create_session

    keep = {}
    create_session(built_atlas, query="?star=../etc&page=abc&lo=nan&hi=3&frame=rest", keep=keep)
    v = keep["viewer"]
    assert (v.state.star, v.state.page, v.state.lo, v.state.frame) == ("test-star-a", 1, None, "rest")
    assert v.notice.visible
    for what in ("star:", "page:", "lo/hi:"):
        assert what in v.notice.object


def test_a_value_set_behind_the_parsers_back_is_put_back(viewer):
    # the URL sync may set any value its parameter type accepts; the state watcher re-checks
    viewer.controls.key("page+")
    viewer.state.star = "no-such-star"
    assert viewer.state.star == "test-star-a"
    viewer.state.page = 999
    assert viewer.state.page == viewer.vm.n_pages()
    assert viewer.notice.visible


@pytest.mark.parametrize("name,rest_air_A", [("Na D", 5889.95), ("na d1", 5895.92), ("NaD2", 5889.95)])
def test_go_to_reads_common_names_of_lines(make_viewer, name, rest_air_A):
    # the names resolve to lines of the shipped line list (Na I D2/D1 air wavelengths, from memory)
    viewer = make_viewer(star="test-star-a")
    viewer.controls.go_to(name)
    assert viewer.state.ref.startswith("Na I ")
    assert float(viewer.state.ref.split()[-1]) == pytest.approx(rest_air_A, abs=0.05)


def test_go_to_a_named_line_outside_the_spectrum_says_so(make_viewer):
    viewer = make_viewer(star="test-star-a")  # 5000 .. 6108 Å: H-alpha lies beyond it
    viewer.controls.go_to("Hα")
    assert "outside this spectrum" in viewer.notice.object


def test_go_to_a_band_opens_a_window_wide_enough_to_hold_it(make_viewer):
    viewer = make_viewer(star="test-star-a")
    viewer.controls.go_to("Mg b")
    # Mg I b lines at 5167.3, 5172.7, 5183.6 Å air (from memory): the window holds all three
    assert viewer.state.lo < 5167.3 and viewer.state.hi > 5183.6


def test_the_card_says_when_and_how_it_was_observed(viewer):
    html = viewer.card.pane.object
    for words in ("observed (UTC)", "site", "exposure", "v sin i", "RV method", "class range",
                  "strip width"):
        assert words in html
    assert "km/s" in html.split("strip width")[1][:80]
