"""Compressed spectrum files: gzip and bzip2 by their magic bytes, tile-compressed FITS.

gzip: RFC 1952 (magic ``1f 8b``); bzip2: Python's ``bz2`` module writes the
``BZh`` header (common practice); tile compression: FITS Standard 4.0 (Pence et
al. 2010, A&A 524, A42, sect. 10), written with astropy's ``CompImageHDU``.
Wavelengths are checked against the WCS formula of FITS WCS Paper I (Greisen &
Calabretta 2002): ``CRVAL1 + CDELT1 (p - CRPIX1)``.
"""

from __future__ import annotations

import bz2
import gzip
import os

import numpy as np
import pytest
from astropy.io import fits

import atlas.io
from atlas import cli
from atlas.errors import InputError
from atlas.spectrum import sha256_of
from tests.conftest import assert_one_line_error

N = 200
P = np.arange(1, N + 1, dtype=float)
EXPECT = 5000.0 + 0.05 * (P - 1.0)


def _fits_bytes(tmp_path, ctype="WAVE"):
    path = tmp_path / "plain.fits"
    hdu = fits.PrimaryHDU(np.linspace(1.0, 2.0, N))
    hdu.header.update(CTYPE1=ctype, CUNIT1="Angstrom", CRVAL1=5000.0, CDELT1=0.05, CRPIX1=1.0)
    hdu.writeto(path)
    data = path.read_bytes()
    path.unlink()
    return data


@pytest.mark.parametrize(
    ("name", "pack"),
    [
        ("s.fits.gz", gzip.compress),
        ("s.fits.bz2", bz2.compress),
        ("no_hint.dat", gzip.compress),  # the name says nothing: the first bytes do
    ],
)
def test_compressed_fits(tmp_path, name, pack):
    path = tmp_path / name
    path.write_bytes(pack(_fits_bytes(tmp_path, ctype="LINEAR")))
    assert atlas.io.detect(path) == "fits_linear"
    ds = atlas.io.read(path)
    np.testing.assert_allclose(ds["wavelength"].values, EXPECT, rtol=1e-13)
    assert ds.attrs["source_path"] == os.path.abspath(path)
    assert ds.attrs["source_sha256"] == sha256_of(path)
    assert ds.attrs["compression"] in ("gzip", "bzip2")


@pytest.mark.parametrize("name", ["t.csv.gz", "t.txt.gz"])
def test_compressed_text(tmp_path, name):
    rows = "\n".join(f"{w:.3f},{1.0 + 0.001 * i}" for i, w in enumerate(EXPECT))
    path = tmp_path / name
    path.write_bytes(gzip.compress(f"wavelength_A,flux\n{rows}\n".encode()))
    assert atlas.io.detect(path) == "text"
    np.testing.assert_allclose(atlas.io.read(path)["wavelength"].values, EXPECT, atol=5e-4)


def test_tile_compressed_fz(tmp_path):
    data = np.linspace(1.0, 2.0, N).astype(np.float32)
    header = fits.Header()
    header.update(CTYPE1="WAVE", CUNIT1="Angstrom", CRVAL1=5000.0, CDELT1=0.05, CRPIX1=1.0)
    comp = fits.CompImageHDU(data, header, compression_type="GZIP_1", quantize_level=0.0)
    path = tmp_path / "s.fz"
    fits.HDUList([fits.PrimaryHDU(), comp]).writeto(path)
    with open(path, "rb") as fh:
        assert fh.read(9) == b"SIMPLE  ="  # a FITS file, compressed inside
    assert atlas.io.detect(path) == "fits_image"
    ds = atlas.io.read(path)
    np.testing.assert_allclose(ds["wavelength"].values, EXPECT, rtol=1e-13)
    np.testing.assert_array_equal(ds["flux"].values, data)


def test_corrupt_gzip_names_the_file(tmp_path, capsys):
    path = tmp_path / "broken.fits.gz"
    path.write_bytes(gzip.compress(_fits_bytes(tmp_path))[:300])
    with pytest.raises(InputError, match="corrupt gzip file") as exc:
        atlas.io.read(path)
    assert exc.value.where == str(path)
    code = cli.main(["inspect", str(path)])
    out = capsys.readouterr()
    proc = type("P", (), {"returncode": code, "stdout": out.out, "stderr": out.err})
    assert_one_line_error(proc, str(path), "corrupt gzip file")


def test_errors_inside_name_the_compressed_file(tmp_path):
    path = tmp_path / "shuffled.csv.gz"
    path.write_bytes(gzip.compress(b"wavelength_A,flux\n5000.0,1\n5000.2,1\n5000.1,1\n"))
    with pytest.raises(InputError, match="not monotonic") as exc:
        atlas.io.read(path)
    assert exc.value.where == str(path)


def test_tile_compressed_multispec_orders(tmp_path):
    """WAT2 cards in a tile-compressed image header (WAT convention, from memory; see wat.py)."""
    header = fits.Header()
    header["WAT0_001"] = "system=multispec"
    text = f'wtype=multispec spec1 = "1 1 0 5000. 0.05 {N} 0. 1. 2." spec2 = "2 2 1 3.71 1e-5 {N} 0. 1. 2."'
    for k in range(0, len(text), 68):
        header[f"WAT2_{k // 68 + 1:03d}"] = text[k : k + 68]
    data = np.ones((2, N), dtype=np.float32)
    comp = fits.CompImageHDU(data, header, compression_type="RICE_1", quantize_level=0.0)
    path = tmp_path / "orders.fz"
    fits.HDUList([fits.PrimaryHDU(), comp]).writeto(path)
    assert atlas.io.detect(path) == "fits_multispec"
    ds = atlas.io.read(path)
    np.testing.assert_allclose(ds["wavelength"].values[0], EXPECT, rtol=1e-13)
    np.testing.assert_allclose(
        ds["wavelength"].values[1], 10 ** (3.71 + 1e-5 * (P - 1)), rtol=1e-12
    )
