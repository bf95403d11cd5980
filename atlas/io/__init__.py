"""Reading spectrum files: one small module per format and one picker.

Each reader module exposes ``NAME``, ``DESCRIPTION``, ``can_read(path) -> bool``
(a cheap sniff that never raises) and ``read(path, **options) -> xarray.Dataset``
(a Spectrum, see :mod:`atlas.spectrum`).  :func:`read` asks each reader in the
order of ``READERS`` whether it can read a file and lets the first that says yes
read it; :func:`detect` names that reader.  Every problem with a file ends as
``InputError(path, reason)``.  Gzip or bzip2 files (by their first bytes) are
unpacked to a temporary copy first (:mod:`atlas.io.compressed`).
"""

from __future__ import annotations

import os

from atlas.errors import InputError
from atlas.io import (
    compressed,
    fits_echelle,
    fits_image,
    fits_linear,
    fits_multispec,
    fits_table,
    text,
    validate,
)

#: Readers in the order they are asked (the most specific FITS layout first).
READERS = (fits_multispec, fits_echelle, fits_linear, fits_image, fits_table, text)

FORMATS = {r.NAME: r for r in READERS}


def _reader_named(name: str):
    try:
        return FORMATS[name]
    except KeyError:
        raise InputError(
            "--format", f"unknown format {name!r}; known: {', '.join(FORMATS)}"
        ) from None


def detect(path) -> str:
    """Name of the reader for a file (one of ``FORMATS``: ``fits_multispec``, ``fits_echelle``, ...).

    Raises ``InputError`` when the file is missing, empty, a broken FITS file or
    in no format we read.
    """
    p = validate.check_file(path)
    if compressed.kind(p):
        with compressed.unpacked(p) as inner:
            return detect(inner)
    for reader in READERS:
        if reader.can_read(p):
            return reader.NAME
    if validate.is_fits(p):
        from atlas.io import fitsutil

        with fitsutil.open_fits(p):  # raises for truncated or corrupt files
            pass
        raise InputError(
            p,
            "no spectrum in this FITS file: no 1-D image, no table and no echelle orders"
            " with a WAVELENGTH image",
        )
    raise InputError(
        p, "not a spectrum file: neither FITS nor a text table with a wavelength column"
    )


def read(
    path, *, format: str | None = None, wave_unit: str | None = None, medium: str | None = None
):
    """Read a spectrum file into a Spectrum (``xarray.Dataset``, wavelengths in Å).

    ``format`` forces a reader by name; ``wave_unit`` gives the wavelength unit
    where the file names none; ``medium`` (``air``/``vacuum``) overrides the
    file's medium.
    """
    validate.check_medium_option(medium)
    p = validate.check_file(os.fspath(path))
    if compressed.kind(p):
        from atlas.spectrum import sha256_of

        with compressed.unpacked(p) as inner:
            ds = read(inner, format=format, wave_unit=wave_unit, medium=medium)
        ds.attrs.update(source_path=os.path.abspath(p), source_sha256=sha256_of(p))
        ds.attrs["compression"] = compressed.kind(p)
        return ds
    reader = _reader_named(format) if format else FORMATS[detect(p)]
    try:
        return reader.read(p, wave_unit=wave_unit, medium=medium)
    except InputError:
        raise
    except (OSError, ValueError, TypeError, KeyError, IndexError, AttributeError) as exc:
        # The reader's own checks should have caught this; never show a traceback.
        raise InputError(p, f"cannot read as {reader.NAME}: {validate.short_reason(exc)}") from None
