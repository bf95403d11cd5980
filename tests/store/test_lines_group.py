"""The ``lines`` group of a star's store: the lines predicted for the star at build time."""

from __future__ import annotations

import shutil

import numpy as np
import pytest

from atlas import store
from atlas.build import build_atlas
from atlas.cli import main
from atlas.lines.dense import load_merged_lines
from atlas.lines.predict import DEPTH_THRESHOLD, logg_of_class, predict_depths
from atlas.lines.stored import from_dataset, strength_of_depth, to_dataset
from tests.build._data import star_files


@pytest.fixture(scope="module")
def built(tmp_path_factory):
    folder = tmp_path_factory.mktemp("lines-group")
    atlas = folder / "atlas"
    rep = build_atlas(star_files(folder, 2, n=8000), atlas, progress=False)
    assert rep.committed and not rep.failed
    return atlas


def test_build_stores_the_lines_predicted_at_the_measured_teff_and_class(built):
    store.clear_cache()
    a = store.open_atlas(built)
    for rec in a.stars:
        got = a.lines(rec["id"])
        assert got is not None and len(got) > 0
        assert (got["predicted_depth"] > DEPTH_THRESHOLD).all()
        lines = load_merged_lines()
        lo, hi = rec["wavelength_min_A"] * 0.998, rec["wavelength_max_A"] * 1.002
        lines = lines[(lines["vacuum_A"] > lo) & (lines["vacuum_A"] < hi)]
        assert got.attrs["teff_k"] == rec["teff_k"]
        want = predict_depths(lines, rec["teff_k"], logg_of_class(rec["spectral_class"]),
                              line_fwhm_kms=got.attrs.get("line_fwhm_kms"))
        assert list(got["species"]) == list(want["species"])
        np.testing.assert_array_equal(got["vacuum_A"].to_numpy(), want["vacuum_A"].to_numpy())
        np.testing.assert_allclose(got["predicted_depth"], want["predicted_depth"], rtol=1e-6)
        assert a.lines(rec["id"]) is got  # cached per process


def test_lines_round_trip_through_a_dataset():
    pred = predict_depths(load_merged_lines(), 5772.0, 4.44, threshold=0.2)
    back = from_dataset(to_dataset(pred, teff_k=5772.0))
    assert list(back["species"]) == list(pred["species"])
    for col in ("vacuum_A", "air_A", "lower_eV", "loggf"):
        np.testing.assert_array_equal(back[col].to_numpy(), pred[col].to_numpy())
    np.testing.assert_allclose(back["predicted_depth"], pred["predicted_depth"], rtol=1e-6)
    np.testing.assert_array_equal(back["strength"], strength_of_depth(back["predicted_depth"]))


def test_verify_names_a_flipped_byte_in_the_lines_group(built, tmp_path, capsys):
    atlas = tmp_path / "atlas"
    shutil.copytree(built, atlas)
    chunks = sorted(p for p in (atlas / "stars").rglob("*") if p.is_file() and "/lines/" in p.as_posix()
                    and "/c/" in p.as_posix())
    assert chunks
    target = chunks[len(chunks) // 2]
    data = bytearray(target.read_bytes())
    data[len(data) // 2] ^= 0x10
    target.write_bytes(bytes(data))
    a = store.open_atlas(atlas)
    damaged = [d for r in a.stars for d in store.verify_star(a.url, r).damaged]
    assert damaged == [target.as_posix().split(".zarr/")[1]]
    assert main(["verify", str(atlas), "--quiet"]) == 1
    assert "DAMAGED" in capsys.readouterr().out
