"""The older linear-dispersion cards, degenerate axes and one spectrum per row.

Files are written here with astropy following FITS WCS Paper I (Greisen &
Calabretta 2002, A&A 395, 1061: ``x = CRVAL1 + CD1_1 (p - CRPIX1)``, CD taking
precedence over CDELT, CRPIX1 defaulting to 0; from memory) and Paper III (Greisen et al. 2006, A&A 446,
747) for ``WAVE``; ``DC-FLAG``, ``W0``/``WPC`` and ``AIRORVAC`` as the published
header convention describes them (from memory).  Expected wavelengths are
computed in each test from those formulas.
"""

from __future__ import annotations

import numpy as np
import pytest
from astropy.io import fits

import atlas.io
from atlas.errors import InputError

N = 120
P = np.arange(1, N + 1, dtype=float)  # FITS pixel numbers start at 1 (Paper I)


def _write(path, data, **cards):
    hdu = fits.PrimaryHDU(np.asarray(data, dtype=np.float32))
    for k, v in cards.items():
        key = k.replace("_", "-") if k == "DC_FLAG" else k
        hdu.header[f"HIERARCH {key}" if len(key) > 8 else key] = v
    hdu.writeto(path)
    return path


def test_linear_ctype_with_crval_cdelt(tmp_path):
    path = _write(
        tmp_path / "a.fits",
        np.ones(N),
        CTYPE1="LINEAR",
        CRVAL1=6500.0,
        CRPIX1=11.0,
        CDELT1=0.02,
        AIRORVAC="air",
    )
    assert atlas.io.detect(path) == "fits_linear"
    ds = atlas.io.read(path)
    np.testing.assert_allclose(ds["wavelength"].values, 6500.0 + 0.02 * (P - 11.0), rtol=1e-13)
    assert ds["wavelength"].attrs["medium"] == "air"


def test_no_ctype_cd_wins_over_cdelt_and_unit_in_cunit(tmp_path):
    path = _write(
        tmp_path / "b.fits",
        np.ones(N),
        CRVAL1=650.0,
        CRPIX1=1.0,
        CD1_1=0.002,
        CDELT1=99.0,
        CUNIT1="nm",
        VACUUM=True,
    )
    ds = atlas.io.read(path)
    np.testing.assert_allclose(
        ds["wavelength"].values, 10.0 * (650.0 + 0.002 * (P - 1)), rtol=1e-13
    )  # 1 nm = 10 Å (SI)
    assert ds["wavelength"].attrs["medium"] == "vacuum"


def test_dc_flag_one_is_log10_and_crpix_defaults_to_zero(tmp_path):
    path = _write(
        tmp_path / "c.fits", np.ones(N), CTYPE1="LINEAR", CRVAL1=3.6, CDELT1=2e-5, DC_FLAG=1
    )
    ds = atlas.io.read(path)
    # CRPIX1 absent: 0.0 (Paper I, from memory; astropy.wcs/wcslib default the same),
    # so pixel p sits at CRVAL1 + CDELT1 * p
    np.testing.assert_allclose(ds["wavelength"].values, 10 ** (3.6 + 2e-5 * P), rtol=1e-12)
    assert ds["wavelength"].attrs["medium"] == "unknown"


def test_w0_wpc_and_units_in_wat1(tmp_path):
    path = _write(
        tmp_path / "d.fits",
        np.ones(N),
        W0=0.65,
        WPC=2e-6,
        WAT1_001="wtype=linear label=Wavelength units=microns",
    )
    ds = atlas.io.read(path)
    np.testing.assert_allclose(ds["wavelength"].values, 1e4 * (0.65 + 2e-6 * (P - 1)), rtol=1e-12)


def test_bad_dc_flag_is_refused(tmp_path):
    path = _write(tmp_path / "e.fits", np.ones(N), CRVAL1=5000.0, CDELT1=0.1, DC_FLAG=-1)
    with pytest.raises(InputError, match="DC-FLAG is -1"):
        atlas.io.read(path)


@pytest.mark.parametrize("shape", [(1, N), (1, 1, N)])
def test_degenerate_axes_give_one_spectrum(tmp_path, shape):
    flux = np.arange(N, dtype=float).reshape(shape)
    for ctype, name in (("LINEAR", "fits_linear"), ("WAVE", "fits_image")):
        path = _write(
            tmp_path / f"{ctype}.fits",
            flux,
            CTYPE1=ctype,
            CRVAL1=5000.0,
            CRPIX1=1.0,
            CDELT1=0.1,
            CUNIT1="Angstrom",
        )
        assert atlas.io.detect(path) == name
        ds = atlas.io.read(path)
        assert ds["flux"].dims == ("sample",)
        np.testing.assert_allclose(ds["wavelength"].values, 5000.0 + 0.1 * (P - 1), rtol=1e-12)
        np.testing.assert_array_equal(ds["flux"].values, np.arange(N))
        path.unlink()


@pytest.mark.parametrize("ctype", ["LINEAR", "WAVE"])
def test_rows_share_the_axis(tmp_path, ctype):
    flux = np.vstack([np.full(N, 1.0), np.full(N, 2.0), np.full(N, 3.0)])
    path = _write(
        tmp_path / "r.fits",
        flux,
        CTYPE1=ctype,
        CRVAL1=5000.0,
        CRPIX1=1.0,
        CDELT1=0.1,
        CUNIT1="Angstrom",
    )
    ds = atlas.io.read(path)
    assert ds.sizes == {"order": 3, "sample": N}
    for k in range(3):
        np.testing.assert_allclose(ds["wavelength"].values[k], 5000.0 + 0.1 * (P - 1), rtol=1e-12)
    np.testing.assert_array_equal(ds["flux"].values[:, 0], [1.0, 2.0, 3.0])


def test_linear_bands_with_noise_band(tmp_path):
    data = np.ones((2, 1, N))
    data[1] = 0.25
    path = _write(
        tmp_path / "bands.fits",
        data,
        CTYPE1="LINEAR",
        CRVAL1=5000.0,
        CDELT1=0.1,
        BANDID1="spectrum",
        BANDID2="sigma - weights variance",
    )
    ds = atlas.io.read(path)
    assert ds["flux"].dims == ("sample",)
    np.testing.assert_allclose(ds["uncertainty"].values, 0.25)


@pytest.mark.parametrize(
    ("key", "value"),
    [("RESPOWER", 42000.0), ("SPEC_RES", 48000.0), ("RESOLVING_POWER", 50000.0), ("R", 65000.0)],
)
def test_resolving_power_keywords(tmp_path, key, value):
    path = _write(tmp_path / "rp.fits", np.ones(N), CRVAL1=5000.0, CDELT1=0.1, **{key: value})
    assert atlas.io.read(path).attrs["resolving_power"] == value
