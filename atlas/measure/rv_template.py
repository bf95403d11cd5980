"""Radial velocity against a whole synthetic class template: for hot, fast-rotating stars.

The line-mask cross-correlation of :mod:`atlas.measure.rv` needs many narrow metal lines;
an O or B star (or any star rotating at 100 km/s and more) has a few broad H I, He I and
He II lines, which the mask leaves out.  This path fits the whole normalised spectrum:

1. the normalised flux ``F/C`` is binned (inverse-variance weighted means) onto a grid
   uniform in ln(wavelength), vacuum, observer's frame, with telluric band regions of
   the line list left out; the grid bounds the memory whatever the spectrum's length;
2. templates of the hot classes (:func:`atlas.synth.templates.template_grid`, cached per
   process) are broadened with the rotation kernel of Gray (2005, eq. 18.14);
3. in each chunk of the spectrum (about 12,000 km/s long) the model is the shifted
   template times a quadratic in wavelength (the continuum error, `common practice`),
   linear in the quadratic's coefficients, so the chi-square of every trial shift is
   exact; the class and v sin i are chosen by the total chi-square;
4. each chunk's velocity is the minimum of its chi-square curve (a parabola through its
   lowest points), its error from the curvature (delta chi-square = 1, Press et al.
   2007, Numerical Recipes 3rd ed., sec. 15.6) scaled up by sqrt(reduced chi-square);
   chunks are combined like the line-mask strips (robust clip, inverse-variance mean,
   error scaled by sqrt(reduced chi-square) of the chunks).  The detection is the
   chi-square gained over the polynomials alone (no lines), in sigma.

References
----------
Tonry & Davis (1979), AJ 84, 1511 (cross-correlation against a template);
Gray (2005), The Observation and Analysis of Stellar Photospheres, 3rd ed., ch. 18;
Press et al. (2007), Numerical Recipes, 3rd ed., sec. 15.6 (confidence from delta chi-square).
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass

import numpy as np

from atlas.measure.rv_bin import FIT_RANGE_A, bin_spectrum, telluric_regions_A
from atlas.measure.rv_chi2 import ChunkFitter, parabola_min
from atlas.measure.rv_result import (
    FWHM_PER_SIGMA,
    ROT_FWHM_PER_VSINI,
    RVResult,
    StripRV,
    combine_strips,
)
from atlas.physics.constants import C_KMS

#: Classes tried by default: where the line mask runs short of narrow metal lines.
HOT_CLASSES = ("O5", "O9", "B0", "B5", "A0", "A5", "F0")
#: v sin i values tried (km/s); the best is refined by a parabola.  Our choice.
VSINI_GRID_KMS = (5.0, 20.0, 40.0, 70.0, 100.0, 140.0, 180.0, 230.0, 290.0, 360.0)
#: Grid step (km/s) of the binned spectrum: fine against lines 50 km/s and wider.
STEP_KMS = 2.5
#: Length of one chunk (km/s): each has its own quadratic continuum correction.
CHUNK_KMS = 12_000.0
#: Template-mismatch floor of the error, as a fraction of the line FWHM: the class grid is
#: coarse, and a star between two classes shifts every chunk alike (their scatter cannot
#: show it).  Our calibration from tests/bench/bench_measure.py (hot synthetic stars, where
#: the bias reached about 0.3 % of the FWHM).
MISMATCH_FRACTION = 0.003
#: Polynomial degree of an echelle order (its blaze times the continuum error).
ORDER_DEGREE = 4


@functools.lru_cache(maxsize=4)
def _template_bank(lo_A: float, hi_A: float, step_kms: float, resolving_power: float,
                   classes: tuple[str, ...]):
    """Rest-frame vacuum templates (class, sample) on a ln(lambda) grid; cached per process."""
    from atlas.synth.broaden import log_grid
    from atlas.synth.templates import template_grid

    grid = log_grid(lo_A, hi_A, step_kms)
    ds = template_grid(grid, R=resolving_power, medium="vacuum", classes=list(classes))
    return grid, np.asarray(ds["flux"].values, dtype=np.float64)


@dataclass
class _Bank:
    """Templates on their ln(lambda) grid ``tx`` (step ``t_step`` km/s), by class name."""

    tx: np.ndarray
    flux: np.ndarray  # (class, sample)
    t_step: float
    names: list[str]

    def broadened(self, k: int, vsini_kms: float) -> np.ndarray:
        """Template ``k`` rotated to ``vsini_kms`` (Gray 2005, eq. 18.14)."""
        from atlas.synth.broaden import convolve_same, rotation_pixels

        return convolve_same(self.flux[k], rotation_pixels(vsini_kms, self.t_step))


def _bank_for(fitter, v_min_kms, v_max_kms, step_kms, r_inst, classes) -> _Bank:
    """The cached template bank covering the fitter's chunks at every trial velocity."""
    pad = 1.0 + (max(abs(v_min_kms), abs(v_max_kms)) + 1500.0) / C_KMS
    # rounded out to 500 Å so stars of similar coverage share the cached bank
    lo_A = math.floor(float(fitter.lo_A.min()) / pad / 500.0) * 500.0
    hi_A = math.ceil(float(fitter.hi_A.max()) * pad / 500.0) * 500.0
    tgrid, flux = _template_bank(lo_A, hi_A, step_kms, r_inst, tuple(classes))
    tx = np.log(tgrid)
    return _Bank(tx, flux, (tx[-1] - tx[0]) / (tx.size - 1) * C_KMS, list(classes))


def _total(fitter, tx, t, v_kms) -> float:
    """Whole-spectrum chi-square of template ``t`` at velocity ``v_kms``."""
    return float(fitter.chi2(tx, t, math.atanh(v_kms / C_KMS)).sum())


def _search(quick, bank, v_min_kms, v_max_kms):
    """Class, v sin i and velocity on the coarse fitter: (k_best, vsini, v0, table).

    First every class at a middling rotation in 8 km/s steps; then class and v sin i
    (parabola through the best three of :data:`VSINI_GRID_KMS`) at that velocity and the
    velocity again, twice.  ``table`` is the chi-square of every class and v sin i.
    """
    tx = bank.tx
    v_coarse = np.arange(v_min_kms, v_max_kms + 4.0, 8.0)
    best = (np.inf, 0, 0.0)
    for k in range(len(bank.names)):
        t = bank.broadened(k, 120.0)
        c2 = np.array([_total(quick, tx, t, v) for v in v_coarse])
        j = int(np.argmin(c2))
        if c2[j] < best[0]:
            best = (c2[j], k, float(v_coarse[j]))
    _, k_best, v0 = best
    for _ in range(2):
        table = np.array([[_total(quick, tx, bank.broadened(k, vs), v0) for vs in VSINI_GRID_KMS]
                          for k in range(len(bank.names))])
        k_best, j = np.unravel_index(int(np.argmin(table)), table.shape)
        vs_best = VSINI_GRID_KMS[j]
        if 0 < j < len(VSINI_GRID_KMS) - 1:
            xs = np.array(VSINI_GRID_KMS[j - 1 : j + 2])
            a, b, _ = np.polyfit(xs, table[k_best, j - 1 : j + 2], 2)
            if a > 0:
                vs_best = float(np.clip(-b / (2 * a), xs[0], xs[-1]))
        t = bank.broadened(k_best, vs_best)
        half = max(40.0, 3.0 * vs_best)
        v_mid = np.arange(max(v_min_kms - 30, v0 - half), min(v_max_kms + 30, v0 + half) + 2.0, 4.0)
        c2 = np.array([_total(quick, tx, t, v) for v in v_mid])
        v0 = float(v_mid[int(np.argmin(c2))])
    return int(k_best), float(vs_best), v0, table


def _mixed(quick, bank, k_best, vs_best, v0):
    """The best template, or its mix with a neighbour class if that fits better: (t, label).

    A star between two classes: (1 - a) T_k + a T_j, a in 0.25 / 0.5 / 0.75 (as the
    class step of :mod:`atlas.measure.classify` interpolates the subclass).
    """
    names = bank.names
    t = bank.broadened(k_best, vs_best)
    label, t_best = names[k_best], t
    best_c2 = _total(quick, bank.tx, t, v0)
    for j in (k_best - 1, k_best + 1):
        if not 0 <= j < len(names):
            continue
        tj = bank.broadened(j, vs_best)
        for a in (0.25, 0.5, 0.75):
            tm = (1.0 - a) * t + a * tj
            c2m = _total(quick, bank.tx, tm, v0)
            if c2m < best_c2:
                best_c2, t_best, label = c2m, tm, f"{names[k_best]}+{a:g} {names[j]}"
    return t_best, label


def _chunk_strips(fitter, v_fine, curves):
    """One :class:`StripRV` per chunk from its chi-square curve (parabola minimum; error
    1/sqrt(curvature), delta chi-square = 1, times sqrt(reduced chi-square) when above 1)."""
    strips = []
    for c in range(fitter.nch):
        st = StripRV(float(fitter.lo_A[c]), float(fitter.hi_A[c]), None, None, 0)
        strips.append(st)
        pm = parabola_min(v_fine, curves[:, c])
        if pm is None or fitter.npts[c] < 20:
            st.used, st.note = False, "no chi-square minimum in this chunk"
            continue
        vm, a = pm
        dof = max(fitter.npts[c] - fitter.degree - 2.0, 1.0)
        chi2r = float(curves[:, c].min() / dof)
        st.rv_kms, st.err_kms = vm, 1.0 / math.sqrt(a) * math.sqrt(max(chi2r, 1.0))
    return strips


def _runner_up_shift(fitter, bank, table, k_best, v_fine, tot):
    """Template dependence: half the move of the whole-spectrum minimum (km/s) with the
    runner-up class, or None.  Reported apart and not added to the error: the runner-up
    may be a class that fits far worse, which would make the error needlessly large."""
    order_k = np.argsort(table.min(axis=1))
    if order_k.size < 2:
        return None
    k2 = int(order_k[1]) if int(order_k[0]) == int(k_best) else int(order_k[0])
    t2 = bank.broadened(k2, VSINI_GRID_KMS[int(np.argmin(table[k2]))])
    tot2 = np.array([_total(fitter, bank.tx, t2, v) for v in v_fine])
    p1, p2 = parabola_min(v_fine, tot), parabola_min(v_fine, tot2)
    if p1 is None or p2 is None:
        return None
    return 0.5 * abs(p1[0] - p2[0])


def template_rv(wave_A, flux, uncertainty=None, mask=None, *, continuum=None,
                medium: str = "vacuum", resolving_power: float | None = None, lines=None,
                classes=HOT_CLASSES, v_min_kms: float = -300.0, v_max_kms: float = 300.0,
                step_kms: float = STEP_KMS, chunk_kms: float = CHUNK_KMS,
                clip_sigma: float = 4.0, min_significance: float = 6.0) -> RVResult:
    """Radial velocity (km/s, observer's frame) by a fit of rotating class templates.

    Arrays as :func:`atlas.measure.rv.measure_rv` (1-D, or 2-D echelle orders) in
    ``medium``; ``lines`` (the line list) supplies the telluric bands left out.
    Returns an :class:`RVResult` with ``method`` ``template <class>``, ``vsini_rough_kms``
    the fitted v sin i (rotation only, after the instrument), and ``rv_obs_kms`` None
    with a note when the chi-square has no significant minimum.

    References
    ----------
    Tonry & Davis (1979), AJ 84, 1511; Gray (2005), eq. 18.14; Press et al. (2007), sec. 15.6.
    """
    bands = telluric_regions_A(lines, "vacuum") if lines is not None else []
    chunks = bin_spectrum(wave_A, flux, uncertainty, mask, continuum, medium, step_kms, bands,
                          chunk_kms)
    if not chunks:
        return RVResult(None, None, method="template",
                        note=f"too few good samples for the template fit between {FIT_RANGE_A[0]:g} and {FIT_RANGE_A[1]:g} Å")
    two_d = np.asarray(wave_A).ndim == 2
    fitter = ChunkFitter(chunks, ORDER_DEGREE if two_d else 2)
    r_inst = float(resolving_power) if resolving_power and resolving_power > 0 else C_KMS / (4 * step_kms)
    r_inst = float(10 ** (round(math.log10(r_inst) * 20) / 20))  # shared cached templates
    bank = _bank_for(fitter, v_min_kms, v_max_kms, step_kms, r_inst, classes)
    tx = bank.tx
    quick = fitter.coarser(4)
    k_best, vs_best, v0, table = _search(quick, bank, v_min_kms, v_max_kms)
    t, label = _mixed(quick, bank, k_best, vs_best, v0)
    # fine per-chunk chi-square curves around v0
    width = max(vs_best, C_KMS / r_inst)
    fine_step = max(0.02 * width, 0.25)
    v_fine = np.arange(v0 - 12 * fine_step - 0.6 * width, v0 + 12 * fine_step + 0.6 * width + fine_step / 2, fine_step)
    curves = np.array([fitter.chi2(tx, t, math.atanh(v / C_KMS)) for v in v_fine])  # (nv, nch)
    tot = curves.sum(axis=1)
    dof_all = max(float(fitter.npts.sum()) - (fitter.degree + 1) * fitter.nch - 3, 1.0)
    chi2r_all = float(tot.min() / dof_all)
    # detection: how much the template beats the polynomials alone (no lines at all)
    flat = float(fitter.chi2(tx, np.ones_like(t), 0.0).sum())
    signif = math.sqrt(max(flat - float(tot.min()), 0.0) / max(chi2r_all, 1.0))
    result = RVResult(None, None, method=f"template {label}")
    result.significance = signif
    result.vsini_rough_kms = float(vs_best)
    result.line_fwhm_kms = math.hypot(ROT_FWHM_PER_VSINI * vs_best, C_KMS / r_inst)
    result.ccf_fwhm_kms = result.line_fwhm_kms
    if not signif >= min_significance:
        result.note = f"template fit: no significant chi-square minimum ({signif:.1f} sigma)"
        return result
    result.strips = _chunk_strips(fitter, v_fine, curves)
    ok = [s for s in result.strips if s.rv_kms is not None]
    if not ok:
        result.note = "template fit: no chunk gave a velocity"
        return result
    mean, err, use, _ = combine_strips(ok, clip_sigma)
    if use.sum() < 3:
        # one or two chunks cannot show their own scatter: the whole-spectrum curvature
        pm = parabola_min(v_fine, tot)
        if pm is not None:
            err = max(err, math.sqrt(max(chi2r_all, 1.0) / pm[1]))
    result.systematic_kms = _runner_up_shift(fitter, bank, table, k_best, v_fine, tot)
    err = math.hypot(err, MISMATCH_FRACTION * result.line_fwhm_kms)
    if not (v_min_kms - 30 <= mean <= v_max_kms + 30):
        result.note = f"template fit left the search range ({mean:+.0f} km/s)"
        return result
    result.rv_obs_kms = mean
    result.rv_err_kms = err
    result.n_lines = int(use.sum())
    return result


__all__ = ["FIT_RANGE_A", "FWHM_PER_SIGMA", "HOT_CLASSES", "telluric_regions_A", "template_rv"]
