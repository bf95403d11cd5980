"""Synthetic test spectra: Gaussian or Voigt absorption lines on a Planck or flat continuum.

Helpers for tests/measure and tests/bench/bench_measure.py; every spectrum is made
here from its parameters, so the true answer is known exactly.
"""

from __future__ import annotations

import math

import numpy as np
from astropy import constants
from scipy.special import voigt_profile

C_KMS = constants.c.to_value("km/s")


def log_grid(lo_A: float, hi_A: float, n: int) -> np.ndarray:
    """``n`` wavelengths (Å) equally spaced in ln(wavelength) from lo_A to hi_A."""
    return np.exp(np.linspace(math.log(lo_A), math.log(hi_A), n))


def planck_lambda(wave_A, teff_k):
    """Planck B_lambda (arbitrary scale) at wavelengths in Å (Planck 1901)."""
    h, c, k = constants.h.value, constants.c.value, constants.k_B.value
    lam = np.asarray(wave_A) * 1e-10
    return 1.0 / lam**5 / np.expm1(h * c / (lam * k * teff_k))


def line_depth(wave_A, rest_A, depth, rv_kms=0.0, sigma_kms=3.0, gamma_kms=0.0):
    """Sum of Gaussian (or Voigt, when gamma_kms > 0) line depths ``1 - F/C``.

    Each line has central depth ``depth`` (for Gaussians) and is moved by rv_kms
    (relativistic Doppler: lambda = lambda0 sqrt((1+b)/(1-b))).
    """
    w = np.asarray(wave_A, dtype=np.float64)
    x = np.log(w)
    out = np.zeros_like(w)
    beta = rv_kms / C_KMS
    shift = 0.5 * math.log((1 + beta) / (1 - beta))
    sx = sigma_kms / C_KMS
    gx = gamma_kms / C_KMS
    half = 8 * sx + 200 * gx
    for r, d in zip(np.atleast_1d(rest_A), np.atleast_1d(depth), strict=True):
        c = math.log(r) + shift
        a = np.searchsorted(x, c - half)
        b = np.searchsorted(x, c + half)
        u = x[a:b] - c
        if gx > 0:
            prof = voigt_profile(u, sx, gx) / voigt_profile(0.0, sx, gx)
        else:
            prof = np.exp(-0.5 * (u / sx) ** 2)
        out[a:b] += d * prof
    return out


def make_star(
    wave_A,
    rest_A,
    depth,
    *,
    rv_kms=0.0,
    sigma_kms=3.0,
    snr=100.0,
    teff_k=None,
    rng=None,
):
    """(flux, uncertainty, model) of a star with photon-like noise at continuum S/N ``snr``.

    The continuum is Planck at ``teff_k`` (normalised to median 1) or flat; the noise
    sigma scales with sqrt(flux) and equals 1/snr of the continuum.
    """
    w = np.asarray(wave_A)
    cont = np.ones_like(w) if teff_k is None else planck_lambda(w, teff_k)
    cont = cont / np.median(cont)
    model = cont * np.clip(1.0 - line_depth(w, rest_A, depth, rv_kms, sigma_kms), 0.02, None)
    sigma = np.sqrt(model * cont) / snr
    rng = np.random.default_rng(rng)
    flux = model + rng.normal(size=w.size) * sigma
    return flux, sigma, model
