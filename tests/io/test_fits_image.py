"""FITS image spectra: wavelengths from the spectral WCS, medium, uncertainty, header metadata."""

from __future__ import annotations

import hashlib
import warnings

import astropy.units as u
import numpy as np
import pytest
from astropy.coordinates import EarthLocation, SkyCoord
from astropy.io import fits
from astropy.time import Time
from astropy.wcs import WCS

import atlas.io
from atlas.errors import InputError

N = 500
WCS_LINEAR = dict(CTYPE1="WAVE", CUNIT1="Angstrom", CRVAL1=6500.0, CDELT1=0.02, CRPIX1=11.0)


def _flux(n=N):
    return 1.0 - 0.3 * np.exp(-0.5 * ((np.arange(n) - n / 3) / 4.0) ** 2)


def _astropy_wave_A(header, n):
    """Wavelengths from astropy.wcs for pixels 0..n-1 (FITS WCS Paper III, Greisen et al. 2006, A&A 446, 747)."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        sc = WCS(header, naxis=1).pixel_to_world(np.arange(n))
    return sc.to_value(u.AA)


def test_linear_wcs_matches_astropy_and_the_paper_formula(write_image):
    path, header = write_image(_flux(), **WCS_LINEAR)
    ds = atlas.io.read(path)
    wave = ds["wavelength"].values
    # astropy.wcs evaluation (Greisen et al. 2006, A&A 446, 747)
    np.testing.assert_allclose(wave, _astropy_wave_A(header, N), rtol=0, atol=1e-9)
    # linear axis: CRVAL1 + CDELT1 * (p - CRPIX1), p counted from 1
    # (FITS WCS Paper I, Greisen & Calabretta 2002, A&A 395, 1061, sect. 2)
    p = np.arange(N) + 1.0
    np.testing.assert_allclose(wave, 6500.0 + 0.02 * (p - 11.0), rtol=0, atol=1e-9)
    assert (
        ds["wavelength"].attrs["medium"] == "vacuum"
    )  # WAVE = vacuum (Greisen et al. 2006, sect. 3.1)
    assert ds["wavelength"].dtype == np.float64
    np.testing.assert_array_equal(ds["flux"].values, _flux())
    assert ds.attrs["format"] == "fits_image"


def test_cd1_1_gives_the_same_wavelengths_as_cdelt1(write_image):
    cards = dict(WCS_LINEAR)
    del cards["CDELT1"]
    path_cd, _ = write_image(_flux(), name="cd.fits", CD1_1=0.02, **cards)
    path_cdelt, _ = write_image(_flux(), name="cdelt.fits", **WCS_LINEAR)
    np.testing.assert_allclose(
        atlas.io.read(path_cd)["wavelength"].values,
        atlas.io.read(path_cdelt)["wavelength"].values,
        rtol=0,
        atol=1e-9,
    )


def test_log_linear_wcs_matches_astropy_and_the_paper_formula(write_image):
    cards = dict(CTYPE1="WAVE-LOG", CUNIT1="Angstrom", CRVAL1=5000.0, CDELT1=0.05, CRPIX1=1.0)
    path, header = write_image(_flux(), **cards)
    wave = atlas.io.read(path)["wavelength"].values
    np.testing.assert_allclose(wave, _astropy_wave_A(header, N), rtol=1e-12)
    # logarithmic axis: lambda = lambda_r * exp(w / lambda_r), w = CDELT1 * (p - CRPIX1)
    # (Greisen et al. 2006, A&A 446, 747, sect. 3.2)
    w = 0.05 * (np.arange(N) + 1.0 - 1.0)
    np.testing.assert_allclose(wave, 5000.0 * np.exp(w / 5000.0), rtol=1e-12)
    # constant velocity step: log-spaced
    assert np.ptp(np.diff(np.log(wave))) < 1e-12


@pytest.mark.parametrize(
    ("ctype", "medium"),
    [("AWAV", "air"), ("WAVE", "vacuum"), ("AWAV-LOG", "air"), ("WAVE-LOG", "vacuum")],
)
def test_ctype_sets_the_medium(write_image, ctype, medium):
    # AWAV = air, WAVE = vacuum wavelengths (Greisen et al. 2006, A&A 446, 747, Table 1)
    cards = dict(WCS_LINEAR, CTYPE1=ctype)
    path, _ = write_image(_flux(), **cards)
    assert atlas.io.read(path)["wavelength"].attrs["medium"] == medium


def test_medium_option_overrides_the_file(write_image):
    path, _ = write_image(_flux(), **dict(WCS_LINEAR, CTYPE1="AWAV"))
    assert atlas.io.read(path, medium="vacuum")["wavelength"].attrs["medium"] == "vacuum"
    with pytest.raises(InputError, match="--medium"):
        atlas.io.read(path, medium="water")


def test_cunit1_nm_is_converted_to_angstrom(write_image):
    cards = dict(CTYPE1="WAVE", CUNIT1="nm", CRVAL1=650.0, CDELT1=0.002, CRPIX1=1.0)
    path, header = write_image(_flux(), **cards)
    wave = atlas.io.read(path)["wavelength"].values
    np.testing.assert_allclose(wave, _astropy_wave_A(header, N), rtol=1e-12)
    assert wave[0] == pytest.approx(6500.0, abs=1e-9)  # 1 nm = 10 Å (SI definition)
    assert wave[1] - wave[0] == pytest.approx(0.02, rel=1e-9)


def test_missing_cunit1_needs_wave_unit(write_image):
    cards = dict(WCS_LINEAR)
    del cards["CUNIT1"]
    path, _ = write_image(_flux(), **cards)
    with pytest.raises(InputError, match="CUNIT1 missing; give it with --wave-unit"):
        atlas.io.read(path)
    assert atlas.io.read(path, wave_unit="A")["wavelength"].values[10] == pytest.approx(6500.0)


def test_wave_unit_that_contradicts_cunit1_is_refused(write_image):
    path, _ = write_image(_flux(), **WCS_LINEAR)
    with pytest.raises(InputError, match="disagrees"):
        atlas.io.read(path, wave_unit="nm")


def test_image_of_shape_1_by_n_reads_as_one_spectrum(write_image):
    path, _ = write_image(_flux(), shape_1n=True, **WCS_LINEAR)
    ds = atlas.io.read(path)
    assert ds["flux"].dims == ("sample",) and ds.sizes["sample"] == N
    np.testing.assert_allclose(ds["wavelength"].values[10], 6500.0)


def test_descending_wavelengths_are_reversed_with_flux_and_uncertainty(write_image):
    flux = _flux()
    sigma = np.linspace(0.01, 0.02, N)
    err = fits.ImageHDU(sigma, name="UNCERTAINTY")
    cards = dict(WCS_LINEAR, CDELT1=-0.02)
    path, _ = write_image(flux, extra_hdus=[err], **cards)
    ds = atlas.io.read(path)
    wave = ds["wavelength"].values
    assert np.all(np.diff(wave) > 0)
    np.testing.assert_array_equal(ds["flux"].values, flux[::-1])
    np.testing.assert_array_equal(ds["uncertainty"].values, sigma[::-1])
    assert wave[-1] == pytest.approx(6500.0 + 0.02 * 10)  # pixel 0 had the largest wavelength


@pytest.mark.parametrize(
    ("name", "values", "sigma"),
    [
        ("ERROR", np.full(N, 0.5), 0.5),
        ("VARIANCE", np.full(N, 0.25), 0.5),
        ("IVAR", np.full(N, 4.0), 0.5),
    ],
)
def test_uncertainty_hdu_becomes_standard_deviations(write_image, name, values, sigma):
    path, _ = write_image(_flux(), extra_hdus=[fits.ImageHDU(values, name=name)], **WCS_LINEAR)
    np.testing.assert_allclose(atlas.io.read(path)["uncertainty"].values, sigma)


def test_nan_samples_are_masked_not_dropped(write_image):
    flux = _flux()
    flux[[3, 200, 201]] = np.nan
    path, _ = write_image(flux, **WCS_LINEAR)
    ds = atlas.io.read(path)
    assert ds.sizes["sample"] == N
    assert ds["mask"].values.sum() == 3
    assert ds["mask"].values[[3, 200, 201]].all()


def test_header_metadata(write_image):
    cards = dict(
        WCS_LINEAR,
        OBJECT="Invented Star 7",
        RA="10:08:22.3",
        DEC="+11:58:02",
        DATE_OBS="2024-03-05T21:00:00",
        EXPTIME=600.0,
        OBSGEO_X=5327448.9957829,
        OBSGEO_Y=-1718665.73869569,
        OBSGEO_Z=3051566.90295403,
        RESPOWER=45000,
        BUNIT="adu",
    )
    path, _ = write_image(_flux(), **cards)
    a = atlas.io.read(path).attrs
    assert a["target"] == "Invented Star 7"
    # sexagesimal RA in hours, Dec in degrees, parsed independently with astropy SkyCoord
    ref = SkyCoord("10:08:22.3", "+11:58:02", unit=(u.hourangle, u.deg))
    assert a["ra_deg"] == pytest.approx(ref.ra.deg, abs=1e-9)
    assert a["dec_deg"] == pytest.approx(ref.dec.deg, abs=1e-9)
    # DATE-OBS is the start: mid-exposure is 300 s later (common practice)
    mid = Time("2024-03-05T21:00:00", scale="utc") + 300 * u.s
    assert abs((Time(a["obs_time_utc"], scale="utc") - mid).sec) < 1e-3
    assert a["exposure_s"] == 600.0
    # geocentric OBSGEO-X/Y/Z to geodetic WGS84 (astropy EarthLocation)
    loc = EarthLocation.from_geocentric(
        5327448.9957829, -1718665.73869569, 3051566.90295403, unit=u.m
    )
    g = loc.to_geodetic("WGS84")
    assert a["site_lat_deg"] == pytest.approx(g.lat.deg, abs=1e-9)
    assert a["site_lon_deg"] == pytest.approx(g.lon.deg, abs=1e-9)
    assert a["site_height_m"] == pytest.approx(g.height.to_value(u.m), abs=1e-3)
    assert a["resolving_power"] == 45000
    assert a["flux_unit"] == "adu"
    assert a["source_sha256"] == hashlib.sha256(path.read_bytes()).hexdigest()
    assert a["source_path"].endswith("image.fits")


def test_date_avg_is_used_directly_and_geodetic_obsgeo(write_image):
    cards = dict(
        WCS_LINEAR,
        DATE_OBS="2024-03-05T21:00:00",
        DATE_AVG="2024-03-05T21:07:30",
        EXPTIME=600.0,
        OBSGEO_B=-29.25,
        OBSGEO_L=289.27,
        OBSGEO_H=2400.0,
    )
    path, _ = write_image(_flux(), **cards)
    a = atlas.io.read(path).attrs
    assert a["obs_time_utc"].startswith("2024-03-05T21:07:30")
    assert a["site_lat_deg"] == -29.25
    assert a["site_lon_deg"] == pytest.approx(289.27 - 360.0)  # east longitude folded to -180..180
    assert a["site_height_m"] == 2400.0


def test_absent_metadata_stays_absent(write_image):
    path, _ = write_image(_flux(), **WCS_LINEAR)
    a = atlas.io.read(path).attrs
    for key in (
        "target",
        "ra_deg",
        "dec_deg",
        "obs_time_utc",
        "exposure_s",
        "site_lat_deg",
        "resolving_power",
        "flux_unit",
    ):
        assert key not in a
    assert {"source_path", "source_sha256", "format"} <= set(a)


def test_unreadable_header_values_are_left_out_and_named(write_image):
    path, _ = write_image(_flux(), DATE_OBS="yesterday evening", RA="north", DEC="up", **WCS_LINEAR)
    a = atlas.io.read(path).attrs
    assert "obs_time_utc" not in a and "ra_deg" not in a
    assert "DATE-OBS" in a["unreadable_keywords"] and "RA" in a["unreadable_keywords"]


def test_unsupported_ctype_is_no_spectral_axis(write_image):
    path, _ = write_image(_flux(), **dict(WCS_LINEAR, CTYPE1="FREQ", CUNIT1="Hz"))
    with pytest.raises(InputError, match="no spectral axis: CTYPE1 is 'FREQ'"):
        atlas.io.read(path)


def test_image_without_wcs_takes_a_wavelength_image_beside_it(write_image):
    wave_nm = np.linspace(650.0, 660.0, N)
    w = fits.ImageHDU(wave_nm, name="WAVELENGTH")
    w.header["BUNIT"] = "nm"
    w.header["MEDIUM"] = "air"
    path, _ = write_image(_flux(), extra_hdus=[w])
    ds = atlas.io.read(path)
    np.testing.assert_allclose(ds["wavelength"].values, wave_nm * 10.0)  # 1 nm = 10 Å (SI)
    assert ds["wavelength"].attrs["medium"] == "air" and ds.sizes["sample"] == N


@pytest.mark.parametrize(
    ("cards", "expected_utc"),
    [
        # date-only DATE-OBS with TIME-OBS, no exposure: the start as given
        ({"DATE_OBS": "2024-06-01", "TIME-OBS": "03:20:00"}, "2024-06-01T03:20:00"),
        # MJD-OBS 60462.0 is 2024-06-01T00:00 UTC (astropy Time), plus half of EXPOSURE
        ({"MJD_OBS": 60462.0, "EXPOSURE": 120.0}, "2024-06-01T00:01:00"),
        # MJD-AVG used directly
        ({"MJD_AVG": 60462.5, "EXPTIME": 3000.0}, "2024-06-01T12:00:00"),
        # TIMESYS TAI: TAI - UTC = 37 s in 2024 (IERS Bulletin C, via astropy's leap-second table)
        ({"DATE_AVG": "2024-06-01T00:00:37", "TIMESYS": "TAI"}, "2024-06-01T00:00:00"),
    ],
)
def test_observation_time_keywords(write_image, cards, expected_utc):
    path, _ = write_image(_flux(), **cards, **WCS_LINEAR)
    t = atlas.io.read(path).attrs["obs_time_utc"]
    assert abs((Time(t, scale="utc") - Time(expected_utc, scale="utc")).sec) < 1e-3
