"""A small atlas built with the real build, shared by the export tests.

The spectra are invented test data (a flat continuum with Gaussian dips at a few
line-list wavelengths); nothing here is a check value of physics.
"""

from __future__ import annotations

import numpy as np
import pytest
from astropy.io import fits

N_SAMPLES = 20_000
LO_A, HI_A = 6450.0, 6650.0
STRIP_KMS = 1000.0
DIPS_VAC_A = (6495.575, 6564.606, 6594.735, 6645.465)


def write_spectrum(path, *, name, with_site=True, n=N_SAMPLES, seed=3):
    """A FITS table spectrum (vacuum wavelengths, Å) with dips at ``DIPS_VAC_A``."""
    rng = np.random.default_rng(seed)
    wave = np.geomspace(LO_A, HI_A, n)
    flux = 1000.0 * (1.0 + 0.1 * (wave - LO_A) / (HI_A - LO_A))
    for w0 in DIPS_VAC_A:
        flux *= 1.0 - 0.5 * np.exp(-0.5 * ((wave - w0) / 0.3) ** 2)
    flux += rng.normal(0.0, 3.0, n)
    cols = [fits.Column(name="WAVELENGTH", format="D", array=wave, unit="Angstrom"),
            fits.Column(name="FLUX", format="D", array=flux)]
    hdu = fits.BinTableHDU.from_columns(cols)
    hdu.header["TCTYP1"] = "WAVE"  # vacuum (Greisen et al. 2006, A&A 446, 747)
    primary = fits.PrimaryHDU()
    primary.header["OBJECT"] = name
    if with_site:
        primary.header["RA"] = 150.0
        primary.header["DEC"] = 12.0
        primary.header["DATE-OBS"] = "2024-03-05T21:14:03"
        primary.header["OBSGEO-B"] = 40.0
        primary.header["OBSGEO-L"] = -5.0
        primary.header["OBSGEO-H"] = 1500.0
    fits.HDUList([primary, hdu]).writeto(path)
    return path


@pytest.fixture(scope="session")
def small_atlas(tmp_path_factory):
    """Path of an atlas with two stars: ``test-star-alpha`` (site, time and coordinates
    known: barycentric correction computed) and ``test-star-nosite`` (none of those)."""
    from atlas.build import BuildOptions, build_atlas

    root = tmp_path_factory.mktemp("export-atlas")
    a = write_spectrum(root / "alpha.fits", name="Test Star Alpha")
    b = write_spectrum(root / "nosite.fits", name="Test Star Nosite", with_site=False, seed=4)
    out = root / "atlas"
    report = build_atlas([str(a), str(b)], str(out), BuildOptions(strip_kms=STRIP_KMS),
                         progress=False)
    assert report.committed and not report.failed, report.failed
    return out
