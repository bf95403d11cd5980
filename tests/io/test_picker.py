"""The picker: each reader says whether it can read a file; the first that can, reads it."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import pytest
from astropy.io import fits

import atlas.io
from atlas.errors import InputError

MALFORMED = Path(__file__).resolve().parents[1] / "data" / "malformed"


def _image(path):
    hdu = fits.PrimaryHDU(np.ones(50))
    hdu.header.update(CTYPE1="WAVE", CUNIT1="Angstrom", CRVAL1=5000.0, CDELT1=0.1, CRPIX1=1.0)
    hdu.writeto(path)
    return path


def _table(path):
    cols = [
        fits.Column(name="wave", format="D", array=np.arange(1.0, 51.0), unit="nm"),
        fits.Column(name="flux", format="D", array=np.ones(50)),
    ]
    fits.HDUList([fits.PrimaryHDU(), fits.BinTableHDU.from_columns(cols)]).writeto(path)
    return path


def test_every_reader_has_the_backend_interface():
    for reader in atlas.io.READERS:
        assert isinstance(reader.NAME, str) and isinstance(reader.DESCRIPTION, str)
        assert callable(reader.can_read) and callable(reader.read)
    assert set(atlas.io.FORMATS) == {
        "fits_image", "fits_table", "fits_echelle", "fits_linear", "fits_multispec", "text"
    }


def test_detect_names_each_format(tmp_path):
    assert atlas.io.detect(_image(tmp_path / "a.fits")) == "fits_image"
    assert atlas.io.detect(_table(tmp_path / "b.fits")) == "fits_table"
    csv = tmp_path / "c.txt"
    csv.write_text("wavelength_nm,flux\n500.0,1\n500.1,1\n")
    assert atlas.io.detect(csv) == "text"


def test_extension_does_not_decide(tmp_path):
    odd = tmp_path / "spectrum.data"
    odd.write_bytes(_image(tmp_path / "a.fits").read_bytes())
    assert atlas.io.detect(odd) == "fits_image"


def test_can_read_never_raises_on_malformed_files():
    for path in sorted(MALFORMED.iterdir()):
        for reader in atlas.io.READERS:
            assert reader.can_read(path) in (True, False)


def test_forced_format_and_unknown_format(tmp_path):
    path = _image(tmp_path / "a.fits")
    assert atlas.io.read(path, format="fits_image").attrs["format"] == "fits_image"
    with pytest.raises(InputError, match="unknown format 'jpeg'") as exc:
        atlas.io.read(path, format="jpeg")
    assert exc.value.where == "--format"
    with pytest.raises(InputError, match="FITS file, not a text table"):
        atlas.io.read(path, format="text")


def test_missing_file_and_folder(tmp_path):
    with pytest.raises(InputError, match="no such file"):
        atlas.io.read(tmp_path / "nothing.fits")
    with pytest.raises(InputError, match="is a folder"):
        atlas.io.read(tmp_path)


def test_fits_with_no_spectrum_in_it(tmp_path):
    path = tmp_path / "picture.fits"
    fits.PrimaryHDU(np.ones((20, 30))).writeto(path)
    with pytest.raises(InputError, match="no spectrum in this FITS file"):
        atlas.io.read(path)
