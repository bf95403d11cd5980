"""The build: catalog keys, data kept unchanged, skip-unchanged and --force, bad files and options."""

from __future__ import annotations

import json
import os
from types import SimpleNamespace

import numpy as np
import pytest
import xarray as xr

from atlas import store
from atlas.build import BuildOptions, build_atlas, prepare, star_arrays
from atlas.spectrum import make_spectrum
from atlas.store import RECORD_KEYS, open_atlas

from ._data import one_line_error_check, star_files, synthetic, write_csv

DESIGN_RECORD_KEYS = {  # ../shared/DESIGN.md, "Atlas on disk"
    "id", "name", "store", "source", "source_sha256", "wavelength_min_A", "wavelength_max_A",
    "medium", "samples", "strips", "barycentric_kms", "rv_kms", "rv_err_kms", "teff_k",
    "spectral_class", "snr", "resolving_power", "colour_srgb",
    "rv_obs_kms", "store_sha256", "source_path",  # extensions: DEVELOPERS.md "Atlas on disk"
    "class_range", "class_criteria", "colour_basis", "rv_method", "vsini_kms",
}


@pytest.fixture
def three(tmp_path):
    return star_files(tmp_path, 3, n=15_000)


def test_catalog_has_the_contract_keys(tmp_path, three):
    rep = build_atlas(three, tmp_path / "atlas", progress=False)
    assert rep.committed and len(rep.built) == 3 and not rep.failed
    cat = json.loads((tmp_path / "atlas" / "atlas.json").read_text())
    assert set(cat) == {"format", "tool_version", "built_utc", "options", "stars"}
    assert cat["format"] == 1
    assert set(RECORD_KEYS) == DESIGN_RECORD_KEYS
    for rec in cat["stars"]:
        assert set(rec) == DESIGN_RECORD_KEYS
        assert rec["rv_method"] == "line mask" or rec["rv_method"].startswith("template")
        assert store.ID_RE.fullmatch(rec["id"])
        assert rec["store"].startswith("stars/") and rec["store"].endswith(".zarr")
        assert rec["colour_srgb"].startswith("#") and len(rec["colour_srgb"]) == 7
        for k in ("barycentric_kms", "rv_kms", "rv_err_kms", "rv_obs_kms", "teff_k", "snr",
                  "resolving_power"):
            assert rec[k] is None or isinstance(rec[k], int | float), (k, rec[k])
        assert rec["spectral_class"] is None or isinstance(rec["spectral_class"], str)
        assert rec["barycentric_kms"] is None  # these files give no time, site or coordinates
        assert rec["snr"] > 0 and rec["samples"] == 15_000
    assert [r["id"] for r in cat["stars"]] == ["star-0", "star-1", "star-2"]


def test_stored_strips_hold_every_input_sample_unchanged(tmp_path):
    wave, flux, _ = synthetic(n=30_000, seed=3)
    path = write_csv(tmp_path / "s.csv", wave, flux, target="S")
    build_atlas([path], tmp_path / "atlas", progress=False)
    a = open_atlas(tmp_path / "atlas")
    ds = a.star("s").load()
    n = ds["strip_samples"].values
    pad = np.arange(ds.sizes["pixel"])[None, :] >= n[:, None]
    assert ds["mask"].values[pad].all() and np.isnan(ds["wavelength"].values[pad]).all()
    w = ds["wavelength"].values[~pad]
    f = ds["flux"].values[~pad]
    # each input sample appears (overlaps repeat some), value unchanged up to the float32 store
    want = np.loadtxt(path, delimiter=",", comments="#", skiprows=3)
    u, first = np.unique(w, return_index=True)
    np.testing.assert_array_equal(u, want[:, 0])
    np.testing.assert_array_equal(f[first], want[:, 1].astype(np.float32))
    assert ds.attrs["strip_mode"] == "velocity" and ds.attrs["strip_kms"] > 0
    widths = 299792.458 * np.log(ds["strip_max_A"].values / ds["strip_min_A"].values)
    np.testing.assert_allclose(widths, ds.attrs["strip_kms"], rtol=1e-9)


def test_unchanged_stars_are_skipped_and_force_rebuilds(tmp_path, three):
    out = tmp_path / "atlas"
    build_atlas(three, out, progress=False)
    cat1 = json.loads((out / "atlas.json").read_text())
    stamp = {r["store"]: os.stat(out / r["store"] / "zarr.json").st_mtime_ns for r in cat1["stars"]}

    rep = build_atlas(three, out, progress=False)
    assert rep.built == [] and sorted(rep.kept) == ["star-0", "star-1", "star-2"]
    cat2 = json.loads((out / "atlas.json").read_text())
    assert cat2["stars"] == cat1["stars"]
    for s, t in stamp.items():
        assert os.stat(out / s / "zarr.json").st_mtime_ns == t

    # change one file: only that star is rebuilt
    w, f, _ = synthetic(n=15_000, start_A=4300.0, seed=99)
    write_csv(three[1], w, f, target="Star 1")
    rep = build_atlas(three, out, progress=False)
    assert rep.built == ["star-1"] and sorted(rep.kept) == ["star-0", "star-2"]

    rep = build_atlas(three, out, force=True, progress=False)
    assert sorted(rep.built) == ["star-0", "star-1", "star-2"] and rep.kept == []
    cat4 = json.loads((out / "atlas.json").read_text())
    new_stores = {r["store"] for r in cat4["stars"]}
    assert not new_stores & {r["store"] for r in cat1["stars"]}
    assert sorted(p.name for p in (out / "stars").iterdir()) == sorted(s.split("/")[1] for s in new_stores)

    # different options rebuild everything too
    rep = build_atlas(three, out, BuildOptions(overlap=0.1), progress=False)
    assert len(rep.built) == 3


def test_duplicate_targets_get_unique_ids(tmp_path):
    w, f, _ = synthetic(n=5000)
    a = write_csv(tmp_path / "a.csv", w, f, target="Alpha Test")
    b = write_csv(tmp_path / "b.csv", w, f * 1.01, target="Alpha Test")
    c = write_csv(tmp_path / "c.csv", w, f * 1.02, target=None)
    rep = build_atlas([a, b, c], tmp_path / "atlas", progress=False)
    ids = [r["id"] for r in rep.catalog["stars"]]
    assert ids == ["alpha-test", "alpha-test-2", "c"]


def test_echelle_orders_stay_strips_unless_merged():
    w = np.array([5000.0 * np.exp(np.arange(3000) * 1e-5 + 0.02 * k) for k in range(4)])[::-1]
    f = np.ones_like(w) * np.arange(1, 5)[:, None]
    spec = make_spectrum(w, f, medium="vacuum")
    seq, plan, _ = prepare(spec, BuildOptions())
    assert plan.mode == "orders" and plan.n_strips == 4
    root, _ = star_arrays(seq, plan)
    assert np.all(np.diff(root["strip_min_A"].values) > 0)  # orders in wavelength order
    # the orders' continua are fitted jointly with a small penalty (atlas.blaze): levels 1..4 in
    # neighbouring orders are followed to 5e-4
    np.testing.assert_allclose(root["norm_flux"].values, 1.0, rtol=1e-3)
    seq, plan, _ = prepare(spec, BuildOptions(merge_orders=True))
    assert plan.mode == "velocity" and np.all(np.diff(seq["wavelength"]) >= 0)


def test_air_and_unknown_media_are_converted_to_vacuum(tmp_path):
    from atlas.physics.airvac import air_to_vacuum_A

    wave = 5000.0 * np.exp(np.arange(5000) * 1e-5)
    for medium in ("air", "unknown"):
        seq, _, notes = prepare(make_spectrum(wave, np.ones(wave.size), medium=medium), BuildOptions())
        np.testing.assert_array_equal(seq["wavelength"], air_to_vacuum_A(wave))
        assert any("unknown" in n for n in notes) == (medium == "unknown")


@pytest.mark.slow
def test_one_bad_file_among_good_ones(tmp_path, run_striae):
    good = star_files(tmp_path, 2, n=5000)
    bad = tmp_path / "broken.fits"
    bad.write_bytes(b"SIMPLE  =                    T" + b" " * 50)
    proc = run_striae("build", good[0], bad, good[1], "--out", tmp_path / "atlas")
    assert proc.returncode == 2
    errs = [ln for ln in proc.stderr.splitlines() if ln.strip()]
    assert len(errs) == 1 and errs[0].startswith(f"striae: {bad}: "), proc.stderr
    assert "Traceback" not in proc.stderr
    cat = json.loads((tmp_path / "atlas" / "atlas.json").read_text())
    assert [r["source"] for r in cat["stars"]] == ["star0.csv", "star1.csv"]
    assert "built star-0" in proc.stdout and "built star-1" in proc.stdout


def _cli(capsys, *args):
    """Run ``striae`` in this process; returns (exit code, stdout, stderr) like a subprocess."""
    from atlas import cli

    rc = cli.main([str(a) for a in args])
    cap = capsys.readouterr()
    return SimpleNamespace(returncode=rc, stdout=cap.out, stderr=cap.err)


@pytest.mark.parametrize(
    ("args", "where"),
    [
        (["--strip-kms", "-3"], "--strip-kms"),
        (["--strip-kms", "abc"], "--strip-kms"),
        (["--overlap", "0.5"], "--overlap"),
        (["--overlap", "-0.01"], "--overlap"),
        (["--equal-A", "0"], "--equal-A"),
        (["--workers", "0"], "--workers"),
        (["--site", "95,10,100"], "--site"),
        ([], "--out"),
    ],
)
def test_bad_options_give_one_line(tmp_path, capsys, args, where):
    assert_one_line_error = one_line_error_check()
    f = star_files(tmp_path, 1, n=200)[0]
    full = ["build", f, *args] + ([] if where == "--out" else ["--out", tmp_path / "atlas"])
    assert_one_line_error(_cli(capsys, *full), where)
    assert not (tmp_path / "atlas").exists()


def test_recipe_builds_relative_to_itself_and_bad_recipes_are_named(tmp_path, capsys, monkeypatch):
    assert_one_line_error = one_line_error_check()
    (tmp_path / "spectra").mkdir()
    (tmp_path / "recipes").mkdir()
    star_files(tmp_path / "spectra", 2, n=3000)
    recipe = tmp_path / "recipes" / "r.toml"
    recipe.write_text('inputs = ["../spectra/*.csv"]\nout = "built"\n[options]\noverlap = 0.05\n')
    monkeypatch.chdir(tmp_path)
    proc = _cli(capsys, "build", recipe, "--quiet")
    assert proc.returncode == 0, proc.stderr
    cat = json.loads((tmp_path / "recipes" / "built" / "atlas.json").read_text())
    assert cat["options"]["overlap"] == 0.05 and len(cat["stars"]) == 2

    broken = tmp_path / "recipes" / "broken.toml"
    broken.write_text("inputs = [\n")
    assert_one_line_error(_cli(capsys, "build", broken), str(broken), "TOML")
    assert_one_line_error(_cli(capsys, "build", tmp_path / "missing.toml"), "missing.toml")
    bad = tmp_path / "recipes" / "bad.toml"
    bad.write_text('inputs = ["../spectra/*.csv"]\nout = "b2"\n[options]\noverlap = 0.9\n')
    assert_one_line_error(_cli(capsys, "build", bad), str(bad), "overlap")
    odd = tmp_path / "recipes" / "odd.toml"
    odd.write_text('inputs = ["../spectra/*.csv"]\nout = "b2"\n[options]\nspeed = 3\n')
    assert_one_line_error(_cli(capsys, "build", odd), str(odd), "speed")
    nomatch = tmp_path / "recipes" / "nomatch.toml"
    nomatch.write_text('inputs = ["../nothing/*.fits"]\nout = "b3"\n')
    assert_one_line_error(_cli(capsys, "build", nomatch), "nothing/*.fits")
    assert not (tmp_path / "recipes" / "b2").exists() and not (tmp_path / "recipes" / "b3").exists()


def test_open_atlas_validates_ids_and_store_names(tmp_path, three):
    from atlas.errors import InputError

    build_atlas(three[:1], tmp_path / "atlas", progress=False)
    a = open_atlas(tmp_path / "atlas")
    for bad in ("../star-0", "Star-0", "", "star-0/..", "a" * 65, 5):
        with pytest.raises(InputError):
            a.star(bad)
    with pytest.raises(InputError, match="no star"):
        a.star("star-9")
    assert isinstance(a.star("star-0"), xr.Dataset)
    cat = json.loads((tmp_path / "atlas" / "atlas.json").read_text())
    cat["stars"][0]["store"] = "../../etc/passwd"
    (tmp_path / "atlas" / "atlas.json").write_text(json.dumps(cat))
    with pytest.raises(InputError, match="bad store name"):
        open_atlas(tmp_path / "atlas")
    with pytest.raises(InputError, match="not a built atlas"):
        open_atlas(tmp_path / "nowhere")


def test_slugs():
    assert store.slugify("HD 12345 A") == "hd-12345-a"
    assert store.slugify("  Æther  Stella ") == "ther-stella"
    assert store.slugify("***") == "star"
    assert store.slugify("Corran's Star") == "corrans-star"
    assert len(store.slugify("x" * 200)) == 64
    assert store.unique_id("a", {"a", "a-2"}) == "a-3"


def test_fsspec_url_atlas(tmp_path):
    # An object-store-like fsspec location (in memory): stores, catalog and reading.
    import uuid

    from atlas.lod import window

    files = star_files(tmp_path, 1, n=8000)
    url = f"memory://atlas-{uuid.uuid4().hex}"
    rep = build_atlas(files, url, progress=False)
    assert rep.committed
    a = open_atlas(url)
    star = a.star("star-0")
    r = window(star, 0, 0.0, 1e9, 300)
    assert 0 < len(r["wavelength"]) <= 300
    assert build_atlas(files, url, progress=False).kept == ["star-0"]


def test_file_url_is_a_local_folder(tmp_path):
    files = star_files(tmp_path, 1, n=3000)
    rep = build_atlas(files, f"file://{tmp_path}/atlas", progress=False)
    assert rep.committed and (tmp_path / "atlas" / "atlas.json").exists()
    assert open_atlas(f"file://{tmp_path}/atlas").ids == ["star-0"]


def test_only_bad_files_commit_nothing(tmp_path, capsys, three):
    assert_one_line_error = one_line_error_check()
    out = tmp_path / "atlas"
    build_atlas(three[:1], out, progress=False)
    before = (out / "atlas.json").read_bytes()
    bad = tmp_path / "empty.csv"
    bad.write_text("")
    proc = _cli(capsys, "build", bad, "--out", out)
    assert_one_line_error(proc, str(bad))
    assert (out / "atlas.json").read_bytes() == before  # the old atlas is untouched
    assert open_atlas(out).ids == ["star-0"]


@pytest.mark.parametrize("unc", [False, True])
def test_block_by_block_store_equals_the_whole_star_store(tmp_path, monkeypatch, unc):
    """The streamed writer (small blocks forced) stores the same arrays, metadata and attributes."""
    import zarr

    from atlas.build import star as build
    from atlas.store import write_star

    rng = np.random.default_rng(11)
    wave = 5000.0 * np.exp(np.arange(120_000) * 2e-6)
    flux = rng.normal(100, 5, wave.size)
    flux[rng.integers(0, wave.size, 300)] = np.nan
    spec = make_spectrum(wave, flux, uncertainty=np.full(wave.size, 2.0) if unc else None, medium="vacuum")
    seq, plan, _ = prepare(spec, BuildOptions(strip_kms=30.0))
    attrs = {"name": "Block Test", "strip_kms": 30.0, "strip_A": None, "lod_levels": None, "lod_factor": 4}
    root, levels = star_arrays(seq, plan)
    root.attrs.update({**attrs, "lod_levels": len(levels)})
    root.attrs = {k: v for k, v in root.attrs.items() if v is not None}
    spc = build._strips_per_chunk(root.sizes["pixel"], root.sizes["strip"])
    write_star(str(tmp_path), "stars/whole.zarr", root, levels, spc)
    per_block = 4 * spc * 25 * plan.pixel
    monkeypatch.setattr(build, "BLOCK_BYTES", 3 * per_block)  # 3 envelope chunks per block
    assert plan.n_strips > 3 * 4 * spc  # so more than one block, the last one short
    n_levels = build.write_star_arrays(str(tmp_path), "stars/blocks.zarr", seq, plan, attrs)
    assert n_levels == len(levels)
    a = zarr.open_group(str(tmp_path / "stars/whole.zarr"), mode="r")
    b = zarr.open_group(str(tmp_path / "stars/blocks.zarr"), mode="r")
    assert dict(a.attrs) == dict(b.attrs)
    groups = ["", *[f"lod{j}" for j in range(1, len(levels) + 1)]]
    for g in groups:
        ga, gb = (a[g], b[g]) if g else (a, b)
        assert dict(ga.attrs) == dict(gb.attrs)
        assert sorted(ga.array_keys()) == sorted(gb.array_keys())
        for k in ga.array_keys():
            xa, xb = ga[k], gb[k]
            assert xa.metadata.to_dict() == xb.metadata.to_dict(), (g, k)
            va, vb = xa[...], xb[...]
            assert va.tobytes() == vb.tobytes(), (g, k)  # bit for bit, NaN padding included
