"""Parsing of observation metadata shared by the readers and ``striae inspect``.

Each parser takes plain strings or numbers and raises ``ValueError`` with a short
reason; callers turn that into ``InputError`` naming the file or option.
Coordinates and times go through astropy (``SkyCoord``, ``Time``,
``EarthLocation``); nothing here touches the network.
"""

from __future__ import annotations

import math
import re

_SEXAGESIMAL = re.compile(r"[:hdms\s]")


def _is_number(value) -> bool:
    if isinstance(value, bool):
        return False
    if isinstance(value, int | float):
        return True
    try:
        float(str(value).strip())
    except ValueError:
        return False
    return True


def radec_deg(ra, dec) -> tuple[float, float]:
    """Right ascension and declination in degrees from numbers or sexagesimal strings.

    Numbers are degrees.  Strings such as ``"12:34:56.7"`` / ``"12h34m56.7s"`` give
    RA in hours and ``"-12:34:56"`` / ``"-12d34m56s"`` give Dec in degrees
    (``common practice`` for headers and catalogues), parsed by astropy.coordinates.
    """
    import astropy.units as u
    from astropy.coordinates import Angle

    def one(value, hours: bool, what: str) -> float:
        if _is_number(value):
            deg = float(value)
        else:
            text = str(value).strip()
            if not text or not _SEXAGESIMAL.search(text):
                raise ValueError(f"{what} {value!r} is neither degrees nor sexagesimal")
            try:
                deg = Angle(text, unit=u.hourangle if hours else u.deg).to_value(u.deg)
            except Exception:  # astropy raises several types for unparseable angles
                raise ValueError(f"{what} {value!r} is not an angle") from None
        if not math.isfinite(deg):
            raise ValueError(f"{what} {value!r} is not finite")
        return deg

    ra_deg = one(ra, True, "RA")
    dec_deg = one(dec, False, "Dec")
    if not 0.0 <= ra_deg < 360.0:
        if -360.0 < ra_deg < 0.0:
            ra_deg += 360.0
        else:
            raise ValueError(f"RA {ra!r} is outside 0..360 degrees")
    if not -90.0 <= dec_deg <= 90.0:
        raise ValueError(f"Dec {dec!r} is outside -90..+90 degrees")
    return ra_deg, dec_deg


def parse_time(value, scale: str = "utc"):
    """An astropy ``Time`` from an ISO date-time string (``2024-03-05T21:14:03.5``)."""
    from astropy.time import Time

    text = str(value).strip()
    if not re.match(r"^\d{4}-\d{2}-\d{2}([T ]\d{1,2}:\d{2}(:\d{2}(\.\d*)?)?)?(Z)?$", text):
        raise ValueError(f"{value!r} is not an ISO date-time (YYYY-MM-DDTHH:MM:SS)")
    text = text.rstrip("Z").replace(" ", "T")
    try:
        return Time(text, format="isot" if "T" in text else "iso", scale=scale)
    except Exception:
        raise ValueError(f"{value!r} is not a valid date-time") from None


def iso_utc(t) -> str:
    """ISO 8601 UTC text with milliseconds, e.g. ``2024-03-05T21:14:03.500``."""
    return t.utc.isot


def site_geodetic(lat_deg, lon_deg, height_m) -> tuple[float, float, float]:
    """Check a geodetic site: latitude in -90..90, longitude in -180..360, height in m."""
    lat, lon, h = float(lat_deg), float(lon_deg), float(height_m)
    if not all(map(math.isfinite, (lat, lon, h))):
        raise ValueError("site values must be finite numbers")
    if not -90.0 <= lat <= 90.0:
        raise ValueError(f"latitude {lat_deg!r} is outside -90..+90 degrees")
    if not -180.0 <= lon <= 360.0:
        raise ValueError(f"longitude {lon_deg!r} is outside -180..360 degrees")
    if lon > 180.0:
        lon -= 360.0
    if not -12000.0 <= h <= 100000.0:
        raise ValueError(f"height {height_m!r} m is not a height on or near the Earth")
    return lat, lon, h


def site_from_geocentric(x_m, y_m, z_m) -> tuple[float, float, float]:
    """Geodetic latitude, longitude (deg) and height (m) from geocentric X, Y, Z in m (WGS84, astropy EarthLocation)."""
    import astropy.units as u
    from astropy.coordinates import EarthLocation

    x, y, z = float(x_m), float(y_m), float(z_m)
    r = math.sqrt(x * x + y * y + z * z)
    if not math.isfinite(r) or not 6.2e6 < r < 6.5e6:
        raise ValueError("geocentric position is not on the Earth's surface")
    g = EarthLocation.from_geocentric(x, y, z, unit=u.m).to_geodetic("WGS84")
    return site_geodetic(g.lat.to_value(u.deg), g.lon.to_value(u.deg), g.height.to_value(u.m))
