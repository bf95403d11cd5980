"""Checks shared by every reader; each failure raises ``InputError(path, reason)``.

Readers call these at their boundary so that a bad file always ends as one clear
line, never as a library traceback.  :func:`build` is the one way a reader turns
checked arrays into a Spectrum (it reverses descending wavelengths, applies the
medium override and sets ``source_path``, ``source_sha256`` and ``format``).
"""

from __future__ import annotations

import functools
import os
import re

import numpy as np

from atlas.errors import InputError

#: Spellings of wavelength units we accept beside astropy's own names.
_UNIT_ALIASES = {
    "a": "Angstrom",
    "aa": "Angstrom",
    "å": "Angstrom",
    "angstrom": "Angstrom",
    "angstroms": "Angstrom",
    "ang": "Angstrom",
    "nm": "nm",
    "nanometer": "nm",
    "nanometers": "nm",
    "nanometre": "nm",
    "nanometres": "nm",
    "um": "um",
    "µm": "um",
    "μm": "um",
    "micron": "um",
    "microns": "um",
    "micrometer": "um",
    "micrometers": "um",
    "m": "m",
    "meter": "m",
    "meters": "m",
    "metre": "m",
    "metres": "m",
    "cm": "cm",
    "mm": "mm",
    "pm": "pm",
}

MEDIUM_OPTIONS = ("air", "vacuum")

#: Where a file names no wavelength unit: the unit whose range holds all values
#: (common practice for ultraviolet to infrared spectra).  Å and nm overlap in
#: 2,000-3,000; values there are ambiguous and refused.
INFERRED_UNIT_RANGES = (("Angstrom", 2000.0, 30000.0), ("nm", 200.0, 3000.0), ("um", 0.2, 30.0))
_UNIT_SHOWN = {"Angstrom": "Å", "nm": "nm", "um": "µm"}


def check_file(path) -> str:
    """The path as a string, after checking it names a non-empty regular file."""
    p = os.fspath(path)
    if not os.path.exists(p):
        raise InputError(p, "no such file")
    if os.path.isdir(p):
        raise InputError(p, "is a folder, not a spectrum file")
    try:
        size = os.path.getsize(p)
    except OSError as exc:
        raise InputError(p, f"cannot read file ({exc.strerror or exc})") from None
    if size == 0:
        raise InputError(p, "empty file (0 bytes)")
    return p


def sniffer(can_read):
    """Make a ``can_read`` function answer False instead of raising, whatever the file holds."""

    @functools.wraps(can_read)
    def safe(path) -> bool:
        try:
            return bool(can_read(path))
        except Exception:
            return False

    return safe


def head_bytes(path, n: int = 2880) -> bytes:
    """The first ``n`` bytes of a file (empty on any error: used by cheap sniffers)."""
    try:
        with open(path, "rb") as fh:
            return fh.read(n)
    except OSError:
        return b""


def is_fits(path) -> bool:
    """True when the file starts like a FITS file (``SIMPLE  =`` in the first card)."""
    return head_bytes(path, 30).startswith(b"SIMPLE  =")


def wavelength_unit(text, path, what: str):
    """An astropy length unit from a unit string such as ``Angstrom``, ``nm``, ``um``.

    Raises ``InputError`` for a string that is no unit or not a length.
    """
    import astropy.units as u

    raw = "" if text is None else str(text).strip()
    if not raw:
        raise InputError(path, f"no wavelength unit for {what}")
    name = _UNIT_ALIASES.get(raw.lower(), raw)
    try:
        unit = u.Unit(name, parse_strict="raise")
    except (ValueError, TypeError):
        try:
            unit = u.Unit(name, format="fits", parse_strict="raise")
        except (ValueError, TypeError):
            raise InputError(path, f"unknown unit {raw!r} for {what}") from None
    if unit.physical_type != "length":
        raise InputError(path, f"unit {raw!r} of {what} is not a wavelength unit")
    return unit


def infer_unit(values, path):
    """(astropy unit, one-line note) from the range of wavelengths given without a unit.

    ``InputError`` when no range or more than one holds every finite value.
    """
    import astropy.units as u

    v = np.asarray(values, dtype=np.float64)
    v = v[np.isfinite(v)]
    if v.size == 0:
        raise InputError(path, "no finite wavelengths to tell their unit from")
    lo, hi = float(v.min()), float(v.max())
    fits = [name for name, a, b in INFERRED_UNIT_RANGES if a <= lo and hi <= b]
    span = f"{lo:,.6g}–{hi:,.6g}"
    if len(fits) != 1:
        why = (
            "fits both " + " and ".join(_UNIT_SHOWN[f] for f in fits)
            if fits
            else "fits no usual unit"
        )
        raise InputError(
            path, f"no wavelength unit in the file and the values {span} {why}; give --wave-unit"
        )
    note = (
        f"wavelength unit inferred as {_UNIT_SHOWN[fits[0]]} from the values {span}"
        " (the file names none; --wave-unit overrides)"
    )
    return u.Unit(fits[0]), note


def to_angstrom(values, unit) -> np.ndarray:
    """Values in ``unit`` (an astropy length unit) as float64 Å."""
    import astropy.units as u

    return (np.asarray(values, dtype=np.float64) * unit).to_value(u.AA)


def check_medium_option(medium) -> str | None:
    """``None``, ``air`` or ``vacuum``; anything else is an ``InputError`` on ``--medium``."""
    if medium is None:
        return None
    m = str(medium).strip().lower()
    if m not in MEDIUM_OPTIONS:
        raise InputError("--medium", f"must be air or vacuum, not {medium!r}")
    return m


def check_wavelengths(wave, path, what: str = "wavelengths") -> bool:
    """Check one run of wavelengths; True when they decrease (the caller reverses them).

    Refuses non-finite values, fewer than two samples, repeated values and
    values that neither only increase nor only decrease.
    """
    w = np.asarray(wave, dtype=np.float64)
    if w.ndim != 1:
        raise InputError(path, f"{what} are not one-dimensional")
    if w.size < 2:
        raise InputError(path, f"{what}: fewer than 2 samples")
    bad = ~np.isfinite(w)
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise InputError(
            path,
            f"non-finite {what} (NaN or infinite) at sample {i} ({int(bad.sum())} in all)",
        )
    d = np.diff(w)
    same = d == 0
    if same.any():
        i = int(np.flatnonzero(same)[0])
        raise InputError(
            path,
            f"repeated {what}: {w[i]:.6g} at samples {i} and {i + 1} (must be strictly monotonic)",
        )
    up = d > 0
    if up.all():
        return False
    if not up.any():
        return True
    i = int(np.flatnonzero(up != up[0])[0]) + 1
    raise InputError(path, f"{what} are not monotonic (shuffled): direction changes at sample {i}")


def check_same_length(path, **arrays) -> None:
    """All named arrays have the same shape, or an ``InputError`` naming them."""
    shapes = {k: np.shape(v) for k, v in arrays.items() if v is not None}
    if len(set(shapes.values())) > 1:
        desc = ", ".join(f"{k} {_shape_text(s)}" for k, s in shapes.items())
        raise InputError(path, f"length mismatch: {desc}")


def _shape_text(shape) -> str:
    return str(shape[0]) if len(shape) == 1 else "x".join(map(str, shape))


def check_flux(flux, path) -> None:
    """Refuse a flux array with no finite value at all."""
    f = np.asarray(flux, dtype=np.float64)
    if f.size == 0:
        raise InputError(path, "no samples")
    if not np.isfinite(f).any():
        raise InputError(path, "flux is NaN (or infinite) everywhere: no usable samples")


def short_reason(exc: BaseException, limit: int = 120) -> str:
    """One short line from a library exception, for the end of an error message."""
    text = " ".join(str(exc).split()) or type(exc).__name__
    text = re.sub(r"\s+", " ", text)
    return text if len(text) <= limit else text[: limit - 3] + "..."


def build(
    path,
    fmt: str,
    wave_A,
    flux,
    uncertainty=None,
    *,
    medium: str = "unknown",
    medium_option: str | None = None,
    attrs: dict | None = None,
    mask=None,
):
    """Check arrays and make the Spectrum (wavelength in Å, along the last axis).

    1-D arrays give ``sample``; 2-D arrays give ``order``, ``sample``, each order
    checked and reversed on its own.  ``medium_option`` (``air``/``vacuum``)
    overrides the file's medium.  ``mask`` (True = bad sample) is kept beside the
    NaN-flux mask.
    """
    from atlas.spectrum import make_spectrum, sha256_of

    p = os.fspath(path)
    wave = np.array(wave_A, dtype=np.float64)
    flx = np.array(flux, dtype=np.float64)
    unc = None if uncertainty is None else np.array(uncertainty, dtype=np.float64)
    bad = None if mask is None else np.array(mask, dtype=bool)
    check_same_length(p, wavelength=wave, flux=flx, uncertainty=unc, mask=bad)
    check_flux(flx, p)
    if bad is not None and bad.all():
        raise InputError(
            p, "every sample is flagged bad (quality or valid-pixel flags): no usable samples"
        )
    if wave.ndim == 1:
        if check_wavelengths(wave, p):
            wave, flx = wave[::-1].copy(), flx[::-1].copy()
            unc = None if unc is None else unc[::-1].copy()
            bad = None if bad is None else bad[::-1].copy()
    elif wave.ndim == 2:
        for k in range(wave.shape[0]):
            if check_wavelengths(wave[k], p, what=f"wavelengths of order {k}"):
                for arr in (wave, flx, unc, bad):
                    if arr is not None:
                        arr[k] = arr[k, ::-1]
    else:
        raise InputError(p, f"data has {wave.ndim} dimensions; expected 1 (spectrum) or 2 (orders)")
    chosen = check_medium_option(medium_option) or medium
    meta = dict(attrs or {})
    meta.update(source_path=os.path.abspath(p), source_sha256=sha256_of(p), format=fmt)
    return make_spectrum(wave, flx, unc, bad, medium=chosen, **meta)
