"""What a radial-velocity measurement returns, and how per-strip velocities are combined.

Shared by both methods (:mod:`atlas.measure.rv`, the line mask, and
:mod:`atlas.measure.rv_template`, the class templates): :class:`RVResult`, :class:`StripRV`,
:func:`combine_strips`, :func:`vsini_rough` and the profile constants.
"""

from __future__ import annotations

import math
from dataclasses import dataclass, field

import numpy as np

from atlas.physics.constants import C_KMS

#: FWHM of a Gaussian in units of its sigma.
FWHM_PER_SIGMA = 2.0 * math.sqrt(2.0 * math.log(2.0))
#: FWHM of the rotation profile in units of v sin i, linear limb darkening eps = 0.6
#: (solved from the profile of Gray 2005, "The Observation and Analysis of Stellar
#: Photospheres", 3rd ed., eq. 18.14).
ROT_FWHM_PER_VSINI = 1.559

@dataclass
class StripRV:
    """One strip's (or order's) velocity: wavelength range (Å), RV and error (km/s)."""

    lo_A: float
    hi_A: float
    rv_kms: float | None
    err_kms: float | None
    n_lines: int
    used: bool = True
    note: str = ""


@dataclass
class RVResult:
    """Radial velocity of one spectrum; velocities in km/s, positive = receding."""

    rv_obs_kms: float | None
    rv_err_kms: float | None
    rv_kms: float | None = None  # barycentric, when the correction is known
    barycentric_kms: float | None = None
    ccf_fwhm_kms: float | None = None
    ccf_contrast: float | None = None
    line_fwhm_kms: float | None = None
    vsini_rough_kms: float | None = None
    significance: float | None = None
    photon_limit_kms: float | None = None
    n_lines: int = 0
    strips: list[StripRV] = field(default_factory=list)
    note: str = ""
    ccf_velocity_kms: np.ndarray | None = None
    ccf: np.ndarray | None = None
    method: str = "line mask"
    systematic_kms: float | None = None  # template fit: half the shift with the runner-up class (not in rv_err_kms)

    def as_dict(self) -> dict:
        """JSON-ready summary (no arrays)."""
        out = {
            k: getattr(self, k)
            for k in (
                "rv_kms",
                "rv_err_kms",
                "rv_obs_kms",
                "barycentric_kms",
                "ccf_fwhm_kms",
                "ccf_contrast",
                "line_fwhm_kms",
                "vsini_rough_kms",
                "significance",
                "photon_limit_kms",
                "n_lines",
                "note",
                "method",
                "systematic_kms",
            )
        }
        out["strips"] = [
            {
                "lo_A": s.lo_A,
                "hi_A": s.hi_A,
                "rv_kms": s.rv_kms,
                "err_kms": s.err_kms,
                "n_lines": s.n_lines,
                "used": s.used,
                "note": s.note,
            }
            for s in self.strips
        ]
        return out


def combine_strips(ok, clip_sigma: float):
    """Combine per-strip velocities (km/s) into one, setting outlier strips aside.

    ``ok`` are strips with ``rv_kms`` and ``err_kms``.  A robust clip takes the residuals
    from the inverse-variance weighted median in units of each strip's error, the
    threshold scaled by their median absolute deviation when that exceeds 1; the kept
    strips are averaged with inverse-variance weights and, with three or more, the error
    is inflated by sqrt(reduced chi-square) when the strips scatter more than their
    errors (common practice).  Marks the set-aside strips ``used = False``.
    Returns ``(mean_kms, err_kms, used_mask, reduced_chi2 or None)``.
    """
    rv = np.array([s.rv_kms for s in ok])
    er = np.array([s.err_kms for s in ok])
    order_ = np.argsort(rv)
    cw = np.cumsum(1.0 / er[order_] ** 2)
    centre = float(rv[order_][np.searchsorted(cw, 0.5 * cw[-1])])
    z = (rv - centre) / er
    scale = max(1.0, 1.482602 * float(np.median(np.abs(z)))) if rv.size >= 3 else np.inf
    use = np.abs(z) <= clip_sigma * scale
    for s, u_ in zip(ok, use, strict=True):
        if not u_:
            s.used, s.note = False, "outlier (sigma clip)"
    w = 1.0 / er[use] ** 2
    mean = float((w * rv[use]).sum() / w.sum())
    err = math.sqrt(1.0 / w.sum())
    chi2r = None
    if use.sum() >= 3:
        chi2r = float((((rv[use] - mean) / er[use]) ** 2).sum() / (use.sum() - 1))
        err *= max(1.0, math.sqrt(chi2r))
    return mean, err, use, chi2r


def vsini_rough(line_fwhm_kms: float | None, resolving_power: float | None) -> float | None:
    """A rough v sin i (km/s) from the line FWHM and the instrument's resolving power.

    The instrumental FWHM c/R is removed in quadrature and the rest is read as a
    rotation profile with limb darkening 0.6 (Gray 2005, The Observation and Analysis
    of Stellar Photospheres, 3rd ed., ch. 18).  Rough: both steps are approximations.
    """
    if not line_fwhm_kms or not resolving_power or resolving_power <= 0:
        return None
    inst = C_KMS / float(resolving_power)
    rest = line_fwhm_kms**2 - inst**2
    if rest <= 0:
        return 0.0
    return math.sqrt(rest) / ROT_FWHM_PER_VSINI
