"""Reader for CSV / TSV / plain text spectra, with or without a header line.

The file convention (also in README, "Reading spectrum files"):

* Lines starting with ``#``, ``;`` or ``!`` are comments, anywhere in the file;
  blank lines too; so is ``#`` or ``!`` after a space at the end of a data row.  A comment of the form ``# key: value`` with a key from
  ``METADATA_KEYS`` sets that metadata; other comments are ignored.
* The first other line is the header naming the columns, separated by tabs,
  commas, semicolons (whichever the header line holds) or else whitespace.  When
  that line holds two or three numbers there is no header: the columns are
  wavelength, flux and (optionally) uncertainty.  Numbers may use a Fortran
  ``D`` exponent (``1.5D+03``).
* The wavelength column is ``wavelength`` (or ``wave``, ``lambda``, ``wl``), its
  unit as a suffix: ``wavelength_A``, ``wavelength_nm``, ``wavelength_um`` (also
  ``wavelength [nm]`` or ``wavelength(nm)``), else the ``# wave_unit:`` comment or
  the ``wave_unit`` option (``--wave-unit``); two different units are an error;
  none at all: inferred from the value range (``validate.infer_unit``).
* A flux column (``flux``, ``intensity``, ``counts``, ...) and optionally an
  uncertainty column (``uncertainty``, ``error``, ``sigma``, ... as standard
  deviations; ``variance``; ``ivar`` as inverse variance).  Empty cells and
  ``nan`` are missing values: masked, never dropped.
"""

from __future__ import annotations

import io
import os
import re

import numpy as np

from atlas.errors import InputError
from atlas.io import meta, validate
from atlas.io.fits_image import to_sigma
from atlas.io.fits_table import FLUX_NAMES, IVAR_NAMES, SIGMA_NAMES, VARIANCE_NAMES

NAME = "text"
DESCRIPTION = "text table (CSV, TSV, whitespace): wavelength, flux, optional error; header optional"

#: First characters of a comment line.
COMMENT_CHARS = ("#", ";", "!")
#: Column names of a file without a header line.
HEADERLESS_NAMES = ("wavelength", "flux", "error")
#: A comment after the numbers of a data row: ``#`` or ``!`` and the rest of the line.
_INLINE_COMMENT = re.compile(r"\s[#!].*$")
_FORTRAN_EXP = re.compile(r"(?<=[0-9.])[dD](?=[+-]?[0-9])")

#: ``# key: value`` comment keys and what they mean.
METADATA_KEYS = {
    "target": "name of the star",
    "medium": "air or vacuum: the medium of the wavelengths",
    "wave_unit": "unit of the wavelength column when its name has no suffix (A, nm, um, ...)",
    "ra_deg": "right ascension in degrees (ra: also takes sexagesimal hours, 08:13:36.2)",
    "dec_deg": "declination in degrees (dec: also takes sexagesimal degrees, -12:03:04)",
    "ra": "right ascension: degrees or sexagesimal hours",
    "dec": "declination: degrees or sexagesimal degrees",
    "obs_time_utc": "mid-exposure time, ISO 8601 UTC (2024-03-05T21:14:03)",
    "obs_start_utc": "exposure start, ISO 8601 UTC; mid-exposure is derived with exposure_s",
    "exposure_s": "exposure time in seconds",
    "site_lat_deg": "observatory latitude in degrees (north positive)",
    "site_lon_deg": "observatory longitude in degrees (east positive)",
    "site_height_m": "observatory height above the WGS84 ellipsoid in metres",
    "resolving_power": "resolving power lambda / delta-lambda of the spectrograph",
    "flux_unit": "unit of the flux column (free text)",
}

TEXT_EXTENSIONS = (".csv", ".tsv", ".txt", ".dat", ".tab", ".ascii")
_WAVE_RE = re.compile(
    r"^(?:wavelength|wavelen|wave|lambda|wl|lam)s?"
    r"(?:\s*[\(\[]\s*(?P<u1>[^\)\]]+?)\s*[\)\]]|[_\-\s]+(?P<u2>[^\s\(\)\[\]]+))?$",
    re.IGNORECASE,
)
_COMMENT_RE = re.compile(r"^#\s*([A-Za-z_][A-Za-z0-9_\-]*)\s*[:=]\s*(.*?)\s*$")


def _split(line: str, delim: str | None) -> list[str]:
    parts = line.split(delim) if delim else line.split()
    return [s.strip().strip('"').strip("'").strip() for s in parts]


def _delimiter(header: str) -> str | None:
    for d in ("\t", ",", ";"):
        if d in header:
            return d
    return None


def _wave_match(name: str):
    return _WAVE_RE.match(name.strip())


def _first_header(text: str) -> str | None:
    for line in text.splitlines():
        s = line.strip()
        if s and not s.startswith(COMMENT_CHARS):
            return s
    return None


def _fortran(s: str) -> str:
    """Fortran ``D`` exponents as ``E`` (``1.5D+03`` -> ``1.5E+03``)."""
    return _FORTRAN_EXP.sub("E", s)


def _headerless(names) -> bool:
    return len(names) in (2, 3) and all(_is_number(_fortran(n)) for n in names)


@validate.sniffer
def can_read(path) -> bool:
    """True for UTF-8 text whose header line names a wavelength column, or any .csv/.tsv text."""
    raw = validate.head_bytes(path, 65536)
    if not raw or b"\x00" in raw or raw.startswith(b"SIMPLE  ="):
        return False
    try:
        text = raw.decode("utf-8-sig")
    except UnicodeDecodeError:
        # a multi-byte character cut at the end of the sample is fine
        try:
            text = raw[:-4].decode("utf-8-sig")
        except UnicodeDecodeError:
            return False
    header = _first_header(text)
    if header is None:
        return False
    names = _split(header, _delimiter(header))
    numbers = len(names) >= 2 and all(_is_number(_fortran(n)) for n in names)
    if any(_wave_match(n) for n in names) or numbers:  # read() refuses other than 2-3 columns
        return True
    return os.path.splitext(os.fspath(path))[1].lower() in (".csv", ".tsv")


def read(path, *, wave_unit=None, medium=None, **_options):
    """Read a CSV/TSV spectrum into a Spectrum (see the module docstring for the convention)."""
    p = validate.check_file(path)
    if validate.is_fits(p):
        raise InputError(p, "this is a FITS file, not a text table")
    try:
        with open(p, encoding="utf-8-sig") as fh:
            text = fh.read()
    except UnicodeDecodeError:
        raise InputError(p, "not a spectrum file: not UTF-8 text and not FITS") from None
    if "\x00" in text:
        raise InputError(p, "not a spectrum file: binary data, not text")
    lines = text.splitlines()
    comments: dict[str, tuple[int, str]] = {}
    header_at = None
    for i, line in enumerate(lines):
        s = line.strip()
        if not s:
            continue
        if s.startswith(COMMENT_CHARS):
            m = _COMMENT_RE.match(s)
            if m and m.group(1).lower() in METADATA_KEYS:
                comments[m.group(1).lower()] = (i + 1, m.group(2))
            continue
        header_at = i
        break
    if header_at is None:
        raise InputError(p, "no header line and no data: only comments or blank lines")
    header = lines[header_at].strip()
    delim = _delimiter(header)
    names = _split(header, delim)
    data_from = header_at + 1
    if _headerless(names):
        names, data_from = list(HEADERLESS_NAMES[: len(names)]), header_at
    elif all(_is_number(_fortran(n)) for n in names):
        raise InputError(
            p,
            f"no header line and {len(names)} columns; without a header give 2 or 3"
            " (wavelength, flux, error), or name the columns, e.g. wavelength_A,flux",
        )
    wave_i = next((k for k, n in enumerate(names) if _wave_match(n)), None)
    if wave_i is None:
        raise InputError(
            p,
            "no spectral axis: no wavelength column in the header (e.g. wavelength_A, wavelength_nm)",
        )
    flux_i, unc_i, kind = _flux_columns(p, names)

    m = _wave_match(names[wave_i])
    col_unit = m.group("u1") or m.group("u2")
    unit = _unit(p, col_unit, comments.get("wave_unit"), wave_unit)
    table = _numbers(p, lines, data_from, delim, len(names))
    note = None
    if unit is None:
        unit, note = validate.infer_unit(table[:, wave_i], p)
    wave_A = validate.to_angstrom(table[:, wave_i], unit)
    flux = table[:, flux_i]
    unc = None if unc_i is None else to_sigma(table[:, unc_i], kind)
    attrs, file_medium = _metadata(p, comments)
    if note:
        attrs["wave_unit_inferred"] = note
    return validate.build(
        p, NAME, wave_A, flux, unc, medium=file_medium, medium_option=medium, attrs=attrs
    )


def _flux_columns(path, names) -> tuple[int, int | None, str | None]:
    """Indices of the flux column and of the uncertainty column (with its kind) in a header."""
    lower = [n.lower() for n in names]
    flux_i = next((lower.index(c) for c in FLUX_NAMES if c in lower), None)
    if flux_i is None:
        flux_i = next(
            (
                k
                for k, n in enumerate(lower)
                if n.startswith("flux") and n not in SIGMA_NAMES + VARIANCE_NAMES + IVAR_NAMES
            ),
            None,
        )
    if flux_i is None:
        raise InputError(path, "no flux column in the header (e.g. flux, intensity, counts)")
    unc_i, kind = None, None
    for cands, k in ((SIGMA_NAMES, "sigma"), (VARIANCE_NAMES, "variance"), (IVAR_NAMES, "ivar")):
        hit = next((lower.index(c) for c in cands if c in lower), None)
        if hit is not None:
            unc_i, kind = hit, k
            break
    return flux_i, unc_i, kind


def _is_number(s: str) -> bool:
    try:
        float(s)
    except ValueError:
        return False
    return True


def _unit(path, col_unit, comment, option):
    """The one wavelength unit named by the column suffix, the comment and the option (None: none)."""
    named = []
    if col_unit:
        named.append(
            (
                validate.wavelength_unit(col_unit, path, "the wavelength column"),
                col_unit,
                "the column name",
            )
        )
    if comment:
        line, value = comment
        named.append(
            (
                validate.wavelength_unit(value, path, f"'# wave_unit' (line {line})"),
                value,
                f"'# wave_unit' (line {line})",
            )
        )
    if option is not None:
        named.append(
            (validate.wavelength_unit(option, "--wave-unit", "wavelengths"), option, "--wave-unit")
        )
    if not named:
        return None  # the caller infers it from the values
    first = named[0]
    for other in named[1:]:
        if other[0] != first[0]:
            raise InputError(
                path,
                f"wavelength unit {other[1]!r} from {other[2]} disagrees with {first[1]!r} from {first[2]}",
            )
    return first[0]


def _numbers(path, lines, data_from, delim, ncol) -> np.ndarray:
    """The data rows as a float array (rows x ncol); ragged or non-numeric rows are errors."""
    import pandas as pd

    rows = []
    for i in range(data_from, len(lines)):
        s = _fortran(_INLINE_COMMENT.sub("", lines[i]).strip())
        if not s or s.startswith(COMMENT_CHARS):
            continue
        n = (s.count(delim) + 1) if delim else len(s.split())
        if n != ncol:
            raise InputError(
                path,
                f"length mismatch: line {i + 1} has {n} value(s), the header names {ncol} columns",
            )
        rows.append(s)
    if not rows:
        raise InputError(path, "no data rows after the header line")
    try:
        frame = pd.read_csv(
            io.StringIO("\n".join(rows)),
            sep=delim if delim else r"\s+",
            header=None,
            dtype=np.float64,
            na_values=["", "nan", "NaN", "NAN", "null", "NULL", "-"],
            keep_default_na=True,
            skipinitialspace=True,
            engine="c",
        )
    except (ValueError, TypeError):
        for k, s in enumerate(rows):
            for v in _split(s, delim):
                if v and not _is_number(v) and v.lower() not in ("nan", "null", "-"):
                    raise InputError(path, f"not a number: {v!r} in data row {k + 1}") from None
        raise InputError(path, "data rows are not all numbers") from None
    return frame.to_numpy(dtype=np.float64)


def _metadata(path, comments) -> tuple[dict, str]:
    """Spectrum attributes and the medium from ``# key: value`` comments."""

    def bad(key, why):
        line = comments[key][0]
        return InputError(path, f"line {line}: '# {key}' {why}")

    def num(key, zero_ok):
        if key not in comments:
            return None
        v = comments[key][1]
        try:
            x = float(v)
        except ValueError:
            raise bad(key, f"is not a number: {v!r}") from None
        if not np.isfinite(x) or x < 0 or (x == 0 and not zero_ok):
            raise bad(key, f"has an impossible value {v!r}")
        return x

    attrs: dict = {}
    if comments.get("target", (0, ""))[1]:
        attrs["target"] = comments["target"][1]
    file_medium = "unknown"
    if "medium" in comments:
        m = comments["medium"][1].strip().lower()
        if m not in ("air", "vacuum", "unknown"):
            raise bad("medium", f"must be air or vacuum, not {comments['medium'][1]!r}")
        file_medium = m
    ra_key = "ra_deg" if "ra_deg" in comments else "ra" if "ra" in comments else None
    dec_key = "dec_deg" if "dec_deg" in comments else "dec" if "dec" in comments else None
    if ra_key or dec_key:
        if not (ra_key and dec_key):
            raise bad(
                ra_key or dec_key, "needs its partner (both ra_deg and dec_deg, or ra and dec)"
            )
        try:
            attrs["ra_deg"], attrs["dec_deg"] = meta.radec_deg(
                comments[ra_key][1], comments[dec_key][1]
            )
        except ValueError as exc:
            raise bad(ra_key, str(exc)) from None
    exposure = num("exposure_s", zero_ok=True)
    if exposure is not None:
        attrs["exposure_s"] = exposure
    for key, mid in (("obs_time_utc", True), ("obs_start_utc", False)):
        if key in comments and "obs_time_utc" not in attrs:
            try:
                t = meta.parse_time(comments[key][1])
            except ValueError as exc:
                raise bad(key, str(exc)) from None
            if not mid and exposure is not None:
                from astropy.time import TimeDelta

                t = t + TimeDelta(exposure / 2.0, format="sec")
            attrs["obs_time_utc"] = meta.iso_utc(t)
            attrs["obs_time_is_mid"] = bool(mid or exposure is not None)
    site = [k for k in ("site_lat_deg", "site_lon_deg", "site_height_m") if k in comments]
    if site:
        if len(site) != 3:
            raise bad(site[0], "needs site_lat_deg, site_lon_deg and site_height_m together")
        try:
            lat, lon, h = meta.site_geodetic(*(float(comments[k][1]) for k in site))
        except ValueError as exc:
            raise bad(site[0], str(exc)) from None
        attrs.update(site_lat_deg=lat, site_lon_deg=lon, site_height_m=h)
    r = num("resolving_power", zero_ok=False)
    if r is not None:
        attrs["resolving_power"] = r
    if comments.get("flux_unit", (0, ""))[1]:
        attrs["flux_unit"] = comments["flux_unit"][1]
    return attrs, file_medium
