"""Normalised line profiles (Å^-1), evaluated only in a window around each line.

* Metal and helium lines: the Voigt profile (``scipy.special.voigt_profile``:
  Gaussian standard deviation ``sigma_A`` convolved with a Lorentzian of half width
  at half maximum ``gamma_A``; it integrates to 1).
* Hydrogen lines: a profile with a flat core of half width ``scale_A`` and wings
  falling as |dlambda|^-5/2, the asymptotic form of linear Stark broadening in the
  Holtsmark field, 1 / (1 + |dlambda / scale|^(5/2)), normalised, then convolved with
  the Doppler Gaussian (Gray 2005, ch. 11; Holtsmark 1919).  It is a stand-in for
  tabulated Stark profiles, which this model does not use.

Each window reaches out to where the line's opacity ratio has fallen to ``eps``
(default 3e-4 of the continuous opacity), capped at ``max_half_A``.

References
----------
Gray, D. F., *The Observation and Analysis of Stellar Photospheres*, 3rd ed. (2005), ch. 11.
Holtsmark, J. (1919), Ann. Phys. 363, 577.
"""

from __future__ import annotations

import math

import numpy as np
from scipy.special import voigt_profile

from atlas.synth.strengths import PROFILE_HYDROGEN, LineSet

#: Integral of 1 / (1 + |u|^(5/2)) over all u: 2 pi / (2.5 sin(pi / 2.5)).
_HOLTSMARK_NORM = 2.0 * math.pi / (2.5 * math.sin(math.pi / 2.5))

EPS = 3e-4


def voigt(x_A, sigma_A: float, gamma_A: float):
    """Voigt profile (Å^-1) at offsets ``x_A`` (Å) from line centre; integrates to 1."""
    return voigt_profile(np.asarray(x_A, dtype=np.float64), sigma_A, gamma_A)


def gaussian(x_A, sigma_A: float):
    """Gaussian profile (Å^-1) of standard deviation ``sigma_A``; integrates to 1."""
    x = np.asarray(x_A, dtype=np.float64)
    return np.exp(-0.5 * (x / sigma_A) ** 2) / (sigma_A * math.sqrt(2.0 * math.pi))


def hydrogen(x_A, sigma_A: float, scale_A: float):
    """Hydrogen-line profile (Å^-1): |dlambda|^-5/2 Stark wings convolved with a Doppler Gaussian."""
    x = np.asarray(x_A, dtype=np.float64)
    half = float(np.max(np.abs(x))) + 6.0 * sigma_A
    step = min(sigma_A, scale_A) / 4.0
    n = int(min(max(2 * half / step, 64), 400_001))
    u = np.linspace(-half, half, n | 1)
    du = u[1] - u[0]
    stark = 1.0 / (1.0 + np.abs(u / scale_A) ** 2.5) / (_HOLTSMARK_NORM * scale_A)
    k_half = int(math.ceil(6.0 * sigma_A / du))
    if k_half >= 1:
        kx = np.arange(-k_half, k_half + 1) * du
        kern = np.exp(-0.5 * (kx / sigma_A) ** 2)
        stark = np.convolve(stark, kern / kern.sum(), mode="same")
    return np.interp(x, u, stark)


def window_half_A(lineset: LineSet, eps: float = EPS, max_half_A: float = 120.0, max_half_h_A: float = 350.0):
    """Half width (Å) of the window around each line (see module doc)."""
    s = np.maximum(lineset.strength_A, 0.0)
    sig, gam = lineset.sigma_A, lineset.gamma_A
    core = 6.0 * sig + 130.0 * gam  # keeps > 99.5 % of a Lorentzian's area
    wing_v = np.sqrt(s * gam / (math.pi * eps))
    is_h = lineset.kind == PROFILE_HYDROGEN
    with np.errstate(divide="ignore", invalid="ignore"):
        wing_h = gam * np.power(s / (_HOLTSMARK_NORM * np.maximum(gam, 1e-12) * eps), 0.4)
    half = np.where(is_h, np.minimum(np.maximum(core, wing_h), max_half_h_A), np.minimum(np.maximum(core, wing_v), max_half_A))
    return np.nan_to_num(half, nan=0.0)


def add_lines(wave_A: np.ndarray, eta: np.ndarray, lineset: LineSet, *, eps: float = EPS, min_strength_A: float = 1e-6) -> np.ndarray:
    """Add the opacity ratio ``S * phi`` of every line to ``eta`` on the sorted grid ``wave_A`` (Å).

    Lines weaker than ``min_strength_A`` (integrated ratio, Å) are skipped.  Returns ``eta``.
    """
    half = window_half_A(lineset, eps)
    lo = np.searchsorted(wave_A, lineset.center_A - half)
    hi = np.searchsorted(wave_A, lineset.center_A + half)
    for i in np.flatnonzero((lineset.strength_A > min_strength_A) & (hi > lo)):
        a, b = lo[i], hi[i]
        x = wave_A[a:b] - lineset.center_A[i]
        if lineset.kind[i] == PROFILE_HYDROGEN:
            phi = hydrogen(x, lineset.sigma_A[i], lineset.gamma_A[i])
        else:
            phi = voigt(x, lineset.sigma_A[i], lineset.gamma_A[i])
        eta[a:b] += lineset.strength_A[i] * phi
    return eta
