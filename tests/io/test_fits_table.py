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


def test_missing_tunit_is_inferred_from_the_range_or_needs_wave_unit(tmp_path):
    """Ranges: 2,000-30,000 Å, 200-3,000 nm, 0.2-30 µm (common practice); 1 nm = 10 Å (SI)."""
    path = _table(tmp_path / "t.fits", np.linspace(400, 410, N), np.ones(N), wave_unit=None)
    ds = atlas.io.read(path)
    np.testing.assert_allclose(ds["wavelength"].values, 10.0 * np.linspace(400, 410, N))
    assert "inferred as nm" in ds.attrs["wave_unit_inferred"]
    assert atlas.io.read(path, wave_unit="A")["wavelength"].values[0] == pytest.approx(400.0)
    um = _table(tmp_path / "u.fits", np.linspace(1.5, 1.8, N), np.ones(N), wave_unit=None)
    assert atlas.io.read(um)["wavelength"].values[0] == pytest.approx(15000.0)  # 1 µm = 1e4 Å
    # 2,100-2,400 is Å or nm: refused, --wave-unit decides
    both = _table(tmp_path / "b.fits", np.linspace(2100, 2400, N), np.ones(N), wave_unit=None)
    with pytest.raises(InputError, match="fits both Å and nm; give --wave-unit"):
        atlas.io.read(both)
    assert atlas.io.read(both, wave_unit="nm")["wavelength"].values[0] == pytest.approx(21000.0)


@pytest.mark.parametrize(
    ("name", "values", "sigma"),
    [("ERR", 0.1, 0.1), ("SIGMA", 0.1, 0.1), ("VAR", 0.04, 0.2), ("IVAR", 25.0, 0.2)],
)
def test_error_columns_and_quality_mask(tmp_path, name, values, sigma):
    """sigma = sqrt(VAR) = 1 / sqrt(IVAR) (definitions of variance and inverse variance)."""
    wave = np.linspace(5000.0, 5030.0, N)
    quality = np.zeros(N, dtype=np.int16)
    quality[[3, 10, 11]] = [1, 4, 128]
    cols = [
        fits.Column(name="WAVE", format="D", array=wave, unit="Angstrom"),
        fits.Column(name="FLUX", format="D", array=np.ones(N)),
        fits.Column(name=name, format="D", array=np.full(N, values)),
        fits.Column(name="QUALITY", format="I", array=quality),
    ]
    path = tmp_path / "q.fits"
    fits.HDUList([fits.PrimaryHDU(), fits.BinTableHDU.from_columns(cols)]).writeto(path)
    ds = atlas.io.read(path)
    np.testing.assert_allclose(ds["uncertainty"].values, sigma, rtol=1e-12)
    assert np.flatnonzero(ds["mask"].values).tolist() == [3, 10, 11]
    np.testing.assert_array_equal(ds["flux"].values, 1.0)  # masked, the values kept


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


def test_one_row_per_order_with_array_cells(tmp_path):
    """Array columns (FITS Standard 4.0, TFORMn with a repeat count): one order per row."""
    orders, n = 3, 120
    wave = 5000.0 + 50.0 * np.arange(orders)[:, None] + 0.2 * np.arange(n)[None, :]
    flux = np.ones((orders, n)) * np.arange(1, orders + 1)[:, None]
    cols = [
        fits.Column(name="WAVE", format=f"{n}D", array=wave, unit="Angstrom"),
        fits.Column(name="FLUX", format=f"{n}D", array=flux),
        fits.Column(name="SIGMA", format=f"{n}D", array=np.full((orders, n), 0.1)),
    ]
    path = tmp_path / "orders.fits"
    fits.HDUList([fits.PrimaryHDU(), fits.BinTableHDU.from_columns(cols)]).writeto(path)
    ds = atlas.io.read(path)
    assert ds.sizes == {"order": orders, "sample": n}
    np.testing.assert_array_equal(ds["wavelength"].values, wave)
    np.testing.assert_array_equal(ds["flux"].values[:, 0], [1.0, 2.0, 3.0])
    np.testing.assert_allclose(ds["uncertainty"].values, 0.1)


def test_all_samples_flagged_bad_is_refused(tmp_path):
    cols = [
        fits.Column(name="WAVE", format="D", array=np.linspace(5000.0, 5030.0, N), unit="Angstrom"),
        fits.Column(name="FLUX", format="D", array=np.ones(N)),
        fits.Column(name="MASK", format="J", array=np.ones(N, dtype=np.int32)),
    ]
    path = tmp_path / "bad.fits"
    fits.HDUList([fits.PrimaryHDU(), fits.BinTableHDU.from_columns(cols)]).writeto(path)
    with pytest.raises(InputError, match="every sample is flagged bad"):
        atlas.io.read(path)
