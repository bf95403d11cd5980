"""Level-of-detail envelopes and the window query."""

from __future__ import annotations

import numpy as np
import xarray as xr
from hypothesis import given, settings
from hypothesis import strategies as st

from atlas.lod import FACTOR, MAX_BINS, build_levels, clear_cache, window
from atlas.strips import gather, padding_mask, plan_velocity


def _star(seed, n, strip_kms, masked_frac=0.05):
    """An in-memory star with the store layout (invented data)."""
    rng = np.random.default_rng(seed)
    wave = 5000.0 * np.exp(np.sort(rng.uniform(0, 0.2, n)))
    flux = rng.normal(100.0, 10.0, n)
    plan = plan_velocity(wave, strip_kms, 0.03)
    w = gather(wave, plan, np.nan, np.float64)
    f = gather(flux, plan, np.nan, np.float32)
    m = padding_mask(plan) | (rng.random(w.shape) < masked_frac)
    norm = (f / 100.0).astype(np.float32)
    sp = ("strip", "pixel")
    ds = xr.Dataset(
        {"flux": (sp, f), "norm_flux": (sp, norm), "mask": (sp, m),
         "strip_samples": ("strip", plan.count.astype(np.int32))},
        coords={"wavelength": (sp, w)},
    )
    return ds


@settings(max_examples=40, deadline=None)
@given(seed=st.integers(0, 2**31), n=st.integers(1, 30_000), strip_kms=st.floats(50.0, 20_000.0))
def test_envelopes_contain_every_unmasked_sample(seed, n, strip_kms):
    ds = _star(seed, n, strip_kms)
    w, f, nf, m = (ds[v].values for v in ("wavelength", "flux", "norm_flux", "mask"))
    levels = build_levels(w, f, nf, m)
    assert levels[-1]["wave_min"].shape[1] <= MAX_BINS
    for lev in levels:
        step = lev["step"]
        b = np.arange(w.shape[1]) // step
        real = np.isfinite(w)
        good = real & ~m
        # wavelength envelopes are float32 (what the window returns); rounding keeps the order
        for name, var, sel in (("wave", w.astype(np.float32), real), ("flux", f, good), ("norm", nf, good)):
            lo = lev[f"{name}_min"][:, b]
            hi = lev[f"{name}_max"][:, b]
            assert np.all(lo[sel] <= var[sel]) and np.all(var[sel] <= hi[sel]), (name, step)
        assert step == FACTOR ** (levels.index(lev) + 1)


@settings(max_examples=60, deadline=None)
@given(
    seed=st.integers(0, 2**31),
    n=st.integers(1, 30_000),
    strip_kms=st.floats(200.0, 20_000.0),
    a=st.floats(0, 1),
    b=st.floats(0, 1),
    max_points=st.integers(2, 5000),
    flux=st.sampled_from(["norm", "raw"]),
)
def test_window_never_exceeds_max_points_and_is_exact_when_zoomed_in(seed, n, strip_kms, a, b, max_points, flux):
    ds = _star(seed, n, strip_kms)
    k = seed % ds.sizes["strip"]
    row = ds.isel(strip=k)
    cnt = int(row["strip_samples"])
    wave = row["wavelength"].values[:cnt]
    lo_A = wave[0] + min(a, b) * (wave[-1] - wave[0])
    hi_A = wave[0] + max(a, b) * (wave[-1] - wave[0])
    r = window(ds, k, lo_A, hi_A, max_points, flux=flux)
    assert r["wavelength"].dtype == np.float32 and r["flux"].dtype == np.float32
    assert len(r["wavelength"]) == len(r["flux"]) <= max_points
    assert np.all(np.diff(r["wavelength"]) >= 0)
    sel = (wave >= lo_A) & (wave <= hi_A)
    assert r["n_source"] == np.count_nonzero(sel)
    if r["n_source"] <= max_points:  # zoomed in: the real samples, unchanged
        assert r["level"] == 0
        var = "norm_flux" if flux == "norm" else "flux"
        y = np.where(row["mask"].values[:cnt], np.nan, row[var].values[:cnt])[sel]
        np.testing.assert_array_equal(r["flux"], y.astype(np.float32))
        np.testing.assert_array_equal(r["wavelength"], wave[sel].astype(np.float32))
    else:
        assert r["level"] >= 1
        # the envelope bounds every good sample in the window
        var = "norm_flux" if flux == "norm" else "flux"
        good = sel & ~row["mask"].values[:cnt]
        y = row[var].values[:cnt][good]
        if y.size and np.isfinite(r["flux"]).any():
            assert np.nanmin(r["flux"]) <= y.min() and y.max() <= np.nanmax(r["flux"])


def test_window_uses_the_finest_level_that_fits():
    ds = _star(3, 60_000, 1e6, masked_frac=0.0)  # one long strip
    n = int(ds["strip_samples"][0])
    w = ds["wavelength"].values[0]
    r = window(ds, 0, w[0], w[n - 1], 2 * (n // 16) + 2)
    assert r["step"] == 16 and r["level"] == 2
    r = window(ds, 0, w[0], w[n - 1], 2 * (n // 16) - 50)
    assert r["step"] == 64


def test_stored_star_gives_the_same_window_as_in_memory(tmp_path):
    from atlas.build import BuildOptions, prepare, star_arrays
    from atlas.spectrum import make_spectrum
    from atlas.store import write_star

    rng = np.random.default_rng(5)
    wave = 6000.0 * np.exp(np.arange(50_000) * 2e-6)
    spec = make_spectrum(wave, rng.normal(10, 1, wave.size), medium="vacuum")
    seq, plan = prepare(spec, BuildOptions())[:2]
    root, levels = star_arrays(seq, plan)
    root.attrs["lod_levels"] = len(levels)
    write_star(str(tmp_path), "stars/x-00000000.zarr", root, levels, 4)
    disk = xr.open_zarr(tmp_path / "stars/x-00000000.zarr", consolidated=True)
    url = str(tmp_path / "stars/x-00000000.zarr")
    clear_cache()
    for k in range(root.sizes["strip"]):
        wk = root["wavelength"].values[k]
        for mp in (50, 400, 10_000):
            a = window(root, k, np.nanmin(wk), np.nanmax(wk), mp)
            b = window(disk, k, np.nanmin(wk), np.nanmax(wk), mp, url=url)
            assert a["level"] == b["level"]
            np.testing.assert_array_equal(a["wavelength"], b["wavelength"])
            np.testing.assert_array_equal(a["flux"], b["flux"])
