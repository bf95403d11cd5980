"""The build and ``striae measure`` run one measurement pipeline: same star, same numbers."""

from __future__ import annotations

import json

import numpy as np
import pytest
import xarray as xr

from atlas import cli
from atlas.build import build_atlas

from ._data import write_csv


@pytest.mark.slow
def test_build_and_measure_give_the_same_numbers(tmp_path, capsys):
    # A demo-like G star of atlas.synth (invented test data) in a vacuum CSV: the build's
    # catalog record and stored features must equal `striae measure --json` of the same
    # file exactly (one pipeline, one normalisation; no physics is checked here).
    from atlas.synth.model import Star, synthesize

    wave = np.exp(np.linspace(np.log(5100.0), np.log(5700.0), 30_000))
    syn = synthesize(wave, Star(teff_k=5800.0, vsini_kms=3.0, rv_kms=-12.0), resolving_power=50000)
    flux = syn.normalised * syn.continuum
    flux = flux + np.random.default_rng(3).normal(size=flux.size) * flux / 120.0
    src = write_csv(tmp_path / "gstar.csv", wave, flux, target="G Star", medium="vacuum",
                    extra={"resolving_power": 50000})
    rep = build_atlas([src], tmp_path / "atlas", progress=False)
    assert rep.committed and not rep.failed
    rec = json.loads((tmp_path / "atlas" / "atlas.json").read_text())["stars"][0]
    feats = xr.open_zarr(tmp_path / "atlas" / rec["store"], group="features")

    assert cli.main(["measure", "--json", str(src)]) == 0
    out = json.loads(capsys.readouterr().out)
    for key in ("rv_obs_kms", "rv_err_kms", "spectral_class", "teff_k", "barycentric_kms"):
        assert out[key] == rec[key], key
    assert rec["rv_obs_kms"] is not None and rec["spectral_class"]
    rows = sorted(out["lines"] + out["unexplained"], key=lambda r: r["observed_A"])
    assert len(rows) == feats.sizes["feature"] > 20
    np.testing.assert_array_equal([r["observed_A"] for r in rows], feats["wavelength_A"].values)
    np.testing.assert_array_equal([r["ew_mA"] for r in rows], feats["ew_mA"].values)
    assert [r.get("species", "") for r in rows] == [str(s) for s in feats["species"].values]
    assert [r.get("kind", "unexplained") for r in rows] == [str(s) for s in feats["kind"].values]
