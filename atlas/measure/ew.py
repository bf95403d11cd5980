"""Equivalent width and depth of one absorption line or wavelength range.

The continuum is given, or a straight line fitted by weighted least squares to two
flanking windows on either side of the range.  The equivalent width is the integral
of ``1 - F/C`` over the range (Å, reported in mÅ), with the integration weights of
the trapezoid rule and the range ends interpolated.  Its uncertainty propagates the
flux noise and the covariance of the fitted continuum; the estimate of Cayrel (1988)
is given beside it.

References
----------
Cayrel, R. (1988), IAU Symp. 132, 345: sigma_EW ~ 1.5 sqrt(FWHM * dx) / SNR.
"""

from __future__ import annotations

import math
from dataclasses import asdict, dataclass

import numpy as np

from atlas.errors import InputError


@dataclass
class EWResult:
    """Equivalent width (mÅ), depth (fraction of continuum) and their 1-sigma errors."""

    lo_A: float
    hi_A: float
    ew_mA: float
    ew_err_mA: float | None
    depth: float
    depth_err: float | None
    centre_A: float
    cayrel_err_mA: float | None
    continuum: str  # "given" or "linear fit to flanks"
    centroid_A: float | None = None  # first moment of 1 - F/C over the range
    fwhm_A: float | None = None  # width where 1 - F/C is at least half the depth

    def as_dict(self) -> dict:
        return asdict(self)


def _trapezoid_weights(x: np.ndarray) -> np.ndarray:
    """Weights w with sum(w * y) = trapezoid integral of y over the sample points x."""
    w = np.zeros_like(x)
    if x.size >= 2:
        dx = np.diff(x)
        w[:-1] += dx / 2
        w[1:] += dx / 2
    return w


def equivalent_width(
    wave_A,
    flux,
    lo_A: float,
    hi_A: float,
    *,
    uncertainty=None,
    continuum=None,
    mask=None,
    flank_A: float | None = None,
    where: str = "--ew",
) -> EWResult:
    """Equivalent width (mÅ) and depth of the feature between ``lo_A`` and ``hi_A`` (Å).

    ``flux`` in any unit; ``continuum`` (same unit, array or number) if known, else a
    straight line through the flanks ``[lo - flank, lo]`` and ``[hi, hi + flank]``
    (``flank_A`` defaults to half the range).  ``uncertainty`` (same unit) enables the
    error estimates; without it the noise is taken from the flanks' scatter.

    References
    ----------
    Cayrel, R. (1988), IAU Symp. 132, 345; error propagation (common practice).
    """
    w = np.asarray(wave_A, dtype=np.float64).ravel()
    f = np.asarray(flux, dtype=np.float64).ravel()
    if not (math.isfinite(lo_A) and math.isfinite(hi_A)) or hi_A <= lo_A:
        raise InputError(where, f"range {lo_A}..{hi_A} Å must have lo < hi")
    order = np.argsort(w, kind="stable")
    w, f = w[order], f[order]
    ok = np.isfinite(w) & np.isfinite(f)
    if mask is not None:
        ok &= ~np.asarray(mask, dtype=bool).ravel()[order]
    s = None
    if uncertainty is not None:
        s = np.asarray(uncertainty, dtype=np.float64).ravel()[order]
        ok &= np.isfinite(s) & (s > 0)
    if w[ok].size == 0 or lo_A < w[ok][0] or hi_A > w[ok][-1]:
        raise InputError(where, f"range {lo_A:g}..{hi_A:g} Å is not inside the spectrum")
    flank = 0.5 * (hi_A - lo_A) if flank_A is None else float(flank_A)

    # continuum: given, or a weighted straight line through the flanks
    centre = 0.5 * (lo_A + hi_A)
    cov = None
    if continuum is not None:
        c_all = np.broadcast_to(np.asarray(continuum, dtype=np.float64), f.shape)
        if np.ndim(continuum):
            c_all = np.asarray(continuum, dtype=np.float64).ravel()[order]
        how = "given"
        sig_flank = None
    else:
        fl = ok & (((w >= lo_A - flank) & (w < lo_A)) | ((w > hi_A) & (w <= hi_A + flank)))
        if fl.sum() < 4 or not ((w[fl] < lo_A).any() and (w[fl] > hi_A).any()):
            raise InputError(where, f"too few samples beside {lo_A:g}..{hi_A:g} Å to fit a continuum")
        design = np.vstack([np.ones(fl.sum()), w[fl] - centre]).T
        if s is not None:
            wt = 1.0 / s[fl] ** 2
        else:
            wt = np.ones(fl.sum())
        ata = design.T @ (design * wt[:, None])
        coef = np.linalg.solve(ata, design.T @ (f[fl] * wt))
        resid = f[fl] - design @ coef
        dof = max(fl.sum() - 2, 1)
        if s is None:
            sig_flank = float(np.sqrt(np.sum(resid**2) / dof))
            cov = np.linalg.inv(ata) * sig_flank**2
        else:
            sig_flank = None
            cov = np.linalg.inv(ata)
        c_all = coef[0] + coef[1] * (w - centre)
        how = "linear fit to flanks"

    # samples strictly inside plus interpolated end points
    inner = ok & (w > lo_A) & (w < hi_A)
    wi = w[ok]
    ends_f = np.interp([lo_A, hi_A], wi, f[ok])
    ends_c = np.interp([lo_A, hi_A], wi, c_all[ok])
    x = np.concatenate([[lo_A], w[inner], [hi_A]])
    fx = np.concatenate([[ends_f[0]], f[inner], [ends_f[1]]])
    cx = np.concatenate([[ends_c[0]], c_all[inner], [ends_c[1]]])
    if np.any(cx <= 0):
        raise InputError(where, "continuum is not positive in the range")
    tw = _trapezoid_weights(x)
    r = fx / cx
    ew_A = float(np.sum(tw * (1.0 - r)))

    # noise per point (end points take the nearest sample's)
    if s is not None:
        ends_s = np.interp([lo_A, hi_A], wi, s[ok])
        sx = np.concatenate([[ends_s[0]], s[inner], [ends_s[1]]])
    elif sig_flank is not None:
        sx = np.full(x.size, sig_flank)
    else:
        sx = None
    ew_err = None
    if sx is not None:
        var = float(np.sum((tw * sx / cx) ** 2))
        if cov is not None:
            jac = np.array([np.sum(tw * fx / cx**2), np.sum(tw * fx * (x - centre) / cx**2)])
            var += float(jac @ cov @ jac)
        ew_err = math.sqrt(var)

    i = int(np.argmin(r))
    depth = float(1.0 - r[i])
    depth_err = None if sx is None else float(sx[i] / cx[i])
    # FWHM from the depth profile, for Cayrel's estimate
    cayrel = None
    fwhm = float(np.sum(tw[(1.0 - r) >= depth / 2])) if depth > 0 and x.size > 3 else None
    a = tw * (1.0 - r)
    centroid = float(np.sum(a * x) / np.sum(a)) if np.sum(a) > 0 else None
    if sx is not None and fwhm is not None:
        dxm = float(np.median(np.diff(x)))
        snr = float(np.median(cx / sx))
        if snr > 0 and fwhm > 0:
            cayrel = 1.5 * math.sqrt(fwhm * dxm) / snr * 1000.0
    return EWResult(
        lo_A=float(lo_A),
        hi_A=float(hi_A),
        ew_mA=ew_A * 1000.0,
        ew_err_mA=None if ew_err is None else ew_err * 1000.0,
        depth=depth,
        depth_err=depth_err,
        centre_A=float(x[i]),
        cayrel_err_mA=cayrel,
        continuum=how,
        centroid_A=centroid,
        fwhm_A=fwhm,
    )
