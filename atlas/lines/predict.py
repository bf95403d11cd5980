"""Predicted depth of every line of a list in one star, from its Teff and log g.

``predict_depths(lines, teff_k, logg)`` keeps the rows predicted deeper than
``threshold`` (fraction of the continuum at line centre) and adds their depth as
``predicted_depth``.  The physics is the synthesis's own (one model, not two):

* the representative layer of the star (``atlas.synth.photosphere``),
* LTE populations from the Boltzmann and Saha equations with the partition
  functions, ionisation energies and solar abundances of ``atlas.synth.atoms``
  (the sources are named there),
* each line's integrated opacity ratio and Doppler / damping widths
  (``atlas.synth.strengths``),
* the curve of growth and the broadening to the star's line width
  (``atlas.synth.depths``).

Lines of species with no atomic data are skipped and named in
``result.attrs["notes"]``; molecular band heads and telluric rows are not predicted.

Example
-------
>>> from atlas.lines.dense import load_merged_lines
>>> from atlas.lines.predict import predict_depths
>>> sun = predict_depths(load_merged_lines(), 5772.0, 4.44)  # doctest: +SKIP
>>> sun.nlargest(3, "predicted_depth")[["species", "air_A"]]  # doctest: +SKIP

References
----------
Gray, D. F., *The Observation and Analysis of Stellar Photospheres*, 3rd ed. (2005),
ch. 1, 8, 11 and 13.
"""

from __future__ import annotations

import math
import re

import numpy as np
import pandas as pd

from atlas.errors import InputError
from atlas.synth.atoms import parse_species
from atlas.synth.depths import line_depths
from atlas.synth.photosphere import LOGG_REF, layer
from atlas.synth.strengths import atomic_lines

#: Default threshold: lines predicted deeper than 1 % of the continuum are kept.
DEPTH_THRESHOLD = 0.01
#: Line FWHM (km/s) used when none is given: a spectrograph of R = 50,000 (c / R,
#: our choice of a typical high-resolution instrument).
DEFAULT_LINE_FWHM_KMS = 6.0
#: Microturbulence (km/s) of the prediction: the synthesis's default star.
MICRO_KMS = 1.5

#: log g (cgs) by luminosity class: typical values of dwarfs, subgiants, giants,
#: bright giants and supergiants of types F-K (Gray 2005, appendix B; from memory,
#: rounded).  Luminosity class V and VI (and IV-V) count as dwarfs.
LOGG_BY_LUMINOSITY = {
    "VI": 4.5,
    "V": 4.5,
    "IV": 3.8,
    "III": 2.5,
    "II": 1.8,
    "Ib": 1.2,
    "Iab": 1.0,
    "Ia": 0.8,
    "I": 1.0,
    "0": 0.5,
}
_TYPE = re.compile(r"^\s*[OBAFGKM]\s*(?:\d+(?:\.\d+)?)?\s*(.*)$", re.DOTALL)
_LUM = re.compile(r"^(Ia\+|Iab|Ia|Ib|VI|IV|V|III|II|I|0)(?![A-Za-z])")


def logg_of_class(spectral_class: str) -> float | None:
    """log g (cgs) for the luminosity class of ``spectral_class`` ("G2 V" -> 4.5,
    "K0 III" -> 2.5); None when the class names no luminosity class ("G2")."""
    t = _TYPE.match(str(spectral_class or ""))
    m = None if t is None else _LUM.match(t.group(1))  # the subtype's digits are taken first
    if m is None:
        return None
    lum = m.group(1).replace("Ia+", "0")
    return LOGG_BY_LUMINOSITY[lum]


def _check(teff_k, logg, line_fwhm_kms, threshold) -> tuple[float, float, float, float]:
    def number(name, value):
        try:
            v = float(value)
        except (TypeError, ValueError):
            raise InputError(name, f"must be a number, not {value!r}") from None
        if not math.isfinite(v):
            raise InputError(name, f"must be finite, not {value!r}")
        return v

    t = number("teff_k", teff_k)
    if not 2000.0 <= t <= 60000.0:
        raise InputError("teff_k", f"{t:g} K is outside 2,000-60,000 K")
    g = LOGG_REF if logg is None else number("logg", logg)
    if not -1.0 <= g <= 6.0:
        raise InputError("logg", f"{g:g} is outside -1..6 (cgs)")
    w = DEFAULT_LINE_FWHM_KMS if line_fwhm_kms is None else number("line_fwhm_kms", line_fwhm_kms)
    if w < 0:
        raise InputError("line_fwhm_kms", f"must not be negative, not {w:g}")
    d = number("threshold", threshold)
    if not 0.0 <= d < 1.0:
        raise InputError("threshold", f"must be in [0, 1), not {d:g}")
    return t, g, w, d


def _notes(lines: pd.DataFrame) -> list[str]:
    atomic = lines.loc[lines["kind"].astype(str) == "atomic", "species"].astype(str)
    counts = atomic.value_counts(sort=False)
    missing = sorted(s for s in counts.index if parse_species(s) is None)
    return [f"no atomic data for {s}: its {int(counts[s])} lines skipped" for s in missing]


def predict_depths(
    lines: pd.DataFrame,
    teff_k: float,
    logg: float | None = None,
    *,
    line_fwhm_kms: float | None = None,
    threshold: float = DEPTH_THRESHOLD,
) -> pd.DataFrame:
    """Rows of ``lines`` predicted deeper than ``threshold`` in a star of ``teff_k`` (K)
    and ``logg`` (cgs; None = a dwarf, log g 4.5), broadened to ``line_fwhm_kms``
    (km/s; None = ``DEFAULT_LINE_FWHM_KMS``).

    Returns those rows with an added float column ``predicted_depth`` (fraction of
    the continuum at line centre, in [0, 1)), sorted by ``vacuum_A``, index reset;
    ``attrs["notes"]`` names the species skipped for want of atomic data.
    """
    t, g, w, d = _check(teff_k, logg, line_fwhm_kms, threshold)
    ls = atomic_lines(lines, layer(t, g), micro_kms=MICRO_KMS)
    depth, _ = line_depths(ls, t, w, floor=d)
    keep = depth > d
    out = lines.iloc[ls.row[keep]].copy()
    out["predicted_depth"] = depth[keep].astype(np.float64)
    out = out.sort_values("vacuum_A", kind="stable").reset_index(drop=True)
    out.attrs["notes"] = _notes(lines)
    return out
