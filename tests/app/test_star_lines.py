"""The viewer's markers come from the lines predicted for each star (its ``lines`` group)."""

from __future__ import annotations

import pytest

from atlas.app import markers
from atlas.app.data import AtlasData, line_list
from atlas.app.frames import Frame
from atlas.build import build_atlas
from tests.build._data import star_files


@pytest.fixture(scope="module")
def view(tmp_path_factory):
    folder = tmp_path_factory.mktemp("star-lines")
    atlas = folder / "atlas"
    rep = build_atlas(star_files(folder, 1, n=8000), atlas, progress=False)
    assert rep.committed and not rep.failed
    return AtlasData(atlas)


def test_star_lines_are_the_predicted_lines_plus_bands_and_telluric_lines(view):
    sid = view.star_ids[0]
    got = view.star_lines(sid)
    pred = view.atlas.lines(sid)
    atomic = got[got["kind"] == "atomic"]
    assert len(atomic) == len(pred)
    assert set(got.loc[got["kind"] != "atomic", "kind"]) <= {"band_head", "telluric"}
    base = line_list()
    assert (got["kind"] != "atomic").sum() == (base["kind"] != "atomic").sum()
    assert view.star_lines(sid) is got


def test_markers_of_a_strip_use_the_predicted_strength_classes(view):
    sid = view.star_ids[0]
    rec = view.record(sid)
    placed = markers.place(view.star_lines(sid), Frame("rest", "vacuum", 0.0, 0.0))
    m = markers.visible(placed, rec["wavelength_min_A"], rec["wavelength_max_A"], medium="vacuum")
    pred = view.atlas.lines(sid)
    inside = pred[(pred["vacuum_A"] >= rec["wavelength_min_A"]) & (pred["vacuum_A"] <= rec["wavelength_max_A"])]
    assert len(inside) > 0
    base = line_list()
    bands = set(base.loc[base["kind"] == "band_head", "species"])
    shown = [(s, k) for s, k, t in zip(m["species"], m["strength"], m["telluric"], strict=True)
             if not t and s not in bands]
    assert sorted(shown) == sorted(zip(inside["species"], inside["strength"], strict=True))


def test_a_star_without_a_lines_group_falls_back_to_the_shipped_list(view):
    assert view.star_lines(None) is line_list()
