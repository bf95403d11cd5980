"""Reader for the older 1-D linear-dispersion header convention of FITS spectrum images.

Layout: an image whose axis 1 is the dispersion axis with ``CTYPE1 = 'LINEAR'``
or no ``CTYPE1`` at all, and either

* ``CRVAL1``, ``CRPIX1`` (default 0, as in Paper I) and the step ``CD1_1`` (preferred, as in FITS
  WCS Paper I, Greisen & Calabretta 2002, A&A 395, 1061; from memory) or ``CDELT1``:
  ``x(p) = CRVAL1 + step (p - CRPIX1)`` for pixel ``p`` = 1, 2, ... (Paper I, eq. 1-3);
* or ``W0`` (first pixel) and ``WPC`` (step per pixel): ``x(p) = W0 + WPC (p - 1)``
  (common practice).

``DC-FLAG = 1`` means ``x`` is log10 of the wavelength, ``0`` or absent linear
(a published header convention, from memory); any other value is refused.
The unit is Å unless ``CUNIT1`` or ``units=`` in the ``WAT1_nnn`` cards says
otherwise (``--wave-unit`` replaces the Å default).  Medium from ``AIRORVAC`` /
``VACUUM`` / ``MEDIUM``, else unknown.  Shapes ``(n)``, ``(1, n)``, ``(1, 1, n)``
give one spectrum; ``(rows, n)`` one spectrum per row, all on the shared axis;
``(bands, rows, n)`` as in :mod:`atlas.io.bands`.
"""

from __future__ import annotations

import numpy as np

from atlas.errors import InputError
from atlas.io import bands, fitsutil, validate, wat

NAME = "fits_linear"
DESCRIPTION = "FITS image with the older linear dispersion cards (CTYPE1 LINEAR or none, DC-FLAG)"

#: CTYPE1 values of this convention ('' = no CTYPE1).
LINEAR_CTYPES = ("LINEAR", "")


def _claims(header, is_image) -> bool:
    if not is_image or header.get("NAXIS", 0) < 1 or header.get("NAXIS1", 0) < 2:
        return False
    if str(header.get("CTYPE1", "")).strip().upper() not in LINEAR_CTYPES:
        return False
    if wat.attributes(wat.wat_string(header, 0)).get("system", "").lower() == "multispec":
        return False
    has_crval = header.get("CRVAL1") is not None and (
        header.get("CDELT1") is not None or header.get("CD1_1") is not None
    )
    return has_crval or (header.get("W0") is not None and header.get("WPC") is not None)


@validate.sniffer
def can_read(path) -> bool:
    """True for a FITS image with linear dispersion cards and no wavelength image beside it."""
    if not validate.is_fits(path):
        return False
    headers = fitsutil.peek(path)
    if not headers or any(n in fitsutil.WAVE_EXTNAMES for n, _, _ in headers):
        return False
    first = next((h for h in headers if h[2] and h[1].get("NAXIS", 0) >= 1), None)
    return first is not None and _claims(first[1], first[2])


def convention_unit(header, wave_unit, path):
    """CUNIT1, else ``units=`` of WAT1, else ``--wave-unit``, else Å (the convention's default)."""
    from atlas.io.fits_image import _axis_unit

    named = str(header.get("CUNIT1", "") or "").strip()
    where = "CUNIT1"
    if not named:
        named = wat.attributes(wat.wat_string(header, 1)).get("units", "")
        where = "units in WAT1"
    if named or wave_unit is not None:
        return _axis_unit(named or None, wave_unit, path, where)
    return validate.wavelength_unit("Angstrom", path, "the default unit")


def _number(header, key, path):
    try:
        v = float(header[key])
    except (TypeError, ValueError):
        raise InputError(path, f"{key} is not a number: {header[key]!r}") from None
    if not np.isfinite(v):
        raise InputError(path, f"{key} is not finite")
    return v


def axis_values(header, n: int, path) -> np.ndarray:
    """``x`` of pixels 1..n from CRVAL1/CRPIX1/CD1_1|CDELT1 or W0/WPC, log10 undone for DC-FLAG 1."""
    p = np.arange(1, n + 1, dtype=np.float64)
    if header.get("CRVAL1") is not None:
        step_key = "CD1_1" if header.get("CD1_1") is not None else "CDELT1"
        if header.get(step_key) is None:
            raise InputError(path, "no spectral axis: CRVAL1 without CD1_1 or CDELT1")
        crpix = _number(header, "CRPIX1", path) if header.get("CRPIX1") is not None else 0.0
        x = _number(header, "CRVAL1", path) + _number(header, step_key, path) * (p - crpix)
    elif header.get("W0") is not None and header.get("WPC") is not None:
        x = _number(header, "W0", path) + _number(header, "WPC", path) * (p - 1.0)
    else:
        raise InputError(path, "no spectral axis: neither CRVAL1 and CDELT1 nor W0 and WPC")
    flag = header.get("DC-FLAG", 0)
    try:
        flag = int(flag)
    except (TypeError, ValueError):
        raise InputError(path, f"DC-FLAG is {flag!r}; expected 0 (linear) or 1 (log10)") from None
    if flag == 1:
        if np.any(x > 300):
            raise InputError(path, "DC-FLAG = 1 but the axis values are not log10 wavelengths")
        return 10.0**x
    if flag != 0:
        raise InputError(path, f"DC-FLAG is {flag}; expected 0 (linear) or 1 (log10)")
    return x


def open_image(path):
    """``(path, header, flux rows, uncertainty rows or None, metadata, medium)`` of the first
    image of a file written with the linear or WAT2 dispersion cards (shared by both readers)."""
    p = validate.check_file(path)
    with fitsutil.open_fits(p) as hdul:
        index = fitsutil.first_image(hdul)
        if index is None:
            raise InputError(p, "not a spectrum file: no image HDU with data")
        hdu = hdul[index]
        header = fitsutil.merged_header(hdul[0].header if index else None, hdu.header)
        flux, unc = bands.split(hdu.data, hdu.header, p)
        attrs = fitsutil.header_metadata(header)
        file_medium = fitsutil.air_or_vacuum(header) or "unknown"
    return p, header, flux, unc, attrs, file_medium


def read(path, *, wave_unit=None, medium=None, **_options):
    """Read a linear-dispersion image (one spectrum, or one per row) into a Spectrum."""
    p, header, flux, unc, attrs, file_medium = open_image(path)
    unit = convention_unit(header, wave_unit, p)
    wave = validate.to_angstrom(axis_values(header, flux.shape[1], p), unit)
    if flux.shape[0] == 1:
        flux, unc, wave2 = flux[0], None if unc is None else unc[0], wave
    else:
        wave2 = np.broadcast_to(wave, flux.shape).copy()
    return validate.build(
        p, NAME, wave2, flux, unc, medium=file_medium, medium_option=medium, attrs=attrs
    )
