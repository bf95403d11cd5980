"""The app's data module: opening atlases, bounded windows, the overview, the caches."""

from __future__ import annotations

import json
import os
import shutil

import numpy as np
import pytest

from atlas.app.data import open_view_atlas
from atlas.errors import InputError


def test_a_missing_folder_is_an_input_error(tmp_path):
    with pytest.raises(InputError) as exc:
        open_view_atlas(tmp_path / "nowhere")
    assert exc.value.where.endswith("nowhere") and "no such atlas" in exc.value.reason


def test_a_folder_without_catalog_is_an_input_error(tmp_path):
    with pytest.raises(InputError) as exc:
        open_view_atlas(tmp_path)
    assert "no atlas.json" in exc.value.reason


def test_a_catalog_of_another_format_is_an_input_error(tmp_path):
    (tmp_path / "atlas.json").write_text(json.dumps({"format": 99, "stars": []}))
    with pytest.raises(InputError) as exc:
        open_view_atlas(tmp_path)
    assert "atlas.json" in exc.value.where


def test_the_catalog_and_strip_bounds_come_from_the_build(built_atlas):
    data = open_view_atlas(built_atlas)
    assert data.star_ids == ["test-star-a", "test-star-b"]
    lo, hi = data.strip_bounds("test-star-a")
    assert len(lo) == data.record("test-star-a")["strips"]
    assert np.all(hi > lo) and np.all(np.diff(lo) > 0)


@pytest.mark.parametrize("max_points", [50, 400, 3000])
def test_a_window_never_sends_more_than_asked(built_atlas, max_points):
    data = open_view_atlas(built_atlas)
    lo, hi = data.strip_bounds("test-star-a")
    w = data.window("test-star-a", 2, lo[2], hi[2], max_points)
    assert 0 < len(w["wavelength"]) <= max_points
    assert w["wavelength"].dtype == np.float32 and w["flux"].dtype == np.float32


def test_zoomed_in_far_enough_the_window_holds_the_real_samples(built_atlas):
    data = open_view_atlas(built_atlas)
    lo, hi = data.strip_bounds("test-star-a")
    a, b = lo[3] + 5.0, lo[3] + 6.0
    w = data.window("test-star-a", 3, a, b, 2000)
    assert w["level"] == 0
    ds = data.dataset("test-star-a")
    wave = ds["wavelength"][3].values
    inside = (wave >= a) & (wave <= b)
    np.testing.assert_array_equal(w["wavelength"], wave[inside].astype(np.float32))
    np.testing.assert_array_equal(w["flux"], ds["norm_flux"][3].values[inside])


def test_the_overview_is_decimated(built_atlas):
    data = open_view_atlas(built_atlas)
    ov = data.overview("test-star-a", n_bins=300)
    assert len(ov["wavelength"]) <= 600
    rec = data.record("test-star-a")
    assert ov["wavelength"].min() >= rec["wavelength_min_A"] - 1
    assert ov["wavelength"].max() <= rec["wavelength_max_A"] + 1


def test_the_process_cache_follows_the_catalog(built_atlas, tmp_path):
    copy = tmp_path / "copy"
    shutil.copytree(built_atlas, copy)
    first = open_view_atlas(copy)
    assert open_view_atlas(copy) is first
    cat = copy / "atlas.json"
    st = os.stat(cat)
    os.utime(cat, ns=(st.st_atime_ns, st.st_mtime_ns + 10**9))
    assert open_view_atlas(copy) is not first


def test_features_are_none_or_the_documented_columns(built_atlas):
    df = open_view_atlas(built_atlas).features("test-star-a")
    if df is not None:  # the build writes the group once features are measured
        assert {"wavelength_A", "species", "rest_A", "ew_mA"} <= set(df.columns)
        assert len(df) > 0
