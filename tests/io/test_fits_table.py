"""FITS table spectra: columns found by name, units from TUNITn, medium from TCTYPn."""

from __future__ import annotations

import astropy.units as u
import numpy as np
import pytest
from astropy.io import fits

import atlas.io
from atlas.errors import InputError

N = 300


def _table(
    path,
    wave,
    flux,
    *,
    wave_name="WAVELENGTH",
    wave_unit="Angstrom",
    ctype=None,
    sigma=None,
    flux_unit=None,
    header=None,
):
    cols = [
        fits.Column(name=wave_name, format="D", array=wave, unit=wave_unit),
        fits.Column(name="Flux", format="D", array=flux, unit=flux_unit),
    ]
    if sigma is not None:
        cols.append(fits.Column(name="flux_err", format="D", array=sigma))
    hdu = fits.BinTableHDU.from_columns(cols)
    if ctype:
        hdu.header["TCTYP1"] = ctype
    for k, v in (header or {}).items():
        hdu.header[k] = v
    fits.HDUList([fits.PrimaryHDU(), hdu]).writeto(path)
    return path


@pytest.mark.parametrize(
    ("unit", "scale"), [("Angstrom", 1.0), ("nm", 0.1), ("um", 1e-4), ("m", 1e-10)]
)
def test_tunit_is_converted_to_angstrom(tmp_path, unit, scale):
    wave_A = np.linspace(4000.0, 4100.0, N)
    path = _table(tmp_path / "t.fits", wave_A * scale, np.ones(N), wave_unit=unit)
    wave = atlas.io.read(path)["wavelength"].values
    # expected values converted independently with astropy.units
    np.testing.assert_allclose(wave, (wave_A * scale * u.Unit(unit)).to_value(u.AA), rtol=1e-12)
    np.testing.assert_allclose(wave, wave_A, rtol=1e-12)


@pytest.mark.parametrize(
    ("ctype", "medium"), [("AWAV", "air"), ("WAVE", "vacuum"), (None, "unknown")]
)
def test_tctyp_sets_the_medium(tmp_path, ctype, medium):
    # AWAV = air, WAVE = vacuum (Greisen et al. 2006, A&A 446, 747, Table 1)
    path = _table(tmp_path / "t.fits", np.linspace(4000, 4100, N), np.ones(N), ctype=ctype)
    assert atlas.io.read(path)["wavelength"].attrs["medium"] == medium


def test_columns_uncertainty_flux_unit_and_metadata(tmp_path):
    wave = np.linspace(4000, 4100, N)
    flux = np.linspace(1.0, 2.0, N)
    flux[7] = np.nan
    path = _table(
        tmp_path / "t.fits",
        wave,
        flux,
        wave_name="Lambda",
        sigma=np.full(N, 0.1),
        flux_unit="erg / (Angstrom s cm2)",
        header={"OBJECT": "Invented Star 3"},
    )
    ds = atlas.io.read(path)
    assert ds.attrs["format"] == "fits_table"
    assert ds.attrs["flux_unit"] == "erg / (Angstrom s cm2)"
    assert ds.attrs["target"] == "Invented Star 3"
    np.testing.assert_allclose(ds["uncertainty"].values, 0.1)
    assert ds.sizes["sample"] == N and ds["mask"].values[7] and ds["mask"].values.sum() == 1


def test_single_row_with_array_cells(tmp_path):
    wave = np.linspace(4000, 4100, N)
    cols = [
        fits.Column(name="WAVE", format=f"{N}D", array=wave[np.newaxis, :], unit="Angstrom"),
        fits.Column(name="FLUX", format=f"{N}D", array=np.ones((1, N))),
    ]
    path = tmp_path / "row.fits"
    fits.HDUList([fits.PrimaryHDU(), fits.BinTableHDU.from_columns(cols)]).writeto(path)
    np.testing.assert_allclose(atlas.io.read(path)["wavelength"].values, wave)


def test_descending_table_is_reversed(tmp_path):
    wave = np.linspace(4100, 4000, N)
    flux = np.linspace(0.0, 1.0, N)
    ds = atlas.io.read(_table(tmp_path / "t.fits", wave, flux))
    np.testing.assert_allclose(ds["wavelength"].values, wave[::-1])
    np.testing.assert_allclose(ds["flux"].values, flux[::-1])


def test_missing_tunit_needs_wave_unit(tmp_path):
    path = _table(tmp_path / "t.fits", np.linspace(400, 410, N), np.ones(N), wave_unit=None)
    with pytest.raises(InputError, match="--wave-unit"):
        atlas.io.read(path)
    assert atlas.io.read(path, wave_unit="nm")["wavelength"].values[0] == pytest.approx(4000.0)


def test_table_without_wavelength_column(tmp_path):
    path = _table(tmp_path / "t.fits", np.arange(N, dtype=float), np.ones(N), wave_name="PIXEL")
    with pytest.raises(InputError, match="no spectral axis: no wavelength column"):
        atlas.io.read(path)


def test_unknown_and_non_length_units(tmp_path):
    path = _table(tmp_path / "a.fits", np.linspace(4000, 4100, N), np.ones(N), wave_unit="bananas")
    with pytest.raises(InputError, match="unknown unit 'bananas'"):
        atlas.io.read(path)
    path = _table(tmp_path / "b.fits", np.linspace(4000, 4100, N), np.ones(N), wave_unit="Hz")
    with pytest.raises(InputError, match="not a wavelength unit"):
        atlas.io.read(path)
