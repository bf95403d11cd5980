"""Uniform ln(lambda) grids and velocity broadening by convolution on them.

On a grid uniform in ln(lambda) every pixel has the same width in velocity, so
rotational and instrumental broadening (both constant in velocity) are single
convolutions.

* Rotation: the classical rotation kernel of a limb-darkened sphere with linear
  limb darkening epsilon (Gray 2005, eq. 18.14):
  G(v) = [2 (1 - eps) sqrt(1 - (v/vL)^2) + (pi eps / 2) (1 - (v/vL)^2)] / [pi vL (1 - eps/3)]
  for |v| <= vL = v sin i, zero outside; it integrates to 1.
* Instrument: a Gaussian with FWHM = lambda / R, i.e. c / R in velocity (common practice).

References
----------
Gray, D. F., *The Observation and Analysis of Stellar Photospheres*, 3rd ed. (2005), ch. 18.
"""

from __future__ import annotations

import math

import numpy as np
from scipy.signal import oaconvolve

from atlas.synth.strengths import C_KMS

FWHM_PER_SIGMA = 2.0 * math.sqrt(2.0 * math.log(2.0))


def log_grid(lo_A: float, hi_A: float, step_kms: float) -> np.ndarray:
    """Wavelengths (Å) from ``lo_A`` to at least ``hi_A``, uniform in ln(lambda), ``step_kms`` apart."""
    dln = math.log1p(step_kms / C_KMS)
    n = int(math.ceil(math.log(hi_A / lo_A) / dln)) + 1
    return lo_A * np.exp(np.arange(n) * dln)


def step_kms_of(wave_A: np.ndarray) -> float:
    """Velocity step (km/s) of a ln(lambda)-uniform grid."""
    return (math.exp(math.log(wave_A[-1] / wave_A[0]) / (len(wave_A) - 1)) - 1.0) * C_KMS


def rotation_kernel(v_kms, vsini_kms: float, epsilon: float = 0.6):
    """Gray's rotation kernel (per km/s) at velocities ``v_kms``; zero for |v| > v sin i.

    References
    ----------
    Gray (2005), eq. 18.14.
    """
    x = np.asarray(v_kms, dtype=np.float64) / vsini_kms
    inside = np.abs(x) <= 1.0
    y = np.where(inside, 1.0 - x * x, 0.0)
    g = 2.0 * (1.0 - epsilon) * np.sqrt(y) + 0.5 * math.pi * epsilon * y
    return np.where(inside, g / (math.pi * vsini_kms * (1.0 - epsilon / 3.0)), 0.0)


def _pixel_kernel(func, half_kms: float, step_kms: float, sub: int = 15) -> np.ndarray:
    """``func(v)`` averaged over each pixel of width ``step_kms``; normalised to unit sum."""
    n = int(math.ceil(half_kms / step_kms)) + 1
    centres = np.arange(-n, n + 1) * step_kms
    offs = (np.arange(sub) + 0.5) / sub - 0.5
    vals = func(centres[:, None] + offs[None, :] * step_kms).mean(axis=1)
    total = vals.sum()
    return vals / total if total > 0 else np.array([1.0])


def rotation_pixels(vsini_kms: float, step_kms: float, epsilon: float = 0.6) -> np.ndarray:
    """Discrete rotation kernel for a grid of ``step_kms`` (unit sum); [1] when v sin i is tiny."""
    if vsini_kms <= 0.1 * step_kms:
        return np.array([1.0])
    return _pixel_kernel(lambda v: rotation_kernel(v, vsini_kms, epsilon), vsini_kms, step_kms)


def instrument_pixels(resolving_power: float, step_kms: float) -> np.ndarray:
    """Discrete Gaussian of FWHM c / R (km/s) for a grid of ``step_kms`` (unit sum)."""
    sigma = C_KMS / resolving_power / FWHM_PER_SIGMA
    return _pixel_kernel(lambda v: np.exp(-0.5 * (v / sigma) ** 2), 5.0 * sigma, step_kms)


def convolve_same(flux: np.ndarray, kernel: np.ndarray) -> np.ndarray:
    """Convolve ``flux`` with a centred ``kernel``; the ends are padded with their edge values."""
    if kernel.size <= 1:
        return np.array(flux, dtype=np.float64)
    pad = kernel.size // 2 + 1
    ext = np.pad(np.asarray(flux, dtype=np.float64), pad, mode="edge")
    return oaconvolve(ext, kernel, mode="same")[pad:-pad]
