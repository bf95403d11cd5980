"""Reader for echelle (or single) spectra whose per-order dispersion is in ``WAT2_nnn`` cards.

Layout (the published ``WAT`` header convention, see :mod:`atlas.io.wat`):
``WAT0_001 = 'system=multispec'`` (or ``CTYPE1 = 'MULTISPE'``), an image of
``(orders, pixels)`` (``(pixels)`` or ``(1, pixels)`` for one order, or
``(bands, orders, pixels)`` with ``BANDIDk`` labels, see :mod:`atlas.io.bands`),
and one ``specN`` per image line in ``WAT2``: aperture, beam, dispersion type
0/1/2, Chebyshev, Legendre, linear or cubic spline terms, weights and redshift
``z``, evaluated exactly (numpy.polynomial, scipy.interpolate).  Physical pixels
follow ``LTV1``/``LTM1_1`` and physical lines ``LTV2``/``LTM2_2`` (logical
``l = LTM p + LTV``; default identity).  Pixels past a line's ``nw`` valid
pixels are masked.  Unit from ``units=`` in ``WAT1`` (else Å); medium from
``AIRORVAC``/``VACUUM``/``MEDIUM``, else unknown.  Orders are kept apart.
"""

from __future__ import annotations

import numpy as np

from atlas.errors import InputError
from atlas.io import fitsutil, validate, wat
from atlas.io.fits_linear import convention_unit, open_image

NAME = "fits_multispec"
DESCRIPTION = "FITS image of orders with per-order dispersion in WAT2 header cards"


def _claims(header, is_image) -> bool:
    if not is_image or header.get("NAXIS", 0) < 1:
        return False
    system = wat.attributes(wat.wat_string(header, 0)).get("system", "").lower()
    return system == "multispec" or str(header.get("CTYPE1", "")).strip().upper() == "MULTISPE"


@validate.sniffer
def can_read(path) -> bool:
    """True for a FITS image with ``system=multispec`` in WAT0 (or CTYPE1 MULTISPE)."""
    if not validate.is_fits(path):
        return False
    headers = fitsutil.peek(path)
    first = next((h for h in (headers or []) if h[2] and h[1].get("NAXIS", 0) >= 1), None)
    return first is not None and _claims(first[1], first[2])


def _ltm(header, key, default):
    v = header.get(key, default)
    try:
        return float(v)
    except (TypeError, ValueError):
        return default


def order_wavelengths(header, rows: int, n: int, path):
    """(wavelengths rows x n in the file's unit, valid mask rows x n, apertures) from WAT2."""
    specs = wat.attributes(wat.wat_string(header, 2))
    ltv1, ltm1 = _ltm(header, "LTV1", 0.0), _ltm(header, "LTM1_1", 1.0)
    ltv2, ltm2 = _ltm(header, "LTV2", 0.0), _ltm(header, "LTM2_2", 1.0)
    if ltm1 == 0 or ltm2 == 0:
        raise InputError(path, "LTM1_1 or LTM2_2 is zero: no pixel mapping")
    pix = (np.arange(1, n + 1, dtype=np.float64) - ltv1) / ltm1
    wave = np.empty((rows, n))
    valid = np.zeros((rows, n), dtype=bool)
    apertures = []
    for k in range(rows):
        line = int(round(((k + 1) - ltv2) / ltm2))
        key = f"spec{line}"
        if key not in specs:
            raise InputError(path, f"no dispersion for image line {k + 1}: {key} missing in WAT2")
        spec = wat.spec_line(specs[key], path, f"WAT2 {key}")
        apertures.append(spec["aperture"])
        ok = (pix >= 1.0) & (pix <= spec["nw"])
        if ok.sum() < 2:
            raise InputError(path, f"WAT2 {key}: fewer than 2 valid pixels (nw = {spec['nw']})")
        w = wat.dispersion(spec, pix, path, f"WAT2 {key}")
        wave[k] = _extend(w, ok)
        valid[k] = ok
    return wave, valid, apertures


def _extend(w, ok):
    """Wavelengths outside the valid pixels continued linearly from the valid edge (they are masked)."""
    idx = np.flatnonzero(ok)
    out = np.array(w, dtype=np.float64)
    i0, i1 = idx[0], idx[-1]
    lo_step, hi_step = out[i0 + 1] - out[i0], out[i1] - out[i1 - 1]
    before = np.arange(i0)
    after = np.arange(i1 + 1, out.size)
    out[before] = out[i0] - lo_step * (i0 - before)
    out[after] = out[i1] + hi_step * (after - i1)
    return out


def read(path, *, wave_unit=None, medium=None, **_options):
    """Read every order of a WAT2 multispec image into a Spectrum (``order``, ``sample``)."""
    p, header, flux, unc, attrs, file_medium = open_image(path)
    unit = convention_unit(header, wave_unit, p)
    raw, valid, apertures = order_wavelengths(header, flux.shape[0], flux.shape[1], p)
    attrs["apertures"] = ",".join(map(str, apertures))
    wave = validate.to_angstrom(raw, unit)
    bad = ~valid
    if flux.shape[0] == 1:
        wave, flux, bad = wave[0], flux[0], bad[0]
        unc = None if unc is None else unc[0]
    return validate.build(
        p, NAME, wave, flux, unc, medium=file_medium, medium_option=medium, attrs=attrs, mask=bad
    )
