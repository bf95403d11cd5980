"""The coarse search of a line-mask velocity: a mask CCF over the whole velocity range.

:func:`coarse_ccf` correlates the smoothed line depth with the listed line positions,
:func:`fit_peak` fits a Gaussian to the top of a CCF peak, and :func:`coarse_search` finds
the star's first velocity, line width and detection significance from them.

References
----------
Tonry & Davis (1979), AJ 84, 1511 (cross-correlation radial velocities);
Baranne et al. (1996), A&AS 119, 373 (weighted line-mask cross-correlation).
"""

from __future__ import annotations

import math
import warnings

import numpy as np
from scipy import ndimage, optimize

from atlas.measure.rv_result import FWHM_PER_SIGMA, RVResult
from atlas.physics.constants import C_KMS

#: The CCF runs this far (km/s) beyond the search range on both sides, for its baseline
#: and noise (broad-lined stars have peaks hundreds of km/s wide).  Our choice.
BASE_PAD_KMS = 600.0


def fit_peak(v, ccf, guess_mu=None, guess_s=None, half_window=None):
    """Gaussian fit (scipy curve_fit) to the top of a CCF peak: (mu, sigma, amplitude, base).

    The baseline is the CCF's median; only the contiguous run above 75 % of the peak
    height (or ``half_window`` around the peak) is fitted, so a blend on one flank
    does not pull the centre.  Returns None when no peak can be fitted.
    """
    v = np.asarray(v)
    ccf = np.asarray(ccf)
    good = np.isfinite(ccf)
    if good.sum() < 5:
        return None
    v, ccf = v[good], ccf[good]
    i = int(np.argmax(ccf)) if guess_mu is None else int(np.argmin(np.abs(v - guess_mu)))
    base = float(np.median(ccf))
    amp = float(ccf[i] - base)
    if amp <= 0:
        return None

    def run_above(level):
        above = ccf > level
        lo = hi = i
        while lo > 0 and above[lo - 1]:
            lo -= 1
        while hi < ccf.size - 1 and above[hi + 1]:
            hi += 1
        return lo, hi

    step = abs(v[1] - v[0])
    if guess_s is None:
        lo, hi = run_above(base + 0.5 * amp)
        guess_s = max((v[hi] - v[lo]) / FWHM_PER_SIGMA, step)
    if half_window is None:
        lo, hi = run_above(base + 0.75 * amp)
        sel = np.zeros(v.size, dtype=bool)
        sel[lo : hi + 1] = True
    else:
        sel = np.abs(v - v[i]) <= half_window
    if sel.sum() < 5:
        sel = np.zeros(v.size, dtype=bool)
        sel[np.argsort(np.abs(v - v[i]))[:5]] = True

    def model(x, a, mu, s):
        return base + a * np.exp(-0.5 * ((x - mu) / s) ** 2)

    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            p, _ = optimize.curve_fit(model, v[sel], ccf[sel], p0=(amp, v[i], guess_s),
                                      maxfev=2000)
    except (RuntimeError, ValueError):
        return None
    a, mu, s = p
    if not (np.isfinite(mu) and a > 0 and s != 0) or abs(mu - v[i]) > 2 * abs(guess_s) + step:
        return None
    return float(mu), abs(float(s)), float(a), base

def coarse_ccf(segs, xl, wl, v_kms, sigma_t_kms):
    """Mask CCF on a velocity grid: weighted mean smoothed depth at the shifted lines."""
    num = np.zeros(v_kms.size)
    den = np.zeros(v_kms.size)
    dxv = np.arctanh(v_kms / C_KMS)
    for sg in segs:
        x = sg.x
        step = np.median(np.diff(x))
        grid = np.arange(x[0], x[-1], step)
        if grid.size < 10:
            continue
        dg = np.interp(grid, x, sg.d)
        wg = np.interp(grid, x, (sg.ivar > 0).astype(float))
        sm = ndimage.gaussian_filter1d(dg, sigma_t_kms / C_KMS / step, mode="constant")
        nm = ndimage.gaussian_filter1d(wg, sigma_t_kms / C_KMS / step, mode="constant")
        sel = (xl + dxv.max() > x[0]) & (xl + dxv.min() < x[-1])
        if not sel.any():
            continue
        pos = xl[sel][:, None] + dxv[None, :]
        inside = (pos > grid[0]) & (pos < grid[-1])
        val = np.interp(pos, grid, sm, left=0.0, right=0.0)
        cov = np.interp(pos, grid, nm, left=0.0, right=0.0)
        with np.errstate(invalid="ignore", divide="ignore"):
            val = np.where(inside & (cov > 0.5), val / cov, 0.0)
        ww = wl[sel][:, None] * (inside & (cov > 0.5))
        num += (ww * val).sum(axis=0)
        den += ww.sum(axis=0)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(den > 0, num / den, np.nan)

def _peak(v_coarse, ccf_c, ipk, sigma_t, v_min_kms, v_max_kms, pad):
    """(v0, sigma) of the CCF peak at index ``ipk`` (km/s), or None when none can be fitted."""
    fit = fit_peak(v_coarse, ccf_c, guess_mu=v_coarse[ipk])
    if fit is None:
        return None
    v0, s_ccf, _, _ = fit
    max_sigma = 0.25 * (v_max_kms - v_min_kms)
    if not (v_min_kms - pad <= v0 <= v_max_kms + pad) or s_ccf > max_sigma:
        # the Gaussian ran away (a very broad or asymmetric peak): keep the maximum and
        # the half-maximum width instead
        finite = np.isfinite(ccf_c)
        v0 = float(v_coarse[ipk])
        above = finite & (ccf_c >= 0.5 * (ccf_c[ipk] + np.nanmedian(ccf_c)))
        lo_i = hi_i = ipk
        while lo_i > 0 and above[lo_i - 1]:
            lo_i -= 1
        while hi_i < above.size - 1 and above[hi_i + 1]:
            hi_i += 1
        s_ccf = min(max((v_coarse[hi_i] - v_coarse[lo_i]) / FWHM_PER_SIGMA, sigma_t), max_sigma)
    return v0, s_ccf


def _significance(v_coarse, ccf_c, ipk, v0, s_ccf, sigma_t, step_v):
    """(significance, contrast) of the CCF peak at ``v0``.

    The peak over the scatter of the CCF away from it, after removing the slow trends of
    blended wings (a running median 8 peak widths long).
    """
    finite = np.isfinite(ccf_c)
    away = finite & (np.abs(v_coarse - v0) > 4 * s_ccf + 3 * sigma_t)
    width = int(8 * s_ccf / step_v) | 1
    trend = ndimage.median_filter(np.where(finite, ccf_c, np.nanmedian(ccf_c)), size=max(width, 3))
    detr = ccf_c - trend
    noise_c = (1.482602 * np.median(np.abs(detr[away] - np.median(detr[away])))
               if away.sum() > 10 else np.nan)
    near = finite & (np.abs(v_coarse - v0) > 3 * s_ccf) & (np.abs(v_coarse - v0) < 6 * s_ccf)
    local_base = float(np.median(ccf_c[near])) if near.sum() > 3 else float(np.nanmedian(ccf_c))
    amp_c = float(ccf_c[ipk]) - local_base
    signif = amp_c / noise_c if noise_c > 0 else float("inf")
    return signif, amp_c


def coarse_search(segs, xl_all, wl, v_min_kms, v_max_kms, min_significance):
    """First velocity of a line-mask fit: ``(result, peak)``.

    ``segs`` are :class:`atlas.measure.rv_input.Segment` strips, ``xl_all`` and ``wl`` the
    sorted ln rest wavelengths and weights of the mask.  ``result`` is an
    :class:`RVResult` with the CCF, its width, contrast and significance (and a note when
    nothing was found); ``peak`` is ``(v0_kms, sigma_line_kms, pix_kms, pad_kms)``, or
    None when no significant peak lies in [``v_min_kms``, ``v_max_kms``].
    """
    pix_kms = float(np.median([np.median(np.diff(s.x)) for s in segs])) * C_KMS
    sigma_t = max(pix_kms, 0.3)
    step_v = max(pix_kms / 2.0, (v_max_kms - v_min_kms + 2 * BASE_PAD_KMS) / 4000.0)
    pad = 10 * sigma_t
    v_coarse = np.arange(v_min_kms - BASE_PAD_KMS, v_max_kms + BASE_PAD_KMS + step_v / 2, step_v)
    ccf_c = coarse_ccf(segs, xl_all, wl, v_coarse, sigma_t)
    inrange = (v_coarse >= v_min_kms) & (v_coarse <= v_max_kms) & np.isfinite(ccf_c)
    if not inrange.any():
        return RVResult(None, None, note="no listed line falls in the spectrum's wavelength range"), None
    ipk = int(np.flatnonzero(inrange)[np.argmax(ccf_c[inrange])])
    peak = _peak(v_coarse, ccf_c, ipk, sigma_t, v_min_kms, v_max_kms, pad)
    if peak is None:
        return RVResult(None, None, note="no correlation peak could be fitted",
                        ccf_velocity_kms=v_coarse, ccf=ccf_c), None
    v0, s_ccf = peak
    signif, amp_c = _significance(v_coarse, ccf_c, ipk, v0, s_ccf, sigma_t, step_v)
    result = RVResult(None, None, ccf_velocity_kms=v_coarse, ccf=ccf_c)
    result.significance = float(signif) if np.isfinite(signif) else None
    result.ccf_fwhm_kms = FWHM_PER_SIGMA * s_ccf
    result.ccf_contrast = amp_c
    if not (signif >= min_significance) or not (v_min_kms - pad <= v0 <= v_max_kms + pad):
        result.note = f"no significant correlation peak (best {signif:.1f} sigma)"
        return result, None
    sigma_line = math.sqrt(max(s_ccf**2 - sigma_t**2, (0.5 * pix_kms) ** 2))
    result.line_fwhm_kms = FWHM_PER_SIGMA * sigma_line
    return result, (v0, sigma_line, pix_kms, pad)
