"""Common names a spectroscopist types into Go to, mapped to what Go to already reads.

Named lines go to a line of the line list (species and an approximate air wavelength; the
line list then gives the exact one).  Named bands and groups go to their middle with a
window wide enough to hold them.  The approximate wavelengths below are typed from memory
(air, Å) and only choose where to look.
"""

from __future__ import annotations

import re

#: name (normalised) -> (what Go to reads, half-width of the window in km/s or None = default)
TARGETS = {
    "halpha": ("H I 6563", None), "hbeta": ("H I 4861", None), "hgamma": ("H I 4340", None),
    "hdelta": ("H I 4102", None), "hepsilon": ("H I 3970", None),
    "nad": ("Na I 5890", None), "nad1": ("Na I 5896", None), "nad2": ("Na I 5890", None),
    "mgb": ("5175", 700.0),  # the Mg I triplet 5167-5184 (from memory)
    "caiih": ("Ca II 3968", None), "caiik": ("Ca II 3934", None),
    "caiihk": ("3951", 2200.0),  # both lines (from memory)
    "caiitriplet": ("8580", 4200.0), "cat": ("8580", 4200.0),  # 8498, 8542, 8662 (from memory)
    "gband": ("4305", 900.0),  # CH, about 4290-4320 (from memory)
    "o2a": ("7605", 700.0), "o2b": ("6875", 500.0),  # telluric O2 bands (from memory)
}

_GREEK = {"α": "alpha", "β": "beta", "γ": "gamma", "δ": "delta", "ε": "epsilon"}


def normalise(text: str) -> str:
    """``Hα`` -> ``halpha``, ``Ca II H&K`` -> ``caiihk``, ``O₂ A`` -> ``o2a``."""
    s = "".join(_GREEK.get(ch, ch) for ch in (text or "").strip().lower()).replace("₂", "2")
    s = re.sub(r"\band\b", "", s.replace("&", ""))
    return re.sub(r"[\s\-_.]+", "", s)


def common_target(text: str) -> tuple[str, float | None] | None:
    """What Go to should read for a common name, and its window half-width (km/s), or None."""
    return TARGETS.get(normalise(text))
