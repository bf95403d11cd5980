"""FITS helpers shared by the FITS readers: safe opening and header metadata.

Header keywords read (each optional; absent or unreadable ones stay absent):

========================  ===================================================
``OBJECT``                target
``RA``, ``DEC``           ra_deg, dec_deg (degrees, or sexagesimal strings: RA in hours)
``DATE-AVG``/``MJD-AVG``  obs_time_utc, used as the mid-exposure time directly
``DATE-OBS``/``MJD-OBS``  exposure start; obs_time_utc = start + exposure / 2 when
                          ``EXPTIME`` or ``EXPOSURE`` (s) is given, else the start
``TIME-OBS``, ``UT``      time of day when ``DATE-OBS`` holds a date only
``TIMESYS``               time scale of those keywords (default UTC)
``OBSGEO-B/L/H``          site latitude, longitude (deg), height (m)
``OBSGEO-X/Y/Z``          site as geocentric metres (converted with astropy EarthLocation)
``RESPOWER``              resolving power lambda / delta-lambda (our own keyword); else
                          ``SPEC_RES``, ``RESOLVING_POWER`` or ``R`` (common practice)
``BUNIT``                 flux unit
``MEDIUM``                ``air`` or ``vacuum`` where no WCS or column type says it (echelle)
``AIRORVAC``, ``VACUUM``  medium where no WCS or column type says it (common practice):
                          ``AIRORVAC = 'air'``/``'vac'``; ``VACUUM = T``/``F``
========================  ===================================================

The keyword names follow the FITS Standard 4.0 (Pence et al. 2010, A&A 524, A42)
and FITS WCS Paper III (Greisen et al. 2006, A&A 446, 747) for ``OBSGEO-*`` and
``DATE-AVG``/``MJD-AVG``; ``RESPOWER`` and ``MEDIUM`` are plain names of our own.
"""

from __future__ import annotations

import contextlib
import os
import warnings

from atlas.errors import InputError
from atlas.io import meta
from atlas.io.validate import short_reason

UNCERTAINTY_NAMES = {
    "UNCERTAINTY": "sigma",
    "ERROR": "sigma",
    "ERR": "sigma",
    "ERRORS": "sigma",
    "SIGMA": "sigma",
    "STDDEV": "sigma",
    "NOISE": "sigma",
    "VARIANCE": "variance",
    "VAR": "variance",
    "IVAR": "ivar",
    "INVVAR": "ivar",
}

#: EXTNAMEs of an image holding each pixel's wavelength.
WAVE_EXTNAMES = ("WAVELENGTH", "WAVELENGTHS", "WAVE", "LAMBDA")

#: Keywords holding the resolving power lambda / delta-lambda, the first present wins.
RESOLVING_POWER_KEYWORDS = ("RESPOWER", "SPEC_RES", "RESOLVING_POWER", "R")

_TIME_SCALES = {"UTC", "TAI", "TT", "TDB", "TCG", "TCB", "UT1"}


@contextlib.contextmanager
def quiet():
    """Silence astropy's FITS/WCS warnings (we report problems ourselves)."""
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        yield


def peek(path):
    """Headers of a FITS file without loading data, or None when it cannot be parsed.

    Returns a list of ``(extname, header, is_image)`` for every HDU.  Used by the
    cheap ``can_read`` sniffers; never raises.
    """
    from astropy.io import fits

    try:
        with quiet(), fits.open(path, memmap=False, lazy_load_hdus=True) as hdul:
            out = []
            for hdu in hdul:
                h = hdu.header
                out.append((str(h.get("EXTNAME", "")).strip().upper(), h.copy(), hdu.is_image))
            return out
    except Exception:
        return None


def open_fits(path):
    """Open a FITS file with every HDU's data loaded; ``InputError`` when truncated or corrupt."""
    from astropy.io import fits

    p = os.fspath(path)
    with warnings.catch_warnings(record=True) as caught:
        warnings.simplefilter("always")
        try:
            hdul = fits.open(p, memmap=False, lazy_load_hdus=False)
        except Exception as exc:
            _raise_if_truncated(p, caught)
            raise InputError(
                p, f"corrupt FITS file: cannot read its headers ({short_reason(exc)})"
            ) from None
        for i, hdu in enumerate(hdul):
            for card in hdu.header.cards:
                try:
                    _ = card.value
                except Exception:
                    hdul.close()
                    raise InputError(
                        p,
                        f"corrupt FITS header: unreadable card {card.keyword or '?'!r} in HDU {i}",
                    ) from None
        try:
            for hdu in hdul:
                _ = hdu.data
        except Exception as exc:
            hdul.close()
            _raise_if_truncated(p, caught)
            raise InputError(
                p, f"corrupt FITS file: cannot read its data ({short_reason(exc)})"
            ) from None
    _raise_if_truncated(p, caught, hdul)
    return hdul


def _raise_if_truncated(path, caught, hdul=None):
    """Truncated when astropy says so, or (on a failed read) when the size is not whole 2880-byte blocks.

    FITS files are made of 2880-byte blocks (FITS Standard 4.0, Pence et al. 2010, sect. 3.1).
    """
    size = os.path.getsize(path)
    said = any("truncated" in str(w.message).lower() for w in caught)
    if said or (hdul is None and size % 2880):
        if hdul is not None:
            hdul.close()
        raise InputError(
            path,
            f"truncated FITS file: {size} bytes, shorter than its headers say or not whole 2880-byte blocks",
        )


def merged_header(primary, header):
    """The primary header's cards overlaid by one HDU's own header (the HDU wins)."""
    h = primary.copy() if primary is not None else None
    if h is None:
        return header.copy()
    for card in header.cards:
        if card.keyword in ("", "COMMENT", "HISTORY"):
            continue
        with contextlib.suppress(Exception):
            h[card.keyword] = card.value
    return h


def _text(h, key):
    v = h.get(key)
    if v is None:
        return None
    s = str(v).strip()
    return s or None


def _number(h, key):
    v = h.get(key)
    if v is None or isinstance(v, bool) or str(v).strip() == "":
        return None
    return float(v)


def header_metadata(h) -> dict:
    """Spectrum attributes from a FITS header (see the module docstring).

    Unreadable values are left out and their keywords listed in the attribute
    ``unreadable_keywords`` (one comma-separated string) so the user is told.
    """
    from astropy.time import Time, TimeDelta

    attrs: dict = {}
    bad: list[str] = []

    target = _text(h, "OBJECT")
    if target:
        attrs["target"] = target

    if h.get("RA") is not None and h.get("DEC") is not None:
        try:
            attrs["ra_deg"], attrs["dec_deg"] = meta.radec_deg(h["RA"], h["DEC"])
        except ValueError:
            bad += ["RA", "DEC"]

    exposure = None
    for key in ("EXPTIME", "EXPOSURE"):
        if h.get(key) is not None:
            try:
                exposure = _number(h, key)
                if exposure is None or not exposure >= 0 or exposure != exposure:
                    raise ValueError
            except (TypeError, ValueError):
                bad.append(key)
                exposure = None
            break
    if exposure is not None:
        attrs["exposure_s"] = exposure

    scale = (_text(h, "TIMESYS") or "UTC").upper()
    if scale not in _TIME_SCALES:
        if any(h.get(k) is not None for k in ("DATE-AVG", "MJD-AVG", "DATE-OBS", "MJD-OBS")):
            bad.append("TIMESYS")
    else:
        t = None
        mid = False
        try:
            if _text(h, "DATE-AVG"):
                t, mid = meta.parse_time(_text(h, "DATE-AVG"), scale.lower()), True
            elif _number(h, "MJD-AVG") is not None:
                t, mid = Time(_number(h, "MJD-AVG"), format="mjd", scale=scale.lower()), True
        except (TypeError, ValueError):
            bad.append("DATE-AVG" if h.get("DATE-AVG") is not None else "MJD-AVG")
            t = None
        if t is None:
            try:
                date = _text(h, "DATE-OBS")
                if date:
                    tod = _text(h, "TIME-OBS") or _text(h, "UT")
                    if "T" not in date and tod:
                        date = f"{date}T{tod}"
                    t = meta.parse_time(date, scale.lower())
                elif _number(h, "MJD-OBS") is not None:
                    t = Time(_number(h, "MJD-OBS"), format="mjd", scale=scale.lower())
            except (TypeError, ValueError):
                bad.append("DATE-OBS" if h.get("DATE-OBS") is not None else "MJD-OBS")
                t = None
            if t is not None and exposure is not None:
                t = t + TimeDelta(exposure / 2.0, format="sec")
        if t is not None:
            attrs["obs_time_utc"] = meta.iso_utc(t)
            attrs["obs_time_is_mid"] = bool(mid or exposure is not None)

    try:
        if all(h.get(k) is not None for k in ("OBSGEO-B", "OBSGEO-L", "OBSGEO-H")):
            lat, lon, hgt = meta.site_geodetic(
                _number(h, "OBSGEO-B"), _number(h, "OBSGEO-L"), _number(h, "OBSGEO-H")
            )
            attrs.update(site_lat_deg=lat, site_lon_deg=lon, site_height_m=hgt)
        elif all(h.get(k) is not None for k in ("OBSGEO-X", "OBSGEO-Y", "OBSGEO-Z")):
            lat, lon, hgt = meta.site_from_geocentric(
                _number(h, "OBSGEO-X"), _number(h, "OBSGEO-Y"), _number(h, "OBSGEO-Z")
            )
            attrs.update(site_lat_deg=lat, site_lon_deg=lon, site_height_m=hgt)
    except (TypeError, ValueError):
        bad.append("OBSGEO")

    rkey = next((k for k in RESOLVING_POWER_KEYWORDS if h.get(k) is not None), None)
    if rkey is not None:
        try:
            r = _number(h, rkey)
            if r is None or not r > 0 or r == float("inf"):
                raise ValueError
            attrs["resolving_power"] = r
        except (TypeError, ValueError):
            bad.append(rkey)

    bunit = _text(h, "BUNIT")
    if bunit:
        attrs["flux_unit"] = bunit

    if bad:
        attrs["unreadable_keywords"] = ", ".join(dict.fromkeys(bad))
    return attrs


def air_or_vacuum(h) -> str | None:
    """``air`` / ``vacuum`` from ``MEDIUM``, ``AIRORVAC`` or ``VACUUM`` (common practice), or None."""
    v = (_text(h, "MEDIUM") or "").lower()
    if v in ("air", "vacuum"):
        return v
    v = (_text(h, "AIRORVAC") or "").lower()
    if v in ("air", "vac", "vacuum"):
        return "air" if v == "air" else "vacuum"
    v = h.get("VACUUM")
    if isinstance(v, bool):
        return "vacuum" if v else "air"
    v = (_text(h, "VACUUM") or "").lower()
    if v in ("air", "vac", "vacuum"):
        return "air" if v == "air" else "vacuum"
    return None


def first_image(hdul):
    """Index of the first image HDU holding data, or None."""
    for i, hdu in enumerate(hdul):
        if hdu.is_image and hdu.header.get("NAXIS", 0) >= 1 and hdu.header.get("NAXIS1", 0) > 0:
            return i
    return None


def wave_image_unit(h) -> str | None:
    """The unit of a wavelength image: its ``BUNIT``, else its ``CUNIT1``, else None."""
    return _text(h, "BUNIT") or _text(h, "CUNIT1")
