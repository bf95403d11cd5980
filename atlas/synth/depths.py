"""Line depth from the line-to-continuum opacity ratio: the curve of growth of one layer.

Shared by the synthesis (``atlas.synth.model``, depth at every wavelength) and the
per-line prediction (``atlas.lines.predict``, depth of each line at its centre), so
both use one physics.

* Depth from eta by the Milne-Eddington / Eddington-Barbier result for a source
  function linear in optical depth with line and continuum opacity in a fixed ratio:
  r = 1 - d_max eta / (1 + eta).  Weak lines grow as eta, strong lines saturate at
  depth ``d_max`` and then grow only through their wings: a curve of growth
  (Mihalas 1978, sect. 10-3; Gray 2005, ch. 13).
* ``d_max`` follows the Eddington-Barbier estimate of how far the surface is below
  the continuum's source function in a grey atmosphere,
  1 - B_lambda(T0) / B_lambda(Teff) with T0 = 2^(-1/4) Teff (Gray 2005, ch. 9),
  multiplied by ``DEPTH_GAIN`` = 1.4 (our calibration for the steeper temperature
  gradients of real photospheres) and capped at ``D_MAX`` = 0.88 (our choice).
* Per line: the equivalent width W = integral of d_max eta / (1 + eta) over the
  line's own profile (Voigt or hydrogen, ``atlas.synth.profiles``), integrated on a
  grid stretched into the wings.  Broadening by a Gaussian of standard deviation
  s_b (rotation and instrument stood in by one Gaussian) keeps W and widens the
  core: the broadened depth is W / (sqrt(2 pi) sqrt(s_e^2 + s_b^2)), where
  s_e = W / (sqrt(2 pi) d_0) is the width of the Gaussian with the line's own
  central depth d_0 and W (conservation of equivalent width under convolution,
  Gray 2005, ch. 13; the Gaussian stand-in is our approximation).

References
----------
Gray, D. F., *The Observation and Analysis of Stellar Photospheres*, 3rd ed. (2005).
Mihalas, D. (1978), *Stellar Atmospheres*, 2nd ed., ch. 10 (Milne-Eddington lines).
"""

from __future__ import annotations

import math

import numpy as np

from atlas.physics.constants import C_KMS
from atlas.synth import profiles
from atlas.synth.continuum import planck_b_lambda
from atlas.synth.strengths import PROFILE_HYDROGEN, LineSet

D_MAX = 0.88
DEPTH_GAIN = 1.4
#: FWHM of a Gaussian over its standard deviation, 2 sqrt(2 ln 2).
FWHM_PER_SIGMA = 2.0 * math.sqrt(2.0 * math.log(2.0))
#: Lines whose unbroadened central depth is below this are left out of a synthesis
#: (well below 1 %: they change the spectrum by less than its noise; our choice).
SYNTH_DEPTH_FLOOR = 0.001
#: Points of the half-profile grid used for each line's equivalent width.
_N_GRID = 48


def max_depth(wave_A, teff_k: float):
    """Deepest possible line depth d_max at ``wave_A`` (Å) for ``teff_k`` (K) (see module doc)."""
    w = np.asarray(wave_A, dtype=np.float64)
    ratio = planck_b_lambda(w, 2.0**-0.25 * teff_k) / planck_b_lambda(w, teff_k)
    return np.minimum(D_MAX, DEPTH_GAIN * (1.0 - ratio))


def depth_from_ratio(eta, d_max=D_MAX):
    """Normalised flux 1 - d_max eta / (1 + eta) (Milne-Eddington saturation, see module doc)."""
    eta = np.asarray(eta, dtype=np.float64)
    return 1.0 - d_max * eta / (1.0 + eta)


def _profile(ls: LineSet, x_A: np.ndarray, idx: np.ndarray) -> np.ndarray:
    """Profile values (Å^-1) at offsets ``x_A`` (lines x points) for the lines ``idx``."""
    out = profiles.voigt(x_A, ls.sigma_A[idx, None], ls.gamma_A[idx, None])
    for k in np.flatnonzero(ls.kind[idx] == PROFILE_HYDROGEN):
        i = idx[k]
        pad = 12.0 * ls.sigma_A[i] + 4.0 * ls.gamma_A[i]  # keeps the profile's own grid wider than its kernel
        out[k] = profiles.hydrogen(np.append(x_A[k], pad), ls.sigma_A[i], ls.gamma_A[i])[:-1]
    return out


def central_ratio(ls: LineSet) -> np.ndarray:
    """Opacity ratio eta at the centre of each line: S phi(0)."""
    idx = np.arange(len(ls))
    return ls.strength_A * _profile(ls, np.zeros((len(ls), 1)), idx)[:, 0]


def equivalent_width_A(ls: LineSet, d_max: np.ndarray, idx: np.ndarray, eps: float = 1e-4) -> np.ndarray:
    """Equivalent width (Å) of the lines ``idx`` on their own profile (see module doc).

    The half-profile grid runs from the centre to where eta has fallen to ``eps``
    in the damping wings, spaced as sinh so the core and the wings are both sampled.
    """
    if idx.size == 0:
        return np.zeros(0)
    s, sig, gam = ls.strength_A[idx], ls.sigma_A[idx], ls.gamma_A[idx]
    core = 1.2 * sig + gam
    reach = np.maximum(8.0 * sig, np.sqrt(np.maximum(s, 0.0) * gam / (math.pi * eps)))
    reach = np.maximum(reach, 10.0 * gam)
    is_h = ls.kind[idx] == PROFILE_HYDROGEN
    reach = np.where(is_h, np.minimum(reach, profiles.window_half_A(ls)[idx]), reach)
    u = np.linspace(0.0, 1.0, _N_GRID)
    top = np.arcsinh(reach / core)
    x = core[:, None] * np.sinh(u[None, :] * top[:, None])
    eta = s[:, None] * _profile(ls, x, idx)
    absorb = d_max[:, None] * eta / (1.0 + eta)
    return 2.0 * np.trapezoid(absorb, x, axis=1)


def line_depths(ls: LineSet, teff_k: float, fwhm_kms: float, *, floor: float = 0.0):
    """Depth (fraction of the continuum) of each line at its centre after Gaussian
    broadening of FWHM ``fwhm_kms`` (km/s); lines whose unbroadened depth is at most
    ``floor`` get that depth unbroadened (they only get shallower) without the costly
    equivalent width.  Returns (depth, equivalent width Å; NaN where not computed).
    """
    d_max = max_depth(ls.center_A, teff_k)
    eta0 = central_ratio(ls)
    d0 = d_max * eta0 / (1.0 + eta0)
    depth = d0.copy()
    ew = np.full(len(ls), np.nan)
    idx = np.flatnonzero(d0 > floor)
    if idx.size and fwhm_kms > 0:
        ew[idx] = equivalent_width_A(ls, d_max[idx], idx)
        root = math.sqrt(2.0 * math.pi)
        s_e = ew[idx] / (root * np.maximum(d0[idx], 1e-300))
        s_b = ls.center_A[idx] * fwhm_kms / C_KMS / FWHM_PER_SIGMA
        depth[idx] = np.minimum(d0[idx], ew[idx] / (root * np.hypot(s_e, s_b)))
    return depth, ew


def strong_enough(ls: LineSet, teff_k: float, floor: float = SYNTH_DEPTH_FLOOR) -> LineSet:
    """The lines of ``ls`` whose unbroadened central depth exceeds ``floor`` (a synthesis
    from 100,000 listed lines computes only those that show)."""
    d_max = max_depth(ls.center_A, teff_k)
    eta0 = central_ratio(ls)
    return ls.take(d_max * eta0 / (1.0 + eta0) > floor)
