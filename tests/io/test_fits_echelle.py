"""Multi-order echelle FITS: flux and wavelength images kept as orders."""

from __future__ import annotations

import numpy as np
import pytest
from astropy.io import fits

import atlas.io
from atlas.errors import InputError
from atlas.spectrum import is_echelle

ORDERS, PIX = 4, 200


def _echelle(path, *, wave=None, flux=None, sigma=None, wave_unit="Angstrom", medium="air"):
    if wave is None:
        starts = 5000.0 + 40.0 * np.arange(ORDERS)
        wave = starts[:, None] + 0.25 * np.arange(PIX)[None, :]
    if flux is None:
        flux = np.ones(wave.shape) + 0.01 * np.arange(ORDERS)[:, None]
    prim = fits.PrimaryHDU(flux)
    prim.header["OBJECT"] = "Invented Star 9"
    w = fits.ImageHDU(wave, name="WAVELENGTH")
    if wave_unit:
        w.header["BUNIT"] = wave_unit
    if medium:
        w.header["MEDIUM"] = medium
    hdus = [prim, w]
    if sigma is not None:
        hdus.append(fits.ImageHDU(sigma, name="ERROR"))
    fits.HDUList(hdus).writeto(path)
    return path, wave, flux


def test_orders_are_kept(tmp_path):
    path, wave, flux = _echelle(tmp_path / "e.fits", sigma=np.full((ORDERS, PIX), 0.02))
    assert atlas.io.detect(path) == "fits_echelle"
    ds = atlas.io.read(path)
    assert is_echelle(ds) and ds["flux"].dims == ("order", "sample")
    assert ds.sizes == {"order": ORDERS, "sample": PIX}
    np.testing.assert_array_equal(ds["wavelength"].values, wave)
    np.testing.assert_array_equal(ds["flux"].values, flux)
    np.testing.assert_allclose(ds["uncertainty"].values, 0.02)
    assert ds["wavelength"].attrs["medium"] == "air"
    assert ds.attrs["target"] == "Invented Star 9"


def test_descending_orders_are_reversed_one_by_one(tmp_path):
    starts = 5000.0 + 40.0 * np.arange(ORDERS)
    wave = starts[:, None] + 0.25 * np.arange(PIX)[None, :]
    wave[1] = wave[1, ::-1]
    flux = np.tile(np.arange(PIX, dtype=float), (ORDERS, 1))
    path, _, _ = _echelle(tmp_path / "e.fits", wave=wave, flux=flux)
    ds = atlas.io.read(path)
    assert np.all(np.diff(ds["wavelength"].values, axis=1) > 0)
    np.testing.assert_array_equal(ds["flux"].values[1], np.arange(PIX)[::-1])
    np.testing.assert_array_equal(ds["flux"].values[0], np.arange(PIX))


def test_wavelength_unit_nm_and_medium_unknown(tmp_path):
    starts = 500.0 + 4.0 * np.arange(ORDERS)
    wave = starts[:, None] + 0.025 * np.arange(PIX)[None, :]
    path, _, _ = _echelle(tmp_path / "e.fits", wave=wave, wave_unit="nm", medium=None)
    ds = atlas.io.read(path)
    np.testing.assert_allclose(ds["wavelength"].values, wave * 10.0)  # 1 nm = 10 Å (SI)
    assert ds["wavelength"].attrs["medium"] == "unknown"


def test_shape_mismatch_between_flux_and_wavelength(tmp_path):
    starts = 5000.0 + 40.0 * np.arange(ORDERS)
    wave = starts[:, None] + 0.25 * np.arange(PIX - 5)[None, :]
    path, _, _ = _echelle(tmp_path / "e.fits", wave=wave, flux=np.ones((ORDERS, PIX)))
    with pytest.raises(InputError, match="length mismatch"):
        atlas.io.read(path)


def test_one_empty_order_is_masked_not_refused(tmp_path):
    flux = np.ones((ORDERS, PIX))
    flux[2] = np.nan
    path, _, _ = _echelle(tmp_path / "e.fits", flux=flux)
    ds = atlas.io.read(path)
    assert ds["mask"].values[2].all() and not ds["mask"].values[[0, 1, 3]].any()


def test_wavelength_image_unit_from_cunit1_or_inferred(tmp_path):
    """Unit from CUNIT1 when BUNIT is absent; none at all: inferred from the range
    (200-3,000 nm, common practice); 1 nm = 10 Å (SI)."""
    starts = 500.0 + 4.0 * np.arange(ORDERS)
    wave = starts[:, None] + 0.025 * np.arange(PIX)[None, :]
    path, _, _ = _echelle(tmp_path / "c.fits", wave=wave, wave_unit=None)
    with fits.open(path, mode="update") as hdul:
        hdul["WAVELENGTH"].header["CUNIT1"] = "nm"
    ds = atlas.io.read(path)
    np.testing.assert_allclose(ds["wavelength"].values, wave * 10.0)
    assert "wave_unit_inferred" not in ds.attrs
    path, _, _ = _echelle(tmp_path / "n.fits", wave=wave, wave_unit=None)
    ds = atlas.io.read(path)
    np.testing.assert_allclose(ds["wavelength"].values, wave * 10.0)
    assert "inferred as nm" in ds.attrs["wave_unit_inferred"]
    one = tmp_path / "one.fits"
    fits.HDUList(
        [fits.PrimaryHDU(np.ones(PIX)), fits.ImageHDU(wave[0] / 1000.0, name="WAVELENGTH")]
    ).writeto(one)
    ds = atlas.io.read(one)
    assert ds.attrs["format"] == "fits_image"
    np.testing.assert_allclose(ds["wavelength"].values, wave[0] * 10.0)  # µm -> Å
    assert "inferred as µm" in ds.attrs["wave_unit_inferred"]
