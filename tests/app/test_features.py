"""The features panel: found features listed, filtered, chosen and stepped through."""

from __future__ import annotations

import numpy as np
import pytest

from atlas.app.featurespanel import feature_depths, is_unexplained


def test_no_species_or_either_word_for_it_counts_as_unexplained():
    got = is_unexplained(["Fe I", "", "Na I", "Ca I", None], ["", "", "unidentified", "unexplained", ""])
    assert got.tolist() == [False, True, True, True, True]


@pytest.fixture
def viewer(make_viewer):
    return make_viewer(star="test-star-a")


def _features(viewer):
    df = viewer.features.features()
    assert df is not None and len(df) >= 3, "the test atlas's build writes found features"
    return df


def test_the_table_lists_every_feature_in_wavelength_order(viewer):
    df = _features(viewer)
    data = viewer.features.src.data
    assert data["i"] == list(range(len(df)))
    assert np.all(np.diff(data["wave"]) > 0)
    assert viewer.features.box.visible


def test_depth_is_one_minus_the_normalised_flux_at_the_line_core(viewer):
    df = _features(viewer)
    k = int(np.nanargmax(df["depth"].to_numpy()))
    w = float(df["wavelength_A"].iloc[k])
    d = feature_depths(viewer.data, viewer.state.star, np.array([w]))[0]
    lo_b, _ = viewer.data.strip_bounds(viewer.state.star)
    s = int(np.searchsorted(lo_b, w, side="right") - 1)
    win = viewer.data.window(viewer.state.star, s, w - 0.3, w + 0.3, 10_000, flux="norm")
    core = float(np.nanmin(win["flux"]))
    # common practice: depth = 1 - F_min/F_c; the continuum of a normalised spectrum is ~1
    assert d == pytest.approx(1.0 - core, abs=0.05)
    assert 0.02 < d < 1.0


def test_choosing_a_feature_opens_a_window_around_it_and_the_link_carries_it(viewer):
    df = _features(viewer)
    viewer.features.choose(2)
    st = viewer.state
    w = float(viewer.vm.frame().to_display_A(np.array([df["wavelength_A"].iloc[2]]))[0])
    assert st.feature == 2 and st.lo < w < st.hi
    assert viewer.vm.zoom_strip() in viewer.vm.page_strips()
    assert viewer.features.src.selected.indices == [2]


def test_a_click_on_a_row_chooses_that_feature(viewer):
    _features(viewer)
    viewer.features.src.selected.indices = [1]
    assert viewer.state.feature == viewer.features.src.data["i"][1]


def test_the_feature_key_steps_to_each_feature_in_turn(viewer):
    df = _features(viewer)
    seen = []
    for _ in range(3):
        viewer.from_browser(["feature+", 0])
        seen.append(viewer.state.feature)
    assert seen == [0, 1, 2]
    viewer.from_browser(["feature-", 0])
    assert viewer.state.feature == 1
    wins = []
    for k in (0, 1, 2):
        viewer.features.choose(k)
        wins.append((viewer.state.lo, viewer.state.hi))
    assert len(set(wins)) == 3 and len(df) >= 3


def test_unexplained_only_lists_just_those(viewer):
    df = _features(viewer)
    viewer.features.w_only.value = True
    rows = viewer.features.src.data["i"]
    assert 0 < len(rows) < len(df)
    assert rows == np.nonzero(df["unexplained"].to_numpy())[0].tolist()
    assert set(viewer.features.src.data["species"]) <= {"unexplained"}
