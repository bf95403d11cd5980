"""``striae measure``: JSON keys, readable output and one-line errors."""

from __future__ import annotations

import json

import numpy as np
import pytest

from atlas import cli
from tests.conftest import assert_one_line_error

DEPTH_OF_STRENGTH = {1: 0.7, 2: 0.45, 3: 0.25, 4: 0.12}
REQUIRED = ("rv_kms", "rv_err_kms", "barycentric_kms", "ccf_fwhm_kms", "teff_k", "teff_err_k",
            "spectral_class", "lines", "unexplained")


@pytest.fixture(scope="module")
def star_csv(tmp_path_factory, synth, lines):
    a = lines[(lines.kind == "atomic") & (lines.vacuum_A > 4500) & (lines.vacuum_A < 6700)]
    wave = synth.log_grid(4500.0, 6700.0, 40_000)
    depth = [DEPTH_OF_STRENGTH[int(s)] for s in a.strength]
    flux, sigma, _ = synth.make_star(wave, a.vacuum_A.to_numpy(), depth, rv_kms=-55.0, snr=100,
                                     teff_k=5800.0, rng=1)
    path = tmp_path_factory.mktemp("measure") / "star.csv"
    with open(path, "w") as fh:
        fh.write("# medium: vacuum\n# flux_unit: erg / (s cm2 Angstrom)\n")
        fh.write("wavelength_A,flux,uncertainty\n")
        np.savetxt(fh, np.c_[wave, flux, sigma], delimiter=",")
    return path


@pytest.mark.slow
def test_json_has_the_documented_keys(star_csv, capsys):
    assert cli.main(["measure", "--json", "--ew", "5000:5002", str(star_csv)]) == 0
    out = json.loads(capsys.readouterr().out)
    for key in REQUIRED:
        assert key in out
    # the file says nothing of time, site or coordinates: no barycentric value, and why
    assert out["barycentric_kms"] is None and out["rv_kms"] is None
    assert any("missing time, site, coordinates" in n for n in out["notes"])
    # -55 km/s injected (relativistic Doppler, astropy doppler_relativistic): within 3 sigma
    assert abs(out["rv_obs_kms"] + 55.0) < 3 * out["rv_err_kms"]
    assert out["teff_method"] == "Planck colour temperature"  # flux unit is calibrated
    assert len(out["lines"]) > 20 and {"observed_A", "rest_A", "species"} <= set(out["lines"][0])
    assert len(out["ew"]) == 1


@pytest.mark.slow
def test_overrides_give_barycentric_velocity(star_csv, capsys):
    # Wright & Eastman (2014), PASP 126, 838: v = v_obs + v_bary + v_obs v_bary / c
    assert cli.main(["measure", "--json", str(star_csv), "--time", "2024-03-01T03:00:00",
                     "--site=-30.0,-70.7,2200", "--radec", "101.3,-16.7"]) == 0
    out = json.loads(capsys.readouterr().out)
    v, b = out["rv_obs_kms"], out["barycentric_kms"]
    assert b is not None
    assert out["rv_kms"] == pytest.approx(v + b + v * b / 299792.458, abs=1e-9)


@pytest.mark.slow
def test_readable_output(star_csv, capsys):
    assert cli.main(["measure", str(star_csv)]) == 0
    out = capsys.readouterr().out
    assert "radial velocity" in out and "identified lines" in out and "vacuum" in out


def test_missing_file_is_one_line_error(run_striae, tmp_path):
    # in a real subprocess: exit 2, one line, no traceback
    proc = run_striae("measure", tmp_path / "nope.fits")
    assert_one_line_error(proc, "nope.fits", "no such file")


def _error_line(capsys, argv):
    assert cli.main(argv) == 2
    err = capsys.readouterr().err
    assert err.count("\n") == 1 and err.startswith("striae: ")
    return err


def test_bad_ew_range_is_one_line_error(star_csv, capsys):
    assert "--ew" in _error_line(capsys, ["measure", str(star_csv), "--ew", "6000:5000"])


def test_unknown_star_in_atlas_is_one_line_error(tmp_path, capsys):
    assert "not a built atlas" in _error_line(capsys, ["measure", str(tmp_path), "vega"])


def test_bad_site_is_one_line_error(star_csv, capsys):
    assert "--site" in _error_line(capsys, ["measure", str(star_csv), "--site", "1,2"])


@pytest.mark.slow
def test_measure_a_star_of_a_built_atlas(star_csv, tmp_path, capsys):
    # The atlas path reads the stored strips (overlaps removed) and gives the same
    # velocity as the file, within the errors (injected -55 km/s).

    from atlas.build import build_atlas

    rep = build_atlas([str(star_csv)], str(tmp_path / "atlas"), progress=False)
    assert rep.committed
    cat = json.loads((tmp_path / "atlas" / "atlas.json").read_text())
    star = cat["stars"][0]["id"]
    assert cli.main(["measure", "--json", str(tmp_path / "atlas"), star]) == 0
    out = json.loads(capsys.readouterr().out)
    assert out["medium"] == "vacuum"
    assert abs(out["rv_obs_kms"] + 55.0) < 3 * out["rv_err_kms"]
    assert out["spectral_class"] is not None
