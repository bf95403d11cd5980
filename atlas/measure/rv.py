"""Radial velocity by cross-correlation in ln(wavelength) against a line mask.

Works on plain arrays (wavelength in Å, flux, optional uncertainty and mask) of one
spectrum or of several echelle orders.  The steps:

1. normalise the flux to its continuum (:func:`normalise`, or a continuum given);
2. coarse search: correlate the smoothed line depth ``1 - F/C`` with a mask of
   listed line positions, weighted by strength, over the whole velocity range;
3. matched template: fit each mask line's depth (non-negative least squares, Gaussian
   profile with the width found in step 2) at the coarse velocity;
4. fine search, strip by strip (or order by order): the inverse-variance weighted CCF
   against that template, a Gaussian fit to its peak, and the photon-noise limit of the
   strip from the template (Bouchy, Pepe & Queloz 2001);
5. strips combined with inverse-variance weights after a sigma clip; the error is
   inflated by sqrt(reduced chi-square) when the strips scatter more than their errors.

Velocities are relativistic: a shift of ``dx`` in ln(wavelength) is ``v = c tanh(dx)``,
the same law as :mod:`atlas.physics.doppler`.

References
----------
Tonry & Davis (1979), AJ 84, 1511 (cross-correlation radial velocities);
Baranne et al. (1996), A&AS 119, 373 (weighted line-mask cross-correlation);
Bouchy, Pepe & Queloz (2001), A&A 374, 733 (photon-noise limit of a radial velocity);
Stoehr et al. (2008), ASP Conf. Ser. 394, 505 (DER_SNR noise estimate);
Wright & Eastman (2014), PASP 126, 838 (barycentric correction).
"""

from __future__ import annotations

import math

import numpy as np
from scipy import ndimage

from atlas.measure.rv_ccf import BASE_PAD_KMS, coarse_search
from atlas.measure.rv_fit import photon_limit_kms, solve_strip, template_depth
from atlas.measure.rv_input import STRENGTH_WEIGHT, der_noise, line_mask, normalise, segments
from atlas.measure.rv_result import (
    FWHM_PER_SIGMA,
    ROT_FWHM_PER_VSINI,
    RVResult,
    StripRV,
    combine_strips,
    vsini_rough,
)
from atlas.physics.constants import C_KMS

#: Names callers import from here (the method's parts live in rv_input, rv_ccf, rv_fit
#: and rv_result).
__all__ = [
    "C_KMS", "FWHM_PER_SIGMA", "ROT_FWHM_PER_VSINI", "STRENGTH_WEIGHT", "RVResult", "StripRV",
    "combine_strips", "der_noise", "line_mask", "measure_rv", "normalise", "photon_limit_kms",
    "template_depth", "vsini_rough",
]


def _mask_lines(line_wave_A, line_weight, segs, v_min_kms, v_max_kms):
    """Sorted ln rest wavelengths and weights of the usable mask lines near the strips."""
    lw = np.asarray(line_wave_A, dtype=np.float64)
    wl = np.ones_like(lw) if line_weight is None else np.asarray(line_weight, dtype=np.float64)
    good = np.isfinite(lw) & (lw > 0) & np.isfinite(wl) & (wl > 0)
    lw, wl = lw[good], wl[good]
    order = np.argsort(lw)
    lw, wl = lw[order], wl[order]
    xl_all = np.log(lw)
    xmin = min(s.x[0] for s in segs)
    xmax = max(s.x[-1] for s in segs)
    margin = (max(abs(v_min_kms), abs(v_max_kms)) + BASE_PAD_KMS) / C_KMS * 1.05 + 1e-4
    sel = (xl_all > xmin - margin) & (xl_all < xmax + margin)
    return xl_all[sel], wl[sel]


def _detrend(segs, sigma_line, pix_kms):
    """Remove what the template cannot model and would bias it, in place.

    Slow trends of the depth (wings of unlisted broad lines, continuum errors), by a
    running median 15 line widths long (common practice: a local pseudo-continuum).
    """
    for sg in segs:
        size = int(15 * FWHM_PER_SIGMA * sigma_line / pix_kms) | 1
        if size < sg.d.size // 2:
            ok_ = sg.ivar > 0
            trend = ndimage.median_filter(np.where(ok_, sg.d, 0.0), size=size, mode="nearest")
            sg.d = np.where(ok_, sg.d - trend, 0.0)


def _fine_strips(segs, xl_all, sigma_x, dx0):
    """Per-strip matched-template velocities: (strips, total Fisher information, line
    count, fitted line sigmas in km/s)."""
    strips = []
    info_total = 0.0
    total_lines = 0
    strip_sigmas = []
    for sg in segs:
        # lines just beyond the strip ends are fitted too, so their wings bias nothing
        inside = (xl_all + dx0 > sg.x[0] - 3 * sigma_x) & (xl_all + dx0 < sg.x[-1] + 3 * sigma_x)
        xl = xl_all[inside]
        strip = StripRV(math.exp(sg.x[0]), math.exp(sg.x[-1]), None, None, int(xl.size))
        strips.append(strip)
        if xl.size == 0:
            strip.used, strip.note = False, "no listed line in this strip"
            continue
        # the common width is fitted only where enough lines constrain it
        sol = solve_strip(sg, xl, sigma_x, dx0, fit_width=xl.size >= 8)
        if sol is None:
            strip.used, strip.note = False, "no line found in this strip"
            continue
        dx, err_dx, depth, info, sx = sol
        strip_sigmas.append(sx * C_KMS)
        strip.n_lines = int((depth > 0).sum())
        total_lines += strip.n_lines
        info_total += info
        beta = math.tanh(dx)
        strip.rv_kms = C_KMS * beta
        strip.err_kms = C_KMS * (1.0 - beta**2) * err_dx
    return strips, info_total, total_lines, strip_sigmas


def measure_rv(
    wave_A,
    flux,
    uncertainty=None,
    mask=None,
    *,
    line_wave_A,
    line_weight=None,
    continuum=None,
    normalised: bool = False,
    v_min_kms: float = -300.0,
    v_max_kms: float = 300.0,
    n_strips: int | None = None,
    clip_sigma: float = 4.0,
    min_significance: float = 6.0,
) -> RVResult:
    """Radial velocity (km/s, observer's frame) of a spectrum against a line mask.

    ``wave_A`` and ``flux`` are 1-D, or 2-D (order, sample) for echelle orders, which
    then act as the strips.  ``line_wave_A`` are rest positions in the spectrum's own
    medium; ``line_weight`` their initial weights (default 1).  ``continuum`` (same
    shape as flux) or ``normalised=True`` skip the built-in continuum.  The search runs
    over [``v_min_kms``, ``v_max_kms``]; strips more than ``clip_sigma`` away from the
    weighted mean are flagged and left out.  Returns an :class:`RVResult` whose
    ``rv_obs_kms`` is None (with a note) when no significant correlation peak exists.

    References
    ----------
    Baranne et al. (1996), A&AS 119, 373; Bouchy, Pepe & Queloz (2001), A&A 374, 733.
    """
    segs = segments(wave_A, flux, uncertainty, mask, continuum, normalised, n_strips)
    if not segs:
        return RVResult(None, None, note="too few good samples")
    xl_all, wl = _mask_lines(line_wave_A, line_weight, segs, v_min_kms, v_max_kms)
    if xl_all.size == 0:
        return RVResult(None, None, note="no listed line falls in the spectrum's wavelength range")
    result, peak = coarse_search(segs, xl_all, wl, v_min_kms, v_max_kms, min_significance)
    if peak is None:
        return result
    v0, sigma_line, pix_kms, pad = peak
    # ---- matched template and fine search per strip
    _detrend(segs, sigma_line, pix_kms)
    strips, info_total, total_lines, strip_sigmas = _fine_strips(
        segs, xl_all, sigma_line / C_KMS, math.atanh(v0 / C_KMS))
    result.strips = strips
    if strip_sigmas:
        result.line_fwhm_kms = FWHM_PER_SIGMA * float(np.median(strip_sigmas))
    result.n_lines = total_lines
    ok = [s for s in strips if s.rv_kms is not None]
    if not ok:
        result.note = "no strip gave a velocity"
        return result
    mean, err, use, chi2r = combine_strips(ok, clip_sigma)
    if chi2r is not None:
        if chi2r > 100.0 or (~use).sum() > 0.25 * use.size:
            result.note = ("strips disagree (reduced chi-square "
                           f"{chi2r:.0f}, {(~use).sum()} of {use.size} set aside): velocity unreliable")
    if not (v_min_kms - 2 * pad <= mean <= v_max_kms + 2 * pad):
        result.note = f"the velocity fit left the search range ({mean:+.0f} km/s)"
        return result
    result.rv_obs_kms = mean
    result.rv_err_kms = err
    result.photon_limit_kms = C_KMS / math.sqrt(info_total) if info_total > 0 else None
    return result
