"""Noise-free class templates O5 to M5 on a given wavelength grid, for classification.

Teff per class (main-sequence dwarfs) from Pecaut & Mamajek (2013, ApJS 208, 9),
as extended in Mamajek's online table "A Modern Mean Dwarf Stellar Color and
Effective Temperature Sequence", version 2022.04.16; the values were typed **from
memory** of that table and rounded as it gives them.

Each template is ``atlas.synth.model.synthesize`` of a log g = 4.5 star with no
rotation beyond ``vsini_kms``, no velocity and no telluric lines, divided by its
continuum (so the continuum is 1).

Example
-------
>>> import numpy as np
>>> from atlas.synth.templates import template_grid
>>> ds = template_grid(np.linspace(4800.0, 4900.0, 2001), R=20000)  # doctest: +SKIP
>>> ds["flux"].sel({"class": "A0"})  # doctest: +SKIP

References
----------
Pecaut, M. J. & Mamajek, E. E. (2013), ApJS 208, 9.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import xarray as xr

from atlas.errors import InputError
from atlas.synth.model import Star, default_lines, synthesize

#: Spectral class -> Teff (K) of a dwarf: Pecaut & Mamajek (2013), Mamajek's table
#: version 2022.04.16, typed from memory.
CLASS_TEFF_K: dict[str, float] = {
    "O5": 41400.0,
    "O9": 33300.0,
    "B0": 31400.0,
    "B5": 15700.0,
    "A0": 9700.0,
    "A5": 8100.0,
    "F0": 7220.0,
    "F5": 6550.0,
    "G0": 5930.0,
    "G5": 5660.0,
    "K0": 5270.0,
    "K5": 4440.0,
    "M0": 3850.0,
    "M3": 3430.0,
    "M5": 3060.0,
}

CLASSES = tuple(CLASS_TEFF_K)

#: More dwarf subclasses for the classification criteria's calibration sequence
#: (:mod:`atlas.measure.criteria`): Pecaut & Mamajek (2013), Mamajek's table version
#: 2022.04.16, typed **from memory** (less sure than ``CLASS_TEFF_K``).
SUBCLASS_TEFF_K: dict[str, float] = {
    "B1": 26000.0, "B2": 20600.0, "B3": 17000.0, "B7": 14000.0, "B8": 12500.0, "B9": 10700.0,
    "A2": 8840.0, "F2": 6810.0, "G2": 5770.0, "K2": 5040.0, "M1": 3660.0, "M2": 3560.0, "M4": 3210.0,
}


def subclass_teff_k(number: float) -> float:
    """Teff (K) of a dwarf of subclass ``number`` (O0 = 0 .. M9 = 69, see
    ``atlas.measure.classify.class_number``): linear in log Teff between the classes of
    ``CLASS_TEFF_K`` and ``SUBCLASS_TEFF_K`` (clamped at O5 and M5)."""
    letters = "OBAFGKM"
    known = {**CLASS_TEFF_K, **SUBCLASS_TEFF_K}
    pts = sorted((letters.index(k[0]) * 10 + float(k[1:]), v) for k, v in known.items())
    x = np.array([p[0] for p in pts])
    y = np.log([p[1] for p in pts])
    return float(np.exp(np.interp(float(number), x, y)))


def template_grid(
    wave_A,
    R: float,
    *,
    medium: str = "vacuum",
    classes=None,
    vsini_kms: float = 2.0,
    lines: pd.DataFrame | None = None,
) -> xr.Dataset:
    """Normalised noise-free templates of every class on ``wave_A`` (Å, 1-D, in ``medium``).

    Returns a Dataset with dims (``class``, ``sample``): ``flux`` (continuum = 1),
    coordinates ``wavelength`` (sample, Å, attribute ``medium``), ``class``
    (str) and ``teff_k`` (class).
    """
    w = np.asarray(wave_A, dtype=np.float64)
    if w.ndim != 1 or w.size < 2 or not np.all(np.diff(w) > 0) or not np.all(np.isfinite(w)):
        raise InputError("wave_A", "must be a 1-D, finite, increasing wavelength array")
    if not np.isfinite(R) or R <= 0:
        raise InputError("R", f"resolving power must be a positive number, not {R!r}")
    if medium not in ("vacuum", "air"):
        raise InputError("medium", f"must be 'vacuum' or 'air', not {medium!r}")
    names = list(CLASSES if classes is None else classes)
    unknown = [c for c in names if c not in CLASS_TEFF_K]
    if unknown:
        raise InputError("classes", f"unknown class {unknown[0]!r}; known: {', '.join(CLASSES)}")
    def compute(lines=lines):
        if lines is None:
            lines = default_lines()
        flux = np.empty((len(names), w.size), dtype=np.float64)
        for i, name in enumerate(names):
            star = Star(teff_k=CLASS_TEFF_K[name], vsini_kms=vsini_kms)
            flux[i] = synthesize(w, star, resolving_power=R, medium=medium, lines=lines).normalised
        return {"flux": flux}

    if lines is None:  # the shipped line list: kept on disk between runs (atlas.diskcache)
        from atlas.diskcache import cached_arrays

        flux = cached_arrays("templates", (w, float(R), medium, tuple(names), float(vsini_kms)), compute)["flux"]
    else:
        flux = compute()["flux"]
    return xr.Dataset(
        {"flux": (("class", "sample"), flux)},
        coords={
            "class": ("class", names),
            "teff_k": ("class", [CLASS_TEFF_K[c] for c in names]),
            "wavelength": ("sample", w, {"units": "Angstrom", "medium": medium}),
        },
        attrs={"resolving_power": float(R), "normalised": "flux / continuum", "teff_source": "Pecaut & Mamajek (2013); Mamajek's table v2022.04.16 (from memory)"},
    )
