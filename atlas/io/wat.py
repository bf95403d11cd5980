"""Dispersion from ``WATn_nnn`` header cards, a published FITS header convention for spectra.

The convention (from the published description of the ``WAT`` world coordinate
attributes; details below from memory of that document):

* The attribute string of axis ``n`` is the concatenation of the string values of
  ``WATn_001``, ``WATn_002``, ... in order, each card holding exactly 68
  characters of it (so a piece may end in a space that a FITS reader trims; we
  pad every piece but the last back to 68 characters).
* It holds ``key=value`` pairs, a value with spaces in double quotes:
  ``WAT0_001 = 'system=multispec'``, ``WAT1_001 = 'wtype=multispec label=Wavelength
  units=angstroms'``, ``WAT2_001 = 'wtype=multispec spec1 = "..." spec2 = "..."'``.
* ``specN`` (one per image line N, in physical lines) is
  ``ap beam dtype w1 dw nw z aplow aphigh [function terms]`` with ``dtype`` 0
  (linear: ``w = w1 + dw (p - 1)``), 1 (log-linear: ``w = 10**(w1 + dw (p - 1))``) or
  2 (non-linear: ``w = sum_i wt_i (w0_i + W_i(p))``), each divided by ``1 + z``;
  ``p`` is the physical pixel (1 = first), ``nw`` the number of valid pixels.
* A non-linear term is ``wt w0 ftype`` and its parameters: ``ftype`` 1 Chebyshev
  or 2 Legendre (``order pmin pmax c1 .. c_order``, argument
  ``n = (2p - (pmax + pmin)) / (pmax - pmin)``), 3 cubic spline
  (``npieces pmin pmax`` and ``npieces + 3`` coefficients) or 4 linear spline
  (``npieces pmin pmax`` and ``npieces + 1`` coefficients), both over
  ``s = (p - pmin) / (pmax - pmin) * npieces``.  Types 5 and 6 (pixel and sampled
  tables) are refused.

Everything here raises ``InputError(path, reason)`` for a bad string.
"""

from __future__ import annotations

import re

import numpy as np

from atlas.errors import InputError

#: Characters of the attribute string held by each WATn_nnn card.
WAT_CARD_CHARS = 68

_PAIR_RE = re.compile(r'([A-Za-z_][A-Za-z0-9_]*)\s*=\s*(?:"([^"]*)"|(\S+))')
_DTYPES = {0: "linear", 1: "log-linear", 2: "non-linear"}
_FTYPES = {1: "Chebyshev", 2: "Legendre", 3: "cubic spline", 4: "linear spline"}


def wat_string(header, axis: int) -> str | None:
    """The joined attribute string of ``WAT<axis>_nnn`` cards, or None when there are none."""
    pat = re.compile(rf"^WAT{axis}_(\d{{3}})$")
    keys = sorted((k for k in header if pat.match(k)), key=lambda k: int(pat.match(k).group(1)))
    if not keys:
        return None
    pieces = [str(header[k]) for k in keys]
    return "".join(p.ljust(WAT_CARD_CHARS) for p in pieces[:-1]) + pieces[-1]


def attributes(text: str | None) -> dict[str, str]:
    """``key=value`` pairs of an attribute string (quoted values unquoted), keys lower-case."""
    if not text:
        return {}
    return {
        m.group(1).lower(): (m.group(2) if m.group(2) is not None else m.group(3))
        for m in _PAIR_RE.finditer(text)
    }


def _numbers(text: str, path, what: str) -> list[float]:
    try:
        return [float(t.replace("D", "E").replace("d", "e")) for t in text.split()]
    except ValueError:
        raise InputError(path, f"{what}: not numbers ({text[:60]!r})") from None


def spec_line(text: str, path, what: str) -> dict:
    """The fields of one ``specN`` value: aperture, beam, dtype, w1, dw, nw, z and terms."""
    v = _numbers(text, path, what)
    if len(v) < 9:
        raise InputError(path, f"{what}: {len(v)} values, the convention needs at least 9")
    dtype = int(v[2])
    if dtype not in _DTYPES:
        raise InputError(path, f"{what}: dispersion type {v[2]:g} is not 0, 1 or 2")
    return {
        "aperture": int(v[0]),
        "beam": int(v[1]),
        "dtype": dtype,
        "w1": v[3],
        "dw": v[4],
        "nw": int(v[5]),
        "z": v[6],
        "terms": v[9:],
    }


def _term(rest: list[float], path, what: str):
    """One non-linear term from the front of ``rest``: (wt, w0, ftype, params, remaining)."""
    if len(rest) < 6:
        raise InputError(path, f"{what}: incomplete non-linear term")
    wt, w0, ftype = rest[0], rest[1], int(rest[2])
    if ftype not in _FTYPES:
        raise InputError(
            path, f"{what}: dispersion function type {rest[2]:g} is not supported (only 1-4)"
        )
    size = int(rest[3])
    ncoef = size if ftype in (1, 2) else size + 3 if ftype == 3 else size + 1
    if size < 1 or len(rest) < 6 + ncoef:
        raise InputError(path, f"{what}: {_FTYPES[ftype]} term needs {ncoef} coefficients")
    params = rest[3 : 6 + ncoef]
    return wt, w0, ftype, params, rest[6 + ncoef :]


def function_value(ftype: int, params, p) -> np.ndarray:
    """One dispersion function W(p) of type 1-4 at physical pixels ``p``."""
    from numpy.polynomial import chebyshev, legendre
    from scipy.interpolate import BSpline

    size, pmin, pmax, coef = int(params[0]), params[1], params[2], np.asarray(params[3:])
    p = np.asarray(p, dtype=np.float64)
    if ftype in (1, 2):
        n = (2.0 * p - (pmax + pmin)) / (pmax - pmin)
        return (chebyshev.chebval if ftype == 1 else legendre.legval)(n, coef)
    s = (p - pmin) / (pmax - pmin) * size
    if ftype == 3:
        # uniform cubic B-splines on knots -3..size+3; the convention's basis is 6 x B-spline
        knots = np.arange(-3.0, size + 4.0)
        return 6.0 * BSpline(knots, coef, 3, extrapolate=True)(s)
    j = np.clip(np.floor(s), 0, size - 1).astype(int)
    b = s - j
    return (1.0 - b) * coef[j] + b * coef[j + 1]


def dispersion(spec: dict, p, path, what: str) -> np.ndarray:
    """Wavelengths (in the file's unit) of one ``specN`` at physical pixels ``p``."""
    p = np.asarray(p, dtype=np.float64)
    if spec["dtype"] == 0:
        w = spec["w1"] + spec["dw"] * (p - 1.0)
    elif spec["dtype"] == 1:
        w = 10.0 ** (spec["w1"] + spec["dw"] * (p - 1.0))
    else:
        rest, w = list(spec["terms"]), np.zeros_like(p)
        if not rest:
            raise InputError(path, f"{what}: non-linear dispersion without a function")
        while rest:
            wt, w0, ftype, params, rest = _term(rest, path, what)
            if params[2] == params[1]:
                raise InputError(path, f"{what}: pmin equals pmax")
            w = w + wt * (w0 + function_value(ftype, params, p))
    return w / (1.0 + spec["z"])


def describe(spec: dict) -> str:
    """A short text for a spec line's dispersion type (for notes)."""
    return _DTYPES[spec["dtype"]]
