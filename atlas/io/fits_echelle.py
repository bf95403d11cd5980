"""Reader for multi-order echelle FITS: a 2-D flux image and a wavelength image of the same shape.

Layout: an image HDU of shape (orders, pixels) holding flux (the first 2-D image
that is not named as wavelength or uncertainty), an image HDU of the same shape
named ``WAVELENGTH`` (or ``WAVE``, ``LAMBDA``) holding each pixel's wavelength,
its unit in that HDU's ``BUNIT`` (else ``--wave-unit``, else inferred from the
value range, see ``validate.infer_unit``), and optionally an
uncertainty HDU named as for ``fits_image``.  The medium comes from a ``MEDIUM``,
``AIRORVAC`` or ``VACUUM`` keyword on the wavelength HDU or the primary header, else
``unknown``.  Orders are kept apart: dimensions ``order``, ``sample``; each order
must be strictly monotonic and is reversed on its own when it descends.
"""

from __future__ import annotations

import numpy as np

from atlas.errors import InputError
from atlas.io import fitsutil, validate
from atlas.io.fits_image import to_sigma, unit_or_inferred

NAME = "fits_echelle"
DESCRIPTION = "multi-order echelle FITS: flux image (order x pixel) plus a wavelength image"

WAVE_EXTNAMES = fitsutil.WAVE_EXTNAMES


def _is_order_image(extname, header, is_image) -> bool:
    return (
        is_image
        and header.get("NAXIS", 0) == 2
        and header.get("NAXIS2", 0) > 1
        and header.get("NAXIS1", 0) > 1
        and extname not in WAVE_EXTNAMES
        and extname not in fitsutil.UNCERTAINTY_NAMES
    )


@validate.sniffer
def can_read(path) -> bool:
    """True for a FITS file with a 2-D image and an HDU named WAVELENGTH (or WAVE, LAMBDA)."""
    if not validate.is_fits(path):
        return False
    headers = fitsutil.peek(path)
    if not headers:
        return False
    return any(_is_order_image(*h) for h in headers) and any(
        name in WAVE_EXTNAMES and is_image for name, _, is_image in headers
    )


def read(path, *, wave_unit=None, medium=None, **_options):
    """Read the orders of an echelle FITS file into a Spectrum with dims ``order``, ``sample``."""
    p = validate.check_file(path)
    with fitsutil.open_fits(p) as hdul:
        names = [str(h.header.get("EXTNAME", "")).strip().upper() for h in hdul]
        fi = next(
            (i for i, h in enumerate(hdul) if _is_order_image(names[i], h.header, h.is_image)), None
        )
        wi = next((i for i, h in enumerate(hdul) if names[i] in WAVE_EXTNAMES and h.is_image), None)
        if fi is None:
            raise InputError(p, "not a spectrum file: no 2-D image of orders x pixels")
        if wi is None or hdul[wi].data is None:
            raise InputError(p, "no spectral axis: no WAVELENGTH image beside the orders")
        flux = np.asarray(hdul[fi].data, dtype=np.float64)
        wave = np.asarray(hdul[wi].data, dtype=np.float64)
        if wave.ndim == 1 and flux.ndim == 2 and wave.size == flux.shape[1]:
            wave = np.broadcast_to(wave, flux.shape).copy()  # one shared wavelength row
        unc = None
        for i, h in enumerate(hdul):
            kind = fitsutil.UNCERTAINTY_NAMES.get(names[i])
            if kind and h.is_image and h.data is not None and i != fi:
                unc = to_sigma(np.asarray(h.data, dtype=np.float64), kind)
                break
        unit, note = unit_or_inferred(
            fitsutil.wave_image_unit(hdul[wi].header),
            wave_unit,
            wave,
            p,
            "BUNIT/CUNIT1 of the WAVELENGTH image",
        )
        file_medium = (
            fitsutil.air_or_vacuum(hdul[wi].header)
            or fitsutil.air_or_vacuum(hdul[0].header)
            or "unknown"
        )
        header = fitsutil.merged_header(hdul[0].header if fi else None, hdul[fi].header)
        attrs = fitsutil.header_metadata(header)
        if note:
            attrs["wave_unit_inferred"] = note
    validate.check_same_length(p, wavelength=wave, flux=flux, uncertainty=unc)
    return validate.build(
        p,
        NAME,
        validate.to_angstrom(wave, unit),
        flux,
        unc,
        medium=file_medium,
        medium_option=medium,
        attrs=attrs,
    )
