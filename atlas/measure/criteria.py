"""Spectral class from published classification criteria, combined with the template fit.

Each criterion is a line-strength ratio or a band depth that classifiers read by eye
(MKK 1943; Walborn & Fitzpatrick 1990; Gray & Corbally 2009).  Strengths are equivalent
widths (Å) within ``half_A`` of the line's rest wavelength on the continuum-normalised,
rest-frame spectrum; a ratio is given as the fraction a / (a + b) (0..1, defined when
one line is absent); a band depth is 1 - mean normalised flux over the band.

**Calibration (a model calibration, not a check value).** What value of a criterion
means which subclass is read from our own synthetic class sequence: every subclass O5 to
M5 synthesised by :mod:`atlas.synth` at the Teff of :func:`atlas.synth.templates.subclass_teff_k`,
at the resolving power the star is compared at, and normalised by the same continuum
procedure as the star.  The thresholds are therefore those of our model, not values
taken from the literature; the criteria (which lines, which direction) are the
published ones.

**Combination.** For every trial subclass c (O5..M5 in steps of 0.1) the score is
sum_k ((v_k - V_k(c)) / s_k)^2 + ((c - c_fit) / TEMPLATE_WIDTH)^2: v_k the measured
value, V_k(c) the calibrated one, s_k its photon-noise error (propagated from the
normalised flux's noise) and a model tolerance in quadrature, c_fit the template fit's
subclass.  The class is the best c; the range is every c whose score is within 1 of the
best (one parameter, 68 %, Press et al. 2007, sect. 15.6).  When the criteria disagree
(their chi-square per informative criterion above ``DISAGREE`` at the best c) the class is
"uncertain".

References
----------
Morgan, W. W., Keenan, P. C. & Kellman, E. (1943), An Atlas of Stellar Spectra.
Walborn, N. R. & Fitzpatrick, E. L. (1990), PASP 102, 379.
Gray, R. O. & Corbally, C. J. (2009), Stellar Spectral Classification (Princeton).
Press, W. H. et al. (2007), Numerical Recipes, 3rd ed., sect. 15.6 (confidence limits).
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass

import numpy as np

from atlas.measure.rv import normalise
from atlas.physics.airvac import air_to_vacuum_A

#: Width (subclasses) given to the template fit's estimate in the combined score (our choice).
TEMPLATE_WIDTH = 5.0
#: Criteria disagree above this chi-square per informative criterion at the best subclass (our choice).
DISAGREE = 9.0
#: Model tolerance of a fraction and of a band depth (our choice: mismatch of model and star).
TOL_FRACTION = 0.04
TOL_DEPTH = 0.02
#: A criterion is used when the template fit lies within its letters widened by this (subclasses).
DOMAIN_PAD = 3.0
#: Trial subclasses: O5 (5) .. M5 (65).
TRIAL = np.round(np.arange(5.0, 65.0001, 0.1), 1)
#: Subclasses of the calibration sequence.
SEQUENCE = np.arange(5.0, 66.0, 1.0)


@dataclass(frozen=True)
class Criterion:
    """One classification criterion: ``kind`` 'fraction' (a / (a + b)) or 'band' (depth of ``band_A``)."""

    name: str
    kind: str
    a_air_A: float = 0.0
    b_air_A: float = 0.0
    band_air_A: tuple[float, float] = (0.0, 0.0)
    source: str = ""
    #: the letters the source uses it for (subclass numbers O0 = 0 .. M9 = 69)
    domain: tuple[float, float] = (0.0, 69.0)


CRITERIA: tuple[Criterion, ...] = (
    Criterion("He II 4541 / He I 4471", "fraction", 4541.59, 4471.48,
              domain=(0, 9.9), source="Walborn & Fitzpatrick 1990; Gray & Corbally 2009 ch. 3 (O subtypes)"),
    Criterion("He I 4471 / Mg II 4481", "fraction", 4471.48, 4481.13,
              domain=(10, 19.9), source="Morgan, Keenan & Kellman 1943; Gray & Corbally 2009 ch. 3 (B subtypes)"),
    Criterion("Si IV 4089 / Si III 4553", "fraction", 4088.86, 4552.62,
              domain=(9, 13), source="Walborn & Fitzpatrick 1990 (early B)"),
    Criterion("Si III 4553 / Si II 4128", "fraction", 4552.62, 4128.05,
              domain=(11, 19.9), source="Gray & Corbally 2009 ch. 3 (mid and late B)"),
    Criterion("Ca II K / H-epsilon", "fraction", 3933.66, 3970.07,
              domain=(20, 39.9), source="Morgan, Keenan & Kellman 1943; Gray & Corbally 2009 ch. 4-5 (A and F)"),
    Criterion("H-delta width", "band", band_air_A=(4091.7, 4111.7),
              domain=(20, 39.9), source="Gray & Corbally 2009 ch. 4-5 (Balmer lines of A and F stars)"),
    Criterion("H-beta width", "band", band_air_A=(4851.3, 4871.3), domain=(20, 49.9),
              source="Gray & Corbally 2009 ch. 4-5 (Balmer lines of A, F and G stars)"),
    Criterion("H-alpha width", "band", band_air_A=(6552.8, 6572.8), domain=(30, 59.9),
              source="Gray & Corbally 2009 ch. 5-6 (Balmer lines of F, G and K stars)"),
    Criterion("Fe I 4046 / H-delta", "fraction", 4045.81, 4101.74,
              domain=(30, 49.9), source="Gray & Corbally 2009 ch. 5-6 (F and G)"),
    Criterion("G band (CH 4300)", "band", band_air_A=(4297.0, 4310.0),
              domain=(40, 59.9), source="Morgan, Keenan & Kellman 1943; Gray & Corbally 2009 ch. 6 (G and K)"),
    Criterion("Cr I 4254 / Fe I 4250", "fraction", 4254.33, 4250.79,
              domain=(50, 59.9), source="Gray & Corbally 2009 ch. 6 (K)"),
    Criterion("Ca I 4227 / Fe I 4325", "fraction", 4226.73, 4325.76,
              domain=(50, 59.9), source="Gray & Corbally 2009 ch. 6 (K; in G stars our model and the stars disagree)"),
    Criterion("TiO 4955 band", "band", band_air_A=(4955.0, 4995.0),
              domain=(60, 69), source="Morgan, Keenan & Kellman 1943; Gray & Corbally 2009 ch. 7 (M)"),
    Criterion("TiO 7054 band", "band", band_air_A=(7054.0, 7120.0),
              domain=(60, 69), source="Gray & Corbally 2009 ch. 7 (M)"),
)


def _vac(a):
    return float(air_to_vacuum_A(a)) if a else 0.0


def _strength(w, f, s, centre_A, half_A):
    """(equivalent width Å, error Å) of 1 - f within ``half_A`` of ``centre_A``; NaN when not covered."""
    a, b = np.searchsorted(w, [centre_A - half_A, centre_A + half_A])
    if b - a < 3 or w[0] > centre_A - half_A or w[-1] < centre_A + half_A:
        return math.nan, math.nan
    dw = np.gradient(w[a:b])
    ew = float(np.sum((1.0 - f[a:b]) * dw))
    err = float(math.sqrt(np.sum((s[a:b] * dw) ** 2))) if s is not None else 0.0
    return ew, err


def measure(w, f, s, *, half_A: float):
    """Values and photon-noise errors of :data:`CRITERIA` on a rest-frame, normalised spectrum.

    ``w`` vacuum Å (sorted), ``f`` flux / continuum, ``s`` its error (or None);
    ``half_A`` the half-width of a line's window.  Returns two arrays (NaN = not covered).
    """
    vals, errs = np.full(len(CRITERIA), np.nan), np.full(len(CRITERIA), np.nan)
    for k, c in enumerate(CRITERIA):
        if c.kind == "fraction":
            ea, sa = _strength(w, f, s, _vac(c.a_air_A), half_A)
            eb, sb = _strength(w, f, s, _vac(c.b_air_A), half_A)
            ea, eb = max(ea, 0.0), max(eb, 0.0)
            tot = ea + eb
            if not np.isfinite(tot):
                continue
            if tot < 1e-3:  # both lines absent: 0.5 with a huge error (uninformative)
                vals[k], errs[k] = 0.5, 1e3
            else:
                vals[k] = ea / tot
                errs[k] = math.hypot(eb * sa, ea * sb) / tot**2
        else:
            lo, hi = (_vac(x) for x in c.band_air_A)
            ew, se = _strength(w, f, s, 0.5 * (lo + hi), 0.5 * (hi - lo))
            vals[k] = ew / (hi - lo)
            errs[k] = se / (hi - lo)
    return vals, errs


def calibration(grid, r_cmp: float, half_A: float) -> np.ndarray:
    """Criterion values (SEQUENCE x CRITERIA) of our synthetic class sequence, cached on disk."""
    return _calibration(float(grid[0]), float(grid[-1]), int(grid.size), float(r_cmp), float(half_A))


@functools.lru_cache(maxsize=8)
def _calibration(lo, hi, n, r_cmp, half_A):
    from atlas.diskcache import cached_arrays

    def compute():
        from atlas.synth.model import Star, default_lines, synthesize
        from atlas.synth.templates import subclass_teff_k

        grid = np.exp(np.linspace(math.log(lo), math.log(hi), n))
        lines = default_lines()
        table = np.empty((SEQUENCE.size, len(CRITERIA)))
        for i, c in enumerate(SEQUENCE):
            t = synthesize(grid, Star(teff_k=subclass_teff_k(c), vsini_kms=2.0), resolving_power=r_cmp,
                           medium="vacuum", lines=lines).normalised
            t = t / normalise(grid, t)
            table[i] = measure(grid, t, None, half_A=half_A)[0]
        return {"table": table}

    return cached_arrays("criteria", (lo, hi, n, r_cmp, half_A, tuple(c.name for c in CRITERIA)), compute)["table"]


def _tolerance(c: Criterion) -> float:
    return TOL_FRACTION if c.kind == "fraction" else TOL_DEPTH


def span_text(lo: float, hi: float) -> str:
    """'B3-B7' (or 'B5' when both ends round alike) from subclass numbers."""
    from atlas.measure.classify import class_name

    a, b = class_name(lo), class_name(hi)
    return a if a == b else f"{a}-{b}"


@dataclass
class CriteriaResult:
    """Combined class (subclass number or None when uncertain), its range text and the criteria."""

    number: float | None
    class_range: str
    criteria: list[dict]
    note: str = ""


def combine(values, errors, table, c_fit: float | None) -> CriteriaResult:
    """The combined score over :data:`TRIAL` (see the module's docstring)."""
    curves = np.array([np.interp(TRIAL, SEQUENCE, table[:, k]) for k in range(len(CRITERIA))])
    score = np.zeros(TRIAL.size) if c_fit is None else ((TRIAL - c_fit) / TEMPLATE_WIDTH) ** 2
    terms, used = [], []
    for k, c in enumerate(CRITERIA):
        v, e = values[k], errors[k]
        if not (np.isfinite(v) and np.isfinite(e)) or not np.all(np.isfinite(curves[k])):
            continue
        # as a classifier does: the criteria of the letter the overall fit points to
        if c_fit is not None and not (c.domain[0] - DOMAIN_PAD <= c_fit <= c.domain[1] + DOMAIN_PAD):
            continue
        sk = math.hypot(e, _tolerance(c))
        term = ((v - curves[k]) / sk) ** 2
        informative = (curves[k].max() - curves[k].min()) > 3.0 * sk
        terms.append(term)
        used.append((k, c, v, sk, informative, term))
    for t in terms:
        score = score + t
    best = int(np.argmin(score))
    inside = TRIAL[score <= score[best] + 1.0]
    crit = []
    n_inf, chi_inf = 0, 0.0
    for _k, c, v, _sk, informative, term in used:
        ok = TRIAL[term <= 1.0]
        says = "no class of O5-M5" if ok.size == 0 else span_text(ok.min(), ok.max())
        if not informative:
            says = "not informative here (" + says + ")" if ok.size else "not informative here"
        else:
            n_inf += 1
            chi_inf += float(term[best])
        crit.append({"name": c.name, "value": round(float(v), 4), "says": says})
    if n_inf and chi_inf / n_inf > DISAGREE:
        return CriteriaResult(None, "uncertain", crit,
                              note=f"class uncertain: the criteria disagree (chi-square {chi_inf:.0f} "
                                   f"over {n_inf} informative criteria at {span_text(TRIAL[best], TRIAL[best])})")
    return CriteriaResult(float(TRIAL[best]), span_text(inside.min(), inside.max()), crit)
