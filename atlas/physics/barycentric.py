"""Barycentric velocity correction and barycentric Julian date, offline.

Velocities in km/s, positive = receding.  Sites are given as geodetic latitude and
longitude in degrees (east positive) and height in metres, through
``EarthLocation.from_geodetic`` (never ``EarthLocation.of_site``, which needs the
network).  astropy's bundled IERS tables are used (see ``atlas.physics``).

References
----------
Wright, J. T. & Eastman, J. D. (2014), PASP 126, 838: barycentric corrections.
astropy.coordinates.SkyCoord.radial_velocity_correction; astropy.time.Time.light_travel_time.
"""

from __future__ import annotations

import math

import astropy.units as u
import numpy as np
from astropy.coordinates import EarthLocation, SkyCoord
from astropy.time import Time

import atlas.physics  # noqa: F401  (offline IERS settings)
from atlas.errors import InputError
from atlas.physics.constants import C_KMS


def _time(obs_time_utc, where="time") -> Time:
    if isinstance(obs_time_utc, Time):
        return obs_time_utc
    try:
        t = Time(str(obs_time_utc).strip(), scale="utc")
    except ValueError as exc:
        raise InputError(
            where, f"cannot read {obs_time_utc!r} as a UTC date and time ({exc})"
        ) from None
    return t


def _location(lat_deg, lon_deg, height_m) -> EarthLocation:
    return EarthLocation.from_geodetic(
        lon=float(lon_deg) * u.deg, lat=float(lat_deg) * u.deg, height=float(height_m) * u.m
    )


def correction_kms(obs_time_utc, ra_deg, dec_deg, lat_deg, lon_deg, height_m) -> float:
    """Barycentric velocity correction v_bary (km/s) for a target seen from a site at a time.

    ``obs_time_utc`` is an ISO string (UTC) or an astropy Time; ICRS ``ra_deg``,
    ``dec_deg`` in degrees; the site's geodetic ``lat_deg``, ``lon_deg`` (east positive)
    in degrees and ``height_m`` in metres.  Add it to a measured velocity with
    :func:`apply_kms`.

    References
    ----------
    Wright & Eastman (2014), PASP 126, 838; astropy SkyCoord.radial_velocity_correction.
    """
    t = _time(obs_time_utc)
    coord = SkyCoord(ra=float(ra_deg) * u.deg, dec=float(dec_deg) * u.deg, frame="icrs")
    v = coord.radial_velocity_correction(
        kind="barycentric", obstime=t, location=_location(lat_deg, lon_deg, height_m)
    )
    return float(v.to_value(u.km / u.s))


def bjd_tdb(obs_time_utc, ra_deg, dec_deg, lat_deg, lon_deg, height_m) -> float:
    """Barycentric Julian date (TDB, days) of an observation: arrival time at the barycentre.

    Arguments as for :func:`correction_kms`.

    References
    ----------
    Eastman, Siverd & Gaudi (2010), PASP 122, 935 (BJD_TDB); astropy Time.light_travel_time.
    """
    t = _time(obs_time_utc)
    t = Time(t, location=_location(lat_deg, lon_deg, height_m))
    coord = SkyCoord(ra=float(ra_deg) * u.deg, dec=float(dec_deg) * u.deg, frame="icrs")
    ltt = t.light_travel_time(coord, kind="barycentric")
    return float((t.tdb + ltt).jd)


def apply_kms(rv_obs_kms, bary_kms):
    """Barycentric radial velocity (km/s) from a measured one and the correction v_bary.

    v_true = v_obs + v_bary + v_obs * v_bary / c.  Works on floats or arrays.

    References
    ----------
    Wright & Eastman (2014), PASP 126, 838, eq. 11 (to first order in 1/c).
    """
    v = np.asarray(rv_obs_kms, dtype=np.float64)
    b = np.asarray(bary_kms, dtype=np.float64)
    out = v + b + v * b / C_KMS
    return float(out) if np.ndim(out) == 0 else out


def _finite(x) -> bool:
    try:
        return x is not None and math.isfinite(float(x))
    except (TypeError, ValueError):
        return False


def correction_for(ds, *, site=None, radec=None, time=None):
    """Barycentric correction (km/s) for a Spectrum Dataset, or None and what is missing.

    Reads ``obs_time_utc``, ``ra_deg``, ``dec_deg``, ``site_lat_deg``,
    ``site_lon_deg``, ``site_height_m`` from ``ds.attrs``.  ``site=(lat_deg, lon_deg,
    height_m)``, ``radec=(ra_deg, dec_deg)`` and ``time`` (ISO string, UTC) override the
    file.  Returns ``(kms, [])``, or ``(None, missing)`` with ``missing`` a list of
    ``time``, ``site``, ``coordinates``.  Unreadable overrides raise ``InputError``
    naming ``--time``, ``--site`` or ``--radec``; unreadable file values raise
    ``InputError`` naming the file.

    References
    ----------
    Wright & Eastman (2014), PASP 126, 838; astropy SkyCoord.radial_velocity_correction.
    """
    attrs = dict(getattr(ds, "attrs", {}) or {})
    src = attrs.get("source_path") or "spectrum"
    missing = []

    if time is not None:
        t = _time(time, "--time")
    elif attrs.get("obs_time_utc") not in (None, ""):
        t = _time(attrs["obs_time_utc"], src)
    else:
        t = None
        missing.append("time")

    if site is not None:
        try:
            lat, lon, h = (float(x) for x in site)
        except (TypeError, ValueError):
            raise InputError(
                "--site", f"expected latitude, longitude, height_m; got {site!r}"
            ) from None
        if not -90 <= lat <= 90:
            raise InputError("--site", f"latitude must be within -90..90 degrees; got {lat}")
        if not (np.isfinite(lon) and np.isfinite(h)):
            raise InputError("--site", f"longitude and height must be finite numbers; got {site!r}")
    elif all(_finite(attrs.get(k)) for k in ("site_lat_deg", "site_lon_deg")):
        lat, lon = float(attrs["site_lat_deg"]), float(attrs["site_lon_deg"])
        h = float(attrs["site_height_m"]) if _finite(attrs.get("site_height_m")) else 0.0
        if not -90 <= lat <= 90:
            raise InputError(src, f"site latitude {lat} is outside -90..90 degrees")
    else:
        lat = lon = h = None
        missing.append("site")

    if radec is not None:
        try:
            ra, dec = (float(x) for x in radec)
        except (TypeError, ValueError):
            raise InputError("--radec", f"expected ra_deg, dec_deg; got {radec!r}") from None
        if not -90 <= dec <= 90:
            raise InputError("--radec", f"declination must be within -90..90 degrees; got {dec}")
        if not np.isfinite(ra):
            raise InputError("--radec", f"right ascension must be a finite number; got {ra}")
    elif all(_finite(attrs.get(k)) for k in ("ra_deg", "dec_deg")):
        ra, dec = float(attrs["ra_deg"]), float(attrs["dec_deg"])
        if not -90 <= dec <= 90:
            raise InputError(src, f"declination {dec} is outside -90..90 degrees")
    else:
        ra = dec = None
        missing.append("coordinates")

    if missing:
        return None, missing
    return correction_kms(t, ra, dec, lat, lon, h), []
