"""Barycentric correction, BJD_TDB, and the Wright & Eastman (2014) combination."""

from __future__ import annotations

import astropy.units as u
import numpy as np
import pytest
from astropy.coordinates import EarthLocation, SkyCoord, get_body_barycentric_posvel
from astropy.time import Time

from atlas.errors import InputError
from atlas.physics import barycentric as bc
from atlas.spectrum import make_spectrum

C_KMS = 299792.458  # exact (SI)
# An invented site and target, used only as inputs (no value checked against them).
SITE = (28.3, -16.5, 2400.0)
TARGET = (101.29, -16.72)


def test_matches_astropy_radial_velocity_correction():
    # Reference: astropy SkyCoord.radial_velocity_correction(kind="barycentric").
    t = Time("2025-06-15T02:30:00", scale="utc")
    loc = EarthLocation.from_geodetic(
        lon=SITE[1] * u.deg, lat=SITE[0] * u.deg, height=SITE[2] * u.m
    )
    ref = SkyCoord(TARGET[0] * u.deg, TARGET[1] * u.deg).radial_velocity_correction(
        kind="barycentric", obstime=t, location=loc
    )
    ours = bc.correction_kms("2025-06-15T02:30:00", *TARGET, *SITE)
    assert abs(ours - ref.to_value(u.km / u.s)) < 1e-9


def test_stays_inside_the_annual_envelope():
    # from memory: Earth's orbital speed peaks at 30.29 km/s (perihelion); add up to
    # 0.47 km/s of diurnal rotation at the equator (common practice) and ~0.013 km/s of
    # Earth-Moon motion: |v_bary| < 30.8 km/s.  A target on the ecliptic must also reach
    # at least 29 km/s some time in the year, so an all-zero answer fails.
    times = [f"2025-{m:02d}-15T00:00:00" for m in range(1, 13)]
    for ra, dec in [(0.0, 0.0), (90.0, 23.44), (200.0, -60.0), (270.0, 66.56)]:
        v = np.array([bc.correction_kms(t, ra, dec, 0.0, 0.0, 0.0) for t in times])
        assert np.abs(v).max() < 30.8
    ecl = np.array([bc.correction_kms(t, 90.0, 23.44, 0.0, 0.0, 0.0) for t in times])
    assert np.abs(ecl).max() > 29.0


def _ecliptic_target(lon_deg, lat_deg):
    c = SkyCoord(lon=lon_deg * u.deg, lat=lat_deg * u.deg, frame="barycentricmeanecliptic")
    return c.icrs.ra.deg, c.icrs.dec.deg


def test_sign_earth_moving_toward_the_target_gives_a_positive_correction():
    # Sign convention, Wright & Eastman (2014) sec. 2: v_true = v_obs + v_bary.  Near the
    # March equinox the Sun is at ecliptic longitude 0 and the Earth moves toward
    # longitude 270° (90° west of the Sun; common practice).  A star there is
    # approached, so its measured velocity is too negative by ~30 km/s and the
    # correction must be about +30 km/s; a star at longitude 90° gets about -30 km/s.
    # A flipped sign fails both by ~60 km/s.
    t = "2025-03-20T12:00:00"
    toward = bc.correction_kms(t, *_ecliptic_target(270.0, 0.0), 0.0, 0.0, 0.0)
    away = bc.correction_kms(t, *_ecliptic_target(90.0, 0.0), 0.0, 0.0, 0.0)
    assert 28.5 < toward < 31.0
    assert -31.0 < away < -28.5


def test_sign_matches_the_earths_barycentric_velocity_projected_on_the_target():
    # Reference: astropy get_body_barycentric_posvel (JPL-independent built-in ephemeris):
    # v_bary = v_earth . n_target (plus < 0.5 km/s of rotation at the site).
    for month in (1, 4, 7, 10):
        t = Time(f"2025-{month:02d}-01T00:00:00", scale="utc")
        _, vel = get_body_barycentric_posvel("earth", t)
        for ra, dec in [(10.0, 5.0), (150.0, -30.0), (300.0, 45.0)]:
            n = SkyCoord(ra * u.deg, dec * u.deg).cartesian.xyz.value
            proj = float(np.dot(vel.xyz.to_value(u.km / u.s), n))
            ours = bc.correction_kms(t, ra, dec, *SITE)
            assert abs(ours - proj) < 0.6


def test_a_target_at_the_ecliptic_pole_has_almost_no_orbital_correction():
    # common practice: the orbital velocity lies in the ecliptic plane, so a star at the
    # north ecliptic pole (RA 270°, Dec +66.56°) sees only rotation (< 0.5 km/s) and tiny
    # terms, in every month.
    for m in range(1, 13, 2):
        v = bc.correction_kms(f"2025-{m:02d}-10T00:00:00", 270.0, 66.56, *SITE)
        assert abs(v) < 0.7


def test_wright_eastman_formula_composes_redshifts():
    # Reference: Wright & Eastman (2014), PASP 126, 838, eq. 11 in redshift form:
    # 1 + z_true = (1 + z_obs)(1 + z_bary), with "velocities" c z.
    for v, b in [(-250.0, 29.9), (12.3, -17.0), (1500.0, 30.0)]:
        z = (1 + v / C_KMS) * (1 + b / C_KMS) - 1
        assert abs(bc.apply_kms(v, b) - C_KMS * z) < 1e-9


def test_wright_eastman_differs_from_special_relativistic_addition_by_v_vbary_over_c():
    # Reference: special-relativistic velocity addition w = (u + v) / (1 + u v / c^2)
    # (Einstein 1905).  Velocities measured as c z compose multiplicatively, so the
    # Wright & Eastman (2014) result exceeds the relativistic sum of the same numbers by
    # v v_bary / c to first order (10 m/s for 100 and 30 km/s): the cross term is kept.
    v, b = 100.0, 30.0
    rel = (v + b) / (1 + v * b / C_KMS**2)
    assert abs((bc.apply_kms(v, b) - rel) - v * b / C_KMS) < 1e-5  # 2nd order: ~4e-6
    np.testing.assert_allclose(
        bc.apply_kms(np.array([v, -v]), b), [v + b + v * b / C_KMS, -v + b - v * b / C_KMS]
    )


def test_bjd_tdb_differs_from_jd_utc_by_tdb_offset_plus_light_time():
    # Reference: TT - UTC = 69.184 s since 2017 (IERS Bulletin C, from memory), TDB - TT
    # < 2 ms; light time across 1 au = 499.005 s (IAU 2012 au, from memory).  A star at
    # opposition (anti-solar direction) is nearer the Earth than the barycentre, so its
    # light reaches the barycentre later: BJD - JD_TDB is about +499 s (x ~1.0 +- 0.02).
    t = "2025-03-20T12:00:00"
    ra, dec = _ecliptic_target(180.0, 0.0)  # opposite the Sun at the March equinox
    bjd = bc.bjd_tdb(t, ra, dec, 0.0, 0.0, 0.0)
    jd_utc = Time(t, scale="utc").jd
    dt = (bjd - jd_utc) * 86400.0 - 69.184
    assert 480.0 < dt < 510.0
    ra2, dec2 = _ecliptic_target(0.0, 0.0)  # toward the Sun
    dt2 = (bc.bjd_tdb(t, ra2, dec2, 0.0, 0.0, 0.0) - jd_utc) * 86400.0 - 69.184
    assert -510.0 < dt2 < -480.0


def _ds(**attrs):
    return make_spectrum([5000.0, 5001.0], [1.0, 1.0], medium="vacuum", **attrs)


def test_correction_for_reads_the_file_attributes():
    ds = _ds(
        obs_time_utc="2025-06-15T02:30:00",
        ra_deg=TARGET[0],
        dec_deg=TARGET[1],
        site_lat_deg=SITE[0],
        site_lon_deg=SITE[1],
        site_height_m=SITE[2],
    )
    kms, missing = bc.correction_for(ds)
    assert missing == []
    assert kms == pytest.approx(bc.correction_kms("2025-06-15T02:30:00", *TARGET, *SITE), abs=1e-12)


def test_correction_for_names_what_is_missing_and_overrides_fill_it():
    kms, missing = bc.correction_for(_ds())
    assert kms is None and missing == ["time", "site", "coordinates"]
    kms, missing = bc.correction_for(_ds(ra_deg=1.0, dec_deg=2.0))
    assert kms is None and missing == ["time", "site"]
    kms, missing = bc.correction_for(
        _ds(ra_deg=TARGET[0], dec_deg=TARGET[1]), site=SITE, time="2025-06-15T02:30:00"
    )
    assert missing == [] and kms == pytest.approx(
        bc.correction_kms("2025-06-15T02:30:00", *TARGET, *SITE), abs=1e-12
    )
    # radec given on the command line wins over the file's coordinates
    kms2, _ = bc.correction_for(
        _ds(ra_deg=0.0, dec_deg=0.0), site=SITE, time="2025-06-15T02:30:00", radec=TARGET
    )
    assert kms2 == pytest.approx(kms, abs=1e-12)


@pytest.mark.parametrize(
    ("kwargs", "where"),
    [
        ({"time": "yesterday"}, "--time"),
        ({"site": (95.0, 0.0, 0.0)}, "--site"),
        ({"site": ("x", 0.0, 0.0)}, "--site"),
        ({"radec": (10.0, -91.0)}, "--radec"),
    ],
)
def test_bad_overrides_are_one_line_input_errors(kwargs, where):
    with pytest.raises(InputError) as exc:
        bc.correction_for(_ds(), **kwargs)
    assert exc.value.where == where and "\n" not in exc.value.message


def test_bad_file_time_names_the_file():
    ds = _ds(obs_time_utc="not a date", ra_deg=1.0, dec_deg=2.0, source_path="star.fits")
    with pytest.raises(InputError) as exc:
        bc.correction_for(ds, site=SITE)
    assert exc.value.where == "star.fits"


def test_works_offline_with_the_bundled_iers_tables(monkeypatch):
    # Project rule: nothing is downloaded at run time.  Any socket connection fails here,
    # so a silent IERS download attempt would make this raise.
    import socket

    from astropy.utils import iers

    def no_network(*args, **kwargs):
        raise OSError("network access attempted")

    monkeypatch.setattr(socket.socket, "connect", no_network)
    assert iers.conf.auto_download is False and iers.conf.auto_max_age is None
    for t in ("1995-01-01T00:00:00", "2026-11-30T22:00:00"):
        v = bc.correction_kms(t, *TARGET, *SITE)
        assert abs(v) < 30.8
        assert np.isfinite(bc.bjd_tdb(t, *TARGET, *SITE))
