"""Reader for a FITS image HDU holding one 1-D spectrum with a spectral WCS.

The spectral axis is axis 1, ``CTYPE1`` one of ``WAVE``, ``AWAV`` (linear) or
``WAVE-LOG``, ``AWAV-LOG`` (logarithmic), with ``CRVAL1``, ``CRPIX1``, the step
``CDELT1`` or ``CD1_1``, and the unit ``CUNIT1``.  Wavelengths are evaluated by
astropy.wcs (wcslib), never by hand.  ``AWAV*`` means air wavelengths, ``WAVE*``
vacuum.  An image of shape (1, N) or (1, 1, N) is read as a 1-D spectrum; one of
(rows, N) with a spectral CTYPE1 as one spectrum per row on the shared axis.  An image with no
WCS at all but an image HDU named ``WAVELENGTH`` (``WAVE``, ``LAMBDA``) of the same
length beside it takes its wavelengths from there (unit in its ``BUNIT``, medium
from a ``MEDIUM``, ``AIRORVAC`` or ``VACUUM`` keyword), as a one-order echelle file would.  An optional
uncertainty image of the same length sits in an HDU named ``UNCERTAINTY``,
``ERROR``, ``ERR``, ``SIGMA``, ``STDDEV`` or ``NOISE`` (standard deviations),
``VARIANCE``/``VAR`` or ``IVAR``/``INVVAR`` (converted to standard deviations).

References
----------
Greisen, E. W., Calabretta, M. R., Valdes, F. G., & Allen, S. L. 2006,
"Representations of spectral coordinates in FITS", A&A 446, 747 (FITS WCS Paper III).
"""

from __future__ import annotations

import numpy as np

from atlas.errors import InputError
from atlas.io import fitsutil, validate

NAME = "fits_image"
DESCRIPTION = "FITS image holding a 1-D spectrum with a linear or log-linear spectral WCS"

#: CTYPE1 values we read and the medium each one means (Greisen et al. 2006, Table 1 and sect. 3).
SPECTRAL_CTYPES = {"WAVE": "vacuum", "AWAV": "air", "WAVE-LOG": "vacuum", "AWAV-LOG": "air"}


def _is_spectrum_image(extname: str, header, is_image: bool) -> bool:
    if not is_image or extname in fitsutil.UNCERTAINTY_NAMES:
        return False
    naxis = header.get("NAXIS", 0)
    n1 = header.get("NAXIS1", 0)
    if naxis == 1:
        return n1 > 1
    if naxis == 2:
        rows = header.get("NAXIS2", 0)
        spectral = str(header.get("CTYPE1", "")).strip().upper() in SPECTRAL_CTYPES
        return n1 > 1 and (rows == 1 or (rows > 1 and spectral))
    if naxis == 3:
        return header.get("NAXIS2", 0) == 1 and header.get("NAXIS3", 0) == 1 and n1 > 1
    return False


@validate.sniffer
def can_read(path) -> bool:
    """True for a FITS file with an image HDU of shape (N,) or (1, N)."""
    if not validate.is_fits(path):
        return False
    headers = fitsutil.peek(path)
    return bool(headers) and any(_is_spectrum_image(*h) for h in headers)


def read(path, *, wave_unit=None, medium=None, **_options):
    """Read the first 1-D spectrum image of a FITS file into a Spectrum."""
    p = validate.check_file(path)
    with fitsutil.open_fits(p) as hdul:
        index = next(
            (
                i
                for i, hdu in enumerate(hdul)
                if _is_spectrum_image(
                    str(hdu.header.get("EXTNAME", "")).strip().upper(), hdu.header, hdu.is_image
                )
            ),
            None,
        )
        if index is None:
            raise InputError(p, "not a spectrum file: no image HDU of shape (N,) or (1, N)")
        hdu = hdul[index]
        header = hdu.header.copy()
        flux = np.asarray(hdu.data, dtype=np.float64)
        flux = flux.reshape(-1) if flux.ndim != 2 or flux.shape[0] == 1 else flux
        wave_hdu = _wavelength_image(hdul, index)
        if wave_hdu is not None and not str(header.get("CTYPE1", "")).strip():
            # no WCS, but a WAVELENGTH image beside the flux (the one-order echelle layout)
            raw = np.asarray(wave_hdu.data, dtype=np.float64).reshape(-1)
            unit, note = unit_or_inferred(
                fitsutil.wave_image_unit(wave_hdu.header),
                wave_unit,
                raw,
                p,
                "BUNIT/CUNIT1 of the WAVELENGTH image",
            )
            wave_A = validate.to_angstrom(raw, unit)
            file_medium = (
                fitsutil.air_or_vacuum(wave_hdu.header)
                or fitsutil.air_or_vacuum(hdul[0].header)
                or "unknown"
            )
        else:
            note = None
            wave_A, file_medium = wavelengths_from_wcs(header, flux.shape[-1], p, wave_unit)
            if flux.ndim == 2:  # one spectrum per row on the shared axis
                wave_A = np.broadcast_to(wave_A, flux.shape).copy()
        unc = _uncertainty(hdul, index, p, flux.shape)
        attrs = fitsutil.header_metadata(
            fitsutil.merged_header(hdul[0].header if index else None, header)
        )
        if note:
            attrs["wave_unit_inferred"] = note
    return validate.build(
        p, NAME, wave_A, flux, unc, medium=file_medium, medium_option=medium, attrs=attrs
    )


def wavelengths_from_wcs(header, n: int, path, wave_unit=None) -> tuple[np.ndarray, str]:
    """Wavelengths (Å) of pixels 0..n-1 on axis 1 of a header's WCS, and the medium.

    References
    ----------
    Greisen et al. 2006, A&A 446, 747 (FITS WCS Paper III), evaluated by astropy.wcs.
    """
    from astropy.wcs import WCS

    ctype = str(header.get("CTYPE1", "")).strip().upper()
    if not ctype:
        raise InputError(path, "no spectral axis: the image has no WCS (CTYPE1 missing)")
    if ctype not in SPECTRAL_CTYPES:
        raise InputError(
            path,
            f"no spectral axis: CTYPE1 is {ctype!r}, expected one of " + ", ".join(SPECTRAL_CTYPES),
        )
    if header.get("CRVAL1") is None:
        raise InputError(path, "no spectral axis: CRVAL1 (reference wavelength) missing")
    if header.get("CDELT1") is None and header.get("CD1_1") is None:
        raise InputError(
            path, "no spectral axis: neither CDELT1 nor CD1_1 gives the wavelength step"
        )
    unit = _axis_unit(header.get("CUNIT1"), wave_unit, path)
    h = header.copy()
    h["CUNIT1"] = unit.to_string("fits")
    try:
        with fitsutil.quiet():
            w = WCS(h, naxis=1)
            world = w.wcs_pix2world(np.arange(n, dtype=np.float64), 0)[0]
            out_unit = w.wcs.cunit[0]
    except Exception as exc:
        raise InputError(
            path, f"no spectral axis: unusable WCS ({validate.short_reason(exc)})"
        ) from None
    return validate.to_angstrom(world, out_unit), SPECTRAL_CTYPES[ctype]


def _axis_unit(file_unit, wave_unit, path, keyword: str = "CUNIT1"):
    """The wavelength unit: the file's, else ``wave_unit``; both must agree when both are given."""
    has_file = file_unit is not None and str(file_unit).strip() != ""
    if has_file:
        unit = validate.wavelength_unit(file_unit, path, f"the wavelengths ({keyword})")
        if wave_unit is not None:
            opt = validate.wavelength_unit(wave_unit, "--wave-unit", "wavelengths")
            if opt != unit:
                raise InputError(
                    path, f"--wave-unit {wave_unit!r} disagrees with the file's unit {file_unit!r}"
                )
        return unit
    if wave_unit is None:
        raise InputError(path, f"no wavelength unit: {keyword} missing; give it with --wave-unit")
    return validate.wavelength_unit(wave_unit, "--wave-unit", "wavelengths")


def unit_or_inferred(file_unit, wave_unit, values, path, keyword):
    """(unit, note): the file's or ``--wave-unit``'s unit, else one inferred from the values."""
    if (file_unit is None or str(file_unit).strip() == "") and wave_unit is None:
        return validate.infer_unit(values, path)
    return _axis_unit(file_unit, wave_unit, path, keyword), None


def _wavelength_image(hdul, index):
    """An image HDU named WAVELENGTH (or WAVE, LAMBDA) other than the flux HDU, or None."""
    for i, hdu in enumerate(hdul):
        name = str(hdu.header.get("EXTNAME", "")).strip().upper()
        if i != index and hdu.is_image and hdu.data is not None and name in fitsutil.WAVE_EXTNAMES:
            return hdu
    return None


def _uncertainty(hdul, index, path, shape):
    """Standard deviations from an uncertainty HDU (in the flux's shape when it fits), or None."""
    for i, hdu in enumerate(hdul):
        if i == index or not hdu.is_image or hdu.data is None:
            continue
        kind = fitsutil.UNCERTAINTY_NAMES.get(str(hdu.header.get("EXTNAME", "")).strip().upper())
        if kind:
            sig = to_sigma(np.asarray(hdu.data, dtype=np.float64), kind)
            return sig.reshape(shape) if sig.size == int(np.prod(shape)) else sig.reshape(-1)
    return None


def to_sigma(values, kind: str) -> np.ndarray:
    """Standard deviations from ``sigma``, ``variance`` or ``ivar`` (inverse variance) values."""
    v = np.asarray(values, dtype=np.float64)
    with np.errstate(divide="ignore", invalid="ignore"):
        if kind == "variance":
            v = np.sqrt(np.where(v >= 0, v, np.nan))
        elif kind == "ivar":
            v = np.where(v > 0, 1.0 / np.sqrt(np.where(v > 0, v, 1.0)), np.nan)
    return v
