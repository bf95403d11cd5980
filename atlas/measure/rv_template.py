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

import numpy as np

from atlas.measure.rv import (
    FWHM_PER_SIGMA,
    ROT_FWHM_PER_VSINI,
    RVResult,
    StripRV,
    combine_strips,
    der_noise,
    normalise,
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


def telluric_regions_A(lines, medium: str = "vacuum") -> list[tuple[float, float]]:
    """Telluric band regions (start, end) in Å of the line list's ``medium`` column.

    The list gives each band as two ``telluric`` rows whose ``source`` ends in
    ``band start`` and ``band end`` (see DEVELOPERS, line list); rows are paired per
    species in wavelength order.
    """
    if lines is None or "source" not in lines:
        return []
    col = "vacuum_A" if medium == "vacuum" else "air_A"
    tell = lines["telluric"].astype(str).str.lower().isin(["true", "1"]) | (
        lines["kind"].astype(str) == "telluric")
    df = lines[tell].sort_values(col)
    out = []
    open_at: dict[str, float] = {}
    for sp, w, src in zip(df["species"].astype(str), df[col].astype(float),
                          df["source"].astype(str), strict=True):
        s = src.lower()
        if "band start" in s:
            open_at[sp] = w
        elif "band end" in s and sp in open_at:
            out.append((open_at.pop(sp), w))
    return sorted(out)


@functools.lru_cache(maxsize=4)
def _template_bank(lo_A: float, hi_A: float, step_kms: float, resolving_power: float,
                   classes: tuple[str, ...]):
    """Rest-frame vacuum templates (class, sample) on a ln(lambda) grid; cached per process."""
    from atlas.synth.broaden import log_grid
    from atlas.synth.templates import template_grid

    grid = log_grid(lo_A, hi_A, step_kms)
    ds = template_grid(grid, R=resolving_power, medium="vacuum", classes=list(classes))
    return grid, np.asarray(ds["flux"].values, dtype=np.float64)


def _bin_row(w, f, s, bad, medium, step_kms, bands, x0, dln, n):
    """Inverse-variance binned sums (num, den) of one sorted row onto a ln(lambda) grid."""
    from atlas.physics.airvac import air_to_vacuum_A

    num = np.zeros(n)
    den = np.zeros(n)
    piece = 500_000
    for a in range(0, w.size, piece):
        sl = slice(a, a + piece)
        fn, bb = f[sl], bad[sl].copy()
        wv = w[sl] if medium == "vacuum" else air_to_vacuum_A(w[sl])
        for lo, hi in bands:
            i0, i1 = np.searchsorted(wv, [lo, hi])
            bb[i0:i1] = True
        if s is not None:
            sg = s[sl]
        else:
            sg = np.empty(fn.size)
            for j in range(0, fn.size, 2000):
                blk = fn[j : j + 2000][~bb[j : j + 2000]]
                sg[j : j + 2000] = der_noise(blk) if blk.size >= 20 else np.nan
        bb |= ~np.isfinite(sg) | ~(sg > 0) | ~np.isfinite(fn)
        if bb.all():
            continue
        idx = np.rint((np.log(wv[~bb]) - x0) / dln).astype(np.int64)
        ok = (idx >= 0) & (idx < n)
        iv = 1.0 / sg[~bb] ** 2
        num += np.bincount(idx[ok], weights=(fn[~bb] * iv)[ok], minlength=n)
        den += np.bincount(idx[ok], weights=iv[ok], minlength=n)
    return num, den


#: Wavelength range (Å, vacuum) the template fit uses: where the class templates have
#: their H I, He I, He II and metal lines (the shipped list's optical range; our choice).
FIT_RANGE_A = (3600.0, 10_000.0)


def _bin_spectrum(wave_A, flux, uncertainty, mask, continuum, medium, step_kms, bands, chunk_kms):
    """Chunks of binned flux on vacuum ln(lambda) grids: list of (x, value, ivar).

    1-D: the normalised flux ``F/C`` (continuum given or fitted), one grid cut into
    chunks ``chunk_kms`` long.  2-D echelle orders: each order is one chunk of raw flux
    over its median (its blaze is left to the chunk's polynomial, since broad lines can be
    wider than an order and an order-by-order continuum would flatten them).  Works one
    row and at most 500,000 samples at a time, so memory stays bounded.
    """
    from atlas.physics.airvac import air_to_vacuum_A

    wave = np.asarray(wave_A)
    two_d = wave.ndim == 2
    rows = wave.shape[0] if two_d else 1
    dln = math.log1p(step_kms / C_KMS)
    chunks = []
    for k in range(rows):
        w_row = wave[k] if two_d else wave
        o = np.argsort(w_row, kind="stable") if np.any(np.diff(w_row) < 0) else slice(None)
        w = np.asarray(w_row[o], dtype=np.float64)
        # a copy (never a view of the caller's array: it is divided in place below)
        f = np.array((flux[k] if two_d else flux)[o], dtype=np.float64)
        bad = ~np.isfinite(f) | ~np.isfinite(w) | (w <= 0)
        if mask is not None:
            bad |= np.asarray((mask[k] if two_d else mask)[o], dtype=bool)
        bad |= (w < FIT_RANGE_A[0]) | (w > FIT_RANGE_A[1])
        if (~bad).sum() < 20:
            continue
        if two_d:
            c = np.full(f.size, float(np.median(f[~bad])))
        elif continuum is not None:
            c = np.asarray(continuum[o], dtype=np.float64)
        else:
            c = normalise(w, f, bad)
        with np.errstate(invalid="ignore", divide="ignore"):
            f /= c
            bad |= ~(c > 0) | (f < -0.2) | (f > (50.0 if two_d else 2.0))
            s = None
            if uncertainty is not None:
                s = np.asarray((uncertainty[k] if two_d else uncertainty)[o], dtype=np.float64) / np.abs(c)
        del c
        good_i = np.flatnonzero(~bad)
        lo, hi = float(w[good_i[0]]), float(w[good_i[-1]])
        if medium != "vacuum":
            lo, hi = (float(v) for v in air_to_vacuum_A(np.array([lo, hi])))
        x0 = math.log(lo) - dln
        n = int((math.log(hi) - x0) / dln) + 3
        num, den = _bin_row(w, f, s, bad, medium, step_kms, bands, x0, dln, n)
        with np.errstate(invalid="ignore", divide="ignore"):
            val = np.where(den > 0, num / den, 0.0)
        x = x0 + dln * np.arange(n)
        if two_d:
            pieces = 1
        else:
            pieces = max(1, int(round((x[-1] - x[0]) * C_KMS / chunk_kms)))
        for idx in np.array_split(np.arange(n), pieces):
            if np.count_nonzero(den[idx]) >= 20:
                chunks.append((x[idx], val[idx], den[idx]))
    return chunks


class _Fitter:
    """Chi-square of ``template(x - dx) * polynomial`` per chunk, for many shifts."""

    def __init__(self, chunks, degree):
        self.chunks = chunks
        self.degree = degree
        self.x = np.concatenate([c[0] for c in chunks])
        self.d = np.concatenate([c[1] for c in chunks])
        self.iv = np.concatenate([c[2] for c in chunks])
        sizes = np.array([c[0].size for c in chunks])
        self.starts = np.concatenate([[0], np.cumsum(sizes)[:-1]])
        self.u = np.concatenate([(c[0] - 0.5 * (c[0][0] + c[0][-1])) / max(0.5 * (c[0][-1] - c[0][0]), 1e-12)
                                 for c in chunks])
        self.nch = len(chunks)
        self.lo_A = np.array([math.exp(c[0][0]) for c in chunks])
        self.hi_A = np.array([math.exp(c[0][-1]) for c in chunks])
        self.cdd = np.add.reduceat(self.iv * self.d**2, self.starts)
        self.npts = np.add.reduceat((self.iv > 0).astype(float), self.starts)
        self.ivu = [self.iv * self.u**k for k in range(2 * degree + 1)]
        self.ivdu = [self.iv * self.d * self.u**k for k in range(degree + 1)]

    def coarser(self, factor: int) -> _Fitter:
        """The same data binned by ``factor`` within each chunk: for quick searches."""
        out = []
        for x, d, iv in self.chunks:
            n = x.size // factor * factor
            if n < 10 * factor:
                return self
            ivr = iv[:n].reshape(-1, factor)
            den = ivr.sum(axis=1)
            with np.errstate(invalid="ignore", divide="ignore"):
                dd = np.where(den > 0, (ivr * d[:n].reshape(-1, factor)).sum(axis=1) / den, 0.0)
            out.append((x[:n].reshape(-1, factor).mean(axis=1), dd, den))
        return _Fitter(out, self.degree)

    def chi2(self, tx, t, dx):
        """Per-chunk chi-square (nch,) of the best polynomial times ``t`` shifted by ``dx``."""
        tt = np.interp(self.x - dx, tx, t)
        t2 = tt * tt
        p = self.degree + 1
        m = [np.add.reduceat(t2 * ivu, self.starts) for ivu in self.ivu]
        r = [np.add.reduceat(tt * ivdu, self.starts) for ivdu in self.ivdu]
        a = np.empty((self.nch, p, p))
        for i in range(p):
            for j in range(p):
                a[:, i, j] = m[i + j]
        rhs = np.stack(r, axis=1)
        # a tiny ridge keeps empty chunks solvable (they add nothing)
        a += 1e-12 * (np.trace(a, axis1=1, axis2=2)[:, None, None] + 1e-30) * np.eye(p)
        sol = np.linalg.solve(a, rhs[:, :, None])[:, :, 0]
        return self.cdd - np.einsum("ki,ki->k", sol, rhs)


def _parabola_min(v, c2):
    """(v_min, curvature a) of a parabola fitted to the lowest points of c2(v), or None."""
    i = int(np.argmin(c2))
    if i < 2 or i > v.size - 3:
        return None
    sl = slice(i - 2, i + 3)
    a, b, _ = np.polyfit(v[sl] - v[i], c2[sl], 2)
    if not a > 0:
        return None
    vm = v[i] - b / (2 * a)
    if abs(vm - v[i]) > 2 * abs(v[1] - v[0]):
        return None
    return float(vm), float(a)


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
    from atlas.synth.broaden import convolve_same, rotation_pixels

    bands = telluric_regions_A(lines, "vacuum") if lines is not None else []
    chunks = _bin_spectrum(wave_A, flux, uncertainty, mask, continuum, medium, step_kms, bands,
                           chunk_kms)
    if not chunks:
        return RVResult(None, None, method="template",
                        note=f"too few good samples for the template fit between {FIT_RANGE_A[0]:g} and {FIT_RANGE_A[1]:g} Å")
    two_d = np.asarray(wave_A).ndim == 2
    fitter = _Fitter(chunks, ORDER_DEGREE if two_d else 2)
    r_inst = float(resolving_power) if resolving_power and resolving_power > 0 else C_KMS / (4 * step_kms)
    r_inst = float(10 ** (round(math.log10(r_inst) * 20) / 20))  # shared cached templates
    pad = 1.0 + (max(abs(v_min_kms), abs(v_max_kms)) + 1500.0) / C_KMS
    # rounded out to 500 Å so stars of similar coverage share the cached bank
    lo_A = math.floor(float(fitter.lo_A.min()) / pad / 500.0) * 500.0
    hi_A = math.ceil(float(fitter.hi_A.max()) * pad / 500.0) * 500.0
    tgrid, bank = _template_bank(lo_A, hi_A, step_kms, r_inst, tuple(classes))
    tx = np.log(tgrid)
    t_step = (tx[-1] - tx[0]) / (tx.size - 1) * C_KMS
    names = list(classes)

    def broadened(k, vsini):
        return convolve_same(bank[k], rotation_pixels(vsini, t_step))

    quick = fitter.coarser(4)

    def total(t, v, f=quick):
        return float(f.chi2(tx, t, math.atanh(v / C_KMS)).sum())

    # 1. coarse velocity: every class at a middling rotation, 8 km/s steps
    v_coarse = np.arange(v_min_kms, v_max_kms + 4.0, 8.0)
    best = (np.inf, 0, 0.0)
    for k in range(len(names)):
        t = broadened(k, 120.0)
        c2 = np.array([total(t, v) for v in v_coarse])
        j = int(np.argmin(c2))
        if c2[j] < best[0]:
            best = (c2[j], k, float(v_coarse[j]))
    _, k_best, v0 = best
    # 2. class and v sin i at that velocity (then the velocity again, once)
    for _ in range(2):
        table = np.array([[total(broadened(k, vs), v0) for vs in VSINI_GRID_KMS]
                          for k in range(len(names))])
        k_best, j = np.unravel_index(int(np.argmin(table)), table.shape)
        vs_best = VSINI_GRID_KMS[j]
        if 0 < j < len(VSINI_GRID_KMS) - 1:
            xs = np.array(VSINI_GRID_KMS[j - 1 : j + 2])
            a, b, _ = np.polyfit(xs, table[k_best, j - 1 : j + 2], 2)
            if a > 0:
                vs_best = float(np.clip(-b / (2 * a), xs[0], xs[-1]))
        t = broadened(k_best, vs_best)
        half = max(40.0, 3.0 * vs_best)
        v_mid = np.arange(max(v_min_kms - 30, v0 - half), min(v_max_kms + 30, v0 + half) + 2.0, 4.0)
        c2 = np.array([total(t, v) for v in v_mid])
        v0 = float(v_mid[int(np.argmin(c2))])
    # a star between two classes: mix the best template with a neighbour,
    # (1 - a) T_k + a T_j, a in 0.25 / 0.5 / 0.75 (as the class step of
    # atlas.measure.classify interpolates the subclass)
    label = names[k_best]
    best_c2 = total(t, v0)
    for j in (k_best - 1, k_best + 1):
        if not 0 <= j < len(names):
            continue
        tj = broadened(j, vs_best)
        for a in (0.25, 0.5, 0.75):
            tm = (1.0 - a) * t + a * tj
            c2m = total(tm, v0)
            if c2m < best_c2:
                best_c2, t_mix, label = c2m, tm, f"{names[k_best]}+{a:g} {names[j]}"
    if label != names[k_best]:
        t = t_mix
    # 3. fine per-chunk chi-square curves around v0
    width = max(vs_best, C_KMS / r_inst)
    fine_step = max(0.02 * width, 0.25)
    v_fine = np.arange(v0 - 12 * fine_step - 0.6 * width, v0 + 12 * fine_step + 0.6 * width + fine_step / 2, fine_step)
    curves = np.array([fitter.chi2(tx, t, math.atanh(v / C_KMS)) for v in v_fine])  # (nv, nch)
    tot = curves.sum(axis=1)
    dof_all = max(float(fitter.npts.sum()) - (fitter.degree + 1) * fitter.nch - 3, 1.0)
    chi2r_all = float(tot.min() / dof_all)
    # detection: how much the template beats the polynomials alone (no lines at all)
    flat = float(fitter.chi2(tx, np.ones_like(t), 0.0).sum())
    contrast = flat - float(tot.min())
    signif = math.sqrt(max(contrast, 0.0) / max(chi2r_all, 1.0))
    result = RVResult(None, None, method=f"template {label}")
    result.significance = signif
    result.vsini_rough_kms = float(vs_best)
    result.line_fwhm_kms = math.hypot(ROT_FWHM_PER_VSINI * vs_best, C_KMS / r_inst)
    result.ccf_fwhm_kms = result.line_fwhm_kms
    if not signif >= min_significance:
        result.note = f"template fit: no significant chi-square minimum ({signif:.1f} sigma)"
        return result
    strips = []
    for c in range(fitter.nch):
        st = StripRV(float(fitter.lo_A[c]), float(fitter.hi_A[c]), None, None, 0)
        strips.append(st)
        pm = _parabola_min(v_fine, curves[:, c])
        if pm is None or fitter.npts[c] < 20:
            st.used, st.note = False, "no chi-square minimum in this chunk"
            continue
        vm, a = pm
        dof = max(fitter.npts[c] - fitter.degree - 2.0, 1.0)
        chi2r = float(curves[:, c].min() / dof)
        err = 1.0 / math.sqrt(a) * math.sqrt(max(chi2r, 1.0))
        st.rv_kms, st.err_kms = vm, err
    result.strips = strips
    if not any(st.rv_kms is not None for st in strips):
        result.note = "template fit: no chunk gave a velocity"
        return result
    ok = [s for s in strips if s.rv_kms is not None]
    mean, err, use, _ = combine_strips(ok, clip_sigma)
    if use.sum() < 3:
        # one or two chunks cannot show their own scatter: the whole-spectrum curvature
        pm = _parabola_min(v_fine, tot)
        if pm is not None:
            err = max(err, math.sqrt(max(chi2r_all, 1.0) / pm[1]))
    # template dependence: how far the whole-spectrum minimum moves with the runner-up
    # class (half the move), reported apart and not added to the error: the runner-up
    # may be a class that fits far worse, which would make the error needlessly large
    order_k = np.argsort(table.min(axis=1))
    result.systematic_kms = None
    if order_k.size > 1:
        k2 = int(order_k[1]) if int(order_k[0]) == int(k_best) else int(order_k[0])
        t2 = broadened(k2, VSINI_GRID_KMS[int(np.argmin(table[k2]))])
        tot2 = np.array([float(fitter.chi2(tx, t2, math.atanh(v / C_KMS)).sum()) for v in v_fine])
        p1, p2 = _parabola_min(v_fine, tot), _parabola_min(v_fine, tot2)
        if p1 is not None and p2 is not None:
            result.systematic_kms = 0.5 * abs(p1[0] - p2[0])
    err = math.hypot(err, MISMATCH_FRACTION * result.line_fwhm_kms)
    if not (v_min_kms - 30 <= mean <= v_max_kms + 30):
        result.note = f"template fit left the search range ({mean:+.0f} km/s)"
        return result
    result.rv_obs_kms = mean
    result.rv_err_kms = err
    result.n_lines = int(use.sum())
    return result


__all__ = ["HOT_CLASSES", "telluric_regions_A", "template_rv", "FWHM_PER_SIGMA"]
