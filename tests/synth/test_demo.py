"""The demo data set: regenerates bit for bit, readable, and as the scenario says."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest

from atlas.synth import demo

REPO = Path(__file__).resolve().parents[2]
DEMO = REPO / "demo_spectra"
from tests.conftest import assert_one_line_error  # noqa: E402


@pytest.mark.slow
def test_demo_regenerates_byte_identically(tmp_path):
    demo.write_demo(tmp_path)
    names = sorted(p.name for p in tmp_path.iterdir())
    expected = sorted([o.file for o in demo.OBSERVATIONS] + ["README.md"])
    assert names == expected
    for name in names:
        assert (tmp_path / name).read_bytes() == (DEMO / name).read_bytes(), name


def test_demo_set_is_small_and_spans_the_classes():
    total = sum(p.stat().st_size for p in DEMO.iterdir() if p.is_file())
    assert total < 20 * 1024 * 1024
    letters = {o.spectral_class[0] for o in demo.OBSERVATIONS}
    assert {"O", "B", "A", "F", "G", "K", "M"} <= letters
    assert sum("III" in o.spectral_class for o in demo.OBSERVATIONS) == 1
    forms = [o.form for o in demo.OBSERVATIONS]
    assert forms.count("csv") == 1 and forms.count("echelle") == 1


def test_star_on_two_nights_has_two_barycentric_corrections():
    # Wright & Eastman (2014): v_bary changes with the Earth's orbit (up to +-30 km/s over a year).
    by_name = {}
    for o in demo.OBSERVATIONS:
        by_name.setdefault(o.name, []).append(demo.barycentric_kms(o))
    twice = [v for v in by_name.values() if len(v) == 2]
    assert len(twice) == 1
    assert abs(twice[0][0] - twice[0][1]) > 10.0


def test_demo_barycentric_agrees_with_physics_module():
    from atlas.physics import barycentric as bary

    o = demo.OBSERVATIONS[0]
    v = bary.correction_kms(demo.mid_exposure_utc(o), o.ra_deg, o.dec_deg,
                            demo.OBSERVATORY["lat_deg"], demo.OBSERVATORY["lon_deg"], demo.OBSERVATORY["height_m"])
    assert v == pytest.approx(demo.barycentric_kms(o), abs=1e-6)


def test_every_demo_file_reads_with_the_io_readers():
    import atlas.io as io

    for o in demo.OBSERVATIONS:
        ds = io.read(DEMO / o.file)
        assert ds.attrs["target"] == o.name
        assert ds.attrs["resolving_power"] == pytest.approx(o.resolving_power)
        assert ds["wavelength"].attrs["medium"] == o.medium
        assert ds.attrs["site_height_m"] == pytest.approx(demo.OBSERVATORY["height_m"])
        w = ds["wavelength"].values
        assert np.nanmin(w) == pytest.approx(o.range_A[0], abs=25.0)
        assert np.nanmax(w) == pytest.approx(o.range_A[1], abs=25.0)


def test_requested_snr_is_in_the_files():
    # The files' uncertainty is the known photon noise: continuum / sigma at 5,500 Å = S/N.
    from astropy.io import fits

    o = demo.OBSERVATIONS[0]  # the O star: few lines near 5,500 Å
    with fits.open(DEMO / o.file) as h:
        flux, sigma = h[0].data.astype(float), h["UNCERTAINTY"].data.astype(float)
        hdr = h[0].header
    wave = hdr["CRVAL1"] * np.exp(np.arange(flux.size) * hdr["CDELT1"] / hdr["CRVAL1"])
    near = np.abs(wave - demo.SNR_REF_A) < 3.0
    snr = np.median(flux[near]) / np.median(sigma[near])
    assert snr == pytest.approx(o.snr, rel=0.03)
    # and the scatter about a smooth continuum agrees (DER_SNR, Stoehr et al. 2008)
    seg = flux[(wave > 5500) & (wave < 5560)]
    der = np.median(seg) / (1.482602 / np.sqrt(6) * np.median(np.abs(2 * seg[2:-2] - seg[:-4] - seg[4:])))
    assert der == pytest.approx(o.snr, rel=0.06)


def run_in_process(capsys, *args):
    """Run ``striae`` in this process (quicker than a subprocess); returns returncode and stderr."""
    from types import SimpleNamespace

    from atlas.cli import main

    code = main([str(a) for a in args])
    return SimpleNamespace(returncode=code, stderr=capsys.readouterr().err)


def test_demo_command_rejects_bad_plot_name(capsys, tmp_path):
    proc = run_in_process(capsys, "demo", "--out", tmp_path / "d", "--plot", tmp_path / "x.txt")
    assert_one_line_error(proc, "--plot")
    assert not (tmp_path / "d").exists()


def test_demo_command_rejects_out_that_is_a_file(capsys, tmp_path):
    f = tmp_path / "afile"
    f.write_text("x")
    proc = run_in_process(capsys, "demo", "--out", f)
    assert_one_line_error(proc, "--out")


@pytest.mark.slow
def test_striae_inspect_reads_every_demo_file(run_striae):
    import json

    files = [DEMO / o.file for o in demo.OBSERVATIONS]
    proc = run_striae("inspect", "--json", *files)
    assert proc.returncode == 0, proc.stderr
    records = {Path(r["file"]).name: r for r in json.loads(proc.stdout)}
    assert set(records) == {o.file for o in demo.OBSERVATIONS}
    for o in demo.OBSERVATIONS:
        r = records[o.file]
        assert r["target"] == o.name and r["medium"] == o.medium
        # same astropy barycentric correction (Wright & Eastman 2014) from the file's header
        assert r["barycentric_kms"] == pytest.approx(demo.barycentric_kms(o), abs=1e-3)
