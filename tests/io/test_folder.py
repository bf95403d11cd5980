"""Folders as inputs: every readable file taken, each unreadable one reported in one line.

The spectra are written with astropy following FITS WCS Paper I (Greisen &
Calabretta 2002, A&A 395, 1061): ``x = CRVAL1 + CDELT1 (p - CRPIX1)``, and the
multispec ``WAT2`` convention (published description, from memory; see
atlas/io/wat.py); the built atlas's ranges are checked against those formulas.
"""

from __future__ import annotations

import gzip
import json

import numpy as np
import pytest
from astropy.io import fits

from atlas import cli
from atlas.errors import InputError
from atlas.io.folder import expand

N = 4000
P = np.arange(1, N + 1, dtype=float)


def _linear(path, crval, step, gz=False):
    hdu = fits.PrimaryHDU(1.0 + 0.05 * np.sin(P / 7.0))
    hdu.header.update(
        CTYPE1="LINEAR",
        CRVAL1=crval,
        CRPIX1=1.0,
        CDELT1=step,
        VACUUM=True,
        OBJECT=path.stem.split(".")[0],
    )
    hdu.writeto(path.with_suffix(".tmp"))
    raw = path.with_suffix(".tmp").read_bytes()
    path.with_suffix(".tmp").unlink()
    path.write_bytes(gzip.compress(raw) if gz else raw)
    return crval, crval + step * (N - 1)


def _multispec(path):
    hdu = fits.PrimaryHDU(np.vstack([1.0 + 0.05 * np.cos(P / 5.0)] * 2))
    hdu.header.update(
        WAT0_001="system=multispec",
        AIRORVAC="vac",
        OBJECT="Invented Star 30",
        WAT1_001="wtype=multispec label=Wavelength units=angstroms",
    )
    text = f'wtype=multispec spec1 = "1 1 1 3.75 2e-6 {N} 0. 1. 2." spec2 = "2 2 0 6000. 0.01 {N} 0. 1. 2."'
    for k in range(0, len(text), 68):
        hdu.header[f"WAT2_{k // 68 + 1:03d}"] = text[k : k + 68]
    hdu.writeto(path)
    return 10**3.75, 6000.0 + 0.01 * (N - 1)


@pytest.fixture
def night(tmp_path):
    top = tmp_path / "night"
    (top / "sub").mkdir(parents=True)
    (top / ".hidden").mkdir()
    ranges = {
        "a": _linear(top / "a.fits", 5000.0, 0.02),
        "b": _linear(top / "sub" / "b.fits.gz", 6000.0, 0.03, gz=True),
        "invented-star-30": _multispec(top / "c.fits"),
    }
    (top / "notes.txt").write_text("Night log: clouds at 23:10.\n")
    (top / ".hidden" / "x.fits").write_bytes(b"junk")
    return top, ranges


def test_expand_a_folder_flat_and_recursive(night):
    top, _ = night
    files, bad = expand([top])
    assert [f.split("/")[-1] for f in files] == ["a.fits", "c.fits"]
    assert [(p.split("/")[-1], "not a spectrum file" in r) for p, r in bad] == [("notes.txt", True)]
    files, bad = expand([top], recursive=True)
    assert sorted(f.split("/")[-1] for f in files) == ["a.fits", "b.fits.gz", "c.fits"]
    files, _ = expand([str(top / "**" / "*.gz")], recursive=True)
    assert [f.split("/")[-1] for f in files] == ["b.fits.gz"]
    files, _ = expand([top / "a.fits", top, str(top / "*.fits")])  # no repeats
    assert [f.split("/")[-1] for f in files] == ["a.fits", "c.fits"]


def test_missing_path_and_empty_pattern_are_errors(tmp_path):
    with pytest.raises(InputError, match="no such file or folder"):
        expand([tmp_path / "nope"])
    with pytest.raises(InputError, match="no file matches"):
        expand([str(tmp_path / "*.fits")])


def test_inspect_a_folder_reports_the_bad_file_in_one_line(night, capsys):
    top, _ = night
    code = cli.main(["inspect", "--json", "--recursive", str(top)])
    out = capsys.readouterr()
    assert code == 2
    err = [ln for ln in out.err.splitlines() if ln.strip()]
    assert err == [f"striae: {top / 'notes.txt'}: " + err[0].split(": ", 2)[2]]
    recs = json.loads(out.out)
    assert sorted(r["format"] for r in recs) == ["fits_linear", "fits_linear", "fits_multispec"]


def test_build_a_folder_round_trip(night, tmp_path, capsys):
    top, ranges = night
    out = tmp_path / "atlas"
    code = cli.main(["build", str(top), "--recursive", "--out", str(out), "--quiet"])
    captured = capsys.readouterr()
    assert code == 2  # notes.txt is unreadable; the rest is built
    assert [ln for ln in captured.err.splitlines() if ln.startswith("striae: ")] == [
        ln for ln in captured.err.splitlines() if "notes.txt" in ln
    ]
    catalog = json.loads((out / "atlas.json").read_text())
    got = {s["id"]: (s["wavelength_min_A"], s["wavelength_max_A"]) for s in catalog["stars"]}
    assert set(got) == set(ranges)
    for star, (lo, hi) in ranges.items():
        np.testing.assert_allclose(got[star], (lo, hi), rtol=1e-9)  # vacuum files: no conversion
