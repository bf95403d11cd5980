"""Reader for a FITS table (binary or ASCII) with wavelength, flux and optional uncertainty columns.

Columns are found by name, case-insensitively (see ``WAVE_NAMES``, ``FLUX_NAMES``,
``SIGMA_NAMES``, ``VARIANCE_NAMES``, ``IVAR_NAMES``; a quality column from
``QUALITY_NAMES`` masks every sample where it is non-zero).  Either one row per sample,
a single row whose cells are whole arrays, or one row per echelle order whose cells
are that order's arrays.  The wavelength unit comes from the
column's ``TUNITn`` (converted with astropy.units), else from ``--wave-unit``, else
inferred from the value range (``validate.infer_unit``); the
medium from its ``TCTYPn`` (``AWAV`` air, ``WAVE`` vacuum), else from a ``MEDIUM``,
``AIRORVAC`` or ``VACUUM`` header keyword, else ``unknown``.  The flux unit is the flux column's ``TUNITn``.
"""

from __future__ import annotations

import numpy as np

from atlas.errors import InputError
from atlas.io import fitsutil, validate
from atlas.io.fits_image import to_sigma, unit_or_inferred

NAME = "fits_table"
DESCRIPTION = "FITS table with wavelength, flux and optional uncertainty columns"

WAVE_NAMES = ("wavelength", "wave", "lambda", "wavelen", "wl", "lam")
FLUX_NAMES = (
    "flux",
    "flux_density",
    "intensity",
    "counts",
    "spectrum",
    "spec",
    "signal",
    "flam",
    "fnu",
)
SIGMA_NAMES = (
    "uncertainty",
    "error",
    "err",
    "sigma",
    "stddev",
    "noise",
    "unc",
    "flux_err",
    "flux_error",
    "flux_uncertainty",
    "err_flux",
    "error_flux",
    "e_flux",
    "eflux",
)
VARIANCE_NAMES = ("variance", "var", "flux_var", "flux_variance")
IVAR_NAMES = ("ivar", "inverse_variance", "invvar", "flux_ivar")
#: Quality / mask columns: a non-zero value marks a bad sample (common practice).
QUALITY_NAMES = ("quality", "qual", "mask", "dq", "flag", "flags", "badpix", "qual_flag")


def _is_table(header) -> bool:
    return str(header.get("XTENSION", "")).strip().upper() in ("BINTABLE", "TABLE")


@validate.sniffer
def can_read(path) -> bool:
    """True for a FITS file holding a table extension."""
    if not validate.is_fits(path):
        return False
    headers = fitsutil.peek(path)
    return bool(headers) and any(_is_table(h) for _, h, _ in headers)


def _find(names_lower: dict, candidates) -> str | None:
    for c in candidates:
        if c in names_lower:
            return names_lower[c]
    return None


def read(path, *, wave_unit=None, medium=None, **_options):
    """Read the first table with a wavelength column into a Spectrum."""
    from astropy.io import fits

    p = validate.check_file(path)
    with fitsutil.open_fits(p) as hdul:
        tables = [
            (i, hdu)
            for i, hdu in enumerate(hdul)
            if isinstance(hdu, fits.BinTableHDU | fits.TableHDU) and _is_table(hdu.header)
        ]
        if not tables:
            raise InputError(p, "not a spectrum file: no table extension")
        chosen = None
        for i, hdu in tables:
            names = {c.name.strip().lower(): c.name for c in hdu.columns}
            if _find(names, WAVE_NAMES):
                chosen = (i, hdu, names)
                break
        if chosen is None:
            raise InputError(
                p,
                "no spectral axis: no wavelength column (looked for " + ", ".join(WAVE_NAMES) + ")",
            )
        i, hdu, names = chosen
        wcol = _find(names, WAVE_NAMES)
        fcol = _find(names, FLUX_NAMES)
        if fcol is None:
            raise InputError(p, "no flux column (looked for " + ", ".join(FLUX_NAMES) + ")")
        ucol, kind = None, None
        for cands, k in (
            (SIGMA_NAMES, "sigma"),
            (VARIANCE_NAMES, "variance"),
            (IVAR_NAMES, "ivar"),
        ):
            ucol = _find(names, cands)
            if ucol:
                kind = k
                break
        data = hdu.data
        if data is None or len(data) == 0:
            raise InputError(p, "the table has no rows")
        wave = _column(data, wcol, p)
        flux = _column(data, fcol, p)
        unc = None if ucol is None else to_sigma(_column(data, ucol, p), kind)
        qcol = _find(names, QUALITY_NAMES)
        bad = None if qcol is None else _column(data, qcol, p) != 0
        cols = {c.name: c for c in hdu.columns}
        unit, note = unit_or_inferred(
            cols[wcol].unit, wave_unit, wave, p, f"TUNIT of column {wcol!r}"
        )
        file_medium = _medium(cols[wcol], hdu.header, hdul[0].header)
        header = fitsutil.merged_header(hdul[0].header if i else None, hdu.header)
        attrs = fitsutil.header_metadata(header)
        if cols[fcol].unit:
            attrs["flux_unit"] = str(cols[fcol].unit).strip()
        if note:
            attrs["wave_unit_inferred"] = note
    try:
        wave_A = validate.to_angstrom(wave, unit)
    except (TypeError, ValueError) as exc:
        raise InputError(
            p, f"wavelength column is not numeric ({validate.short_reason(exc)})"
        ) from None
    return validate.build(
        p, NAME, wave_A, flux, unc, medium=file_medium, medium_option=medium, attrs=attrs, mask=bad
    )


def _column(data, name, path) -> np.ndarray:
    """One column as a float array: rows (1-D), the single row's array cell (1-D), or
    one array cell per row (2-D: one echelle order per row)."""
    try:
        col = np.asarray(data[name])
        if col.ndim == 2 and col.shape[0] == 1:
            col = col[0]
        if col.ndim not in (1, 2):
            raise InputError(
                path,
                f"column {name!r} has shape {col.shape}; expected one value or one array per row",
            )
        return col.astype(np.float64)
    except (TypeError, ValueError) as exc:
        raise InputError(
            path, f"column {name!r} is not numeric ({validate.short_reason(exc)})"
        ) from None


def _medium(col, header, primary) -> str:
    """``air``/``vacuum`` from the column's TCTYPn, else a MEDIUM keyword, else ``unknown``."""
    ctype = ""
    # astropy keeps TCTYPn in the header only; find the column's number.
    for n in range(1, int(header.get("TFIELDS", 0)) + 1):
        if str(header.get(f"TTYPE{n}", "")).strip() == col.name:
            ctype = str(header.get(f"TCTYP{n}", "")).strip().upper()
            break
    if ctype.startswith("AWAV"):
        return "air"
    if ctype.startswith("WAVE"):
        return "vacuum"
    return fitsutil.air_or_vacuum(header) or fitsutil.air_or_vacuum(primary) or "unknown"
