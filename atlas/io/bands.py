"""Image shapes of spectra: degenerate axes, one spectrum per row, and bands.

A FITS image of ``NAXIS1`` pixels (axis 1, the dispersion axis) may carry more axes:

* ``(n,)``, ``(1, n)``, ``(1, 1, n)`` (numpy order): one spectrum;
* ``(rows, n)``: one spectrum (or echelle order) per row;
* ``(bands, rows, n)``: band 1 is the spectrum; a band whose ``BANDIDk`` label starts
  with ``sigma``, ``error``, ``noise`` or ``uncertainty`` (standard deviations) or
  ``variance`` is the uncertainty (band labels as in the published ``WAT`` header
  convention, from memory: ``BANDID1 = 'spectrum - background fit, weights variance'``,
  ``BANDID4 = 'sigma - background fit, weights variance'``).  Other bands (raw,
  background) are ignored.
"""

from __future__ import annotations

import numpy as np

from atlas.errors import InputError

#: First word of a BANDIDk label and what the band holds.
BAND_KINDS = {
    "sigma": "sigma",
    "error": "sigma",
    "err": "sigma",
    "noise": "sigma",
    "uncertainty": "sigma",
    "variance": "variance",
    "var": "variance",
}


def band_kind(label) -> str | None:
    """``sigma``/``variance`` for an uncertainty band label, else None."""
    words = str(label or "").strip().lower().replace("-", " ").replace(",", " ").split()
    return BAND_KINDS.get(words[0]) if words else None


def split(data, header, path):
    """(flux rows x n, uncertainty rows x n or None) of an image; ``InputError`` for other shapes."""
    from atlas.io.fits_image import to_sigma

    a = np.asarray(data, dtype=np.float64)
    if a.ndim == 1:
        return a[np.newaxis, :], None
    if a.ndim == 2:
        return a, None
    if a.ndim != 3:
        raise InputError(path, f"image has {a.ndim} axes; a spectrum image has 1, 2 or 3")
    unc = None
    for k in range(2, a.shape[0] + 1):
        kind = band_kind(header.get(f"BANDID{k}"))
        if kind:
            unc = to_sigma(a[k - 1], kind)
            break
    return a[0], unc


def shape_text(header) -> str:
    """``NAXIS1 x NAXIS2 ...`` of a header, for messages."""
    n = int(header.get("NAXIS", 0))
    return " x ".join(str(header.get(f"NAXIS{i}", "?")) for i in range(1, n + 1)) or "empty"
