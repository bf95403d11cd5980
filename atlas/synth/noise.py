"""Photon noise for synthetic spectra.

Counts are scaled so that a reference level (the continuum at a chosen wavelength)
holds snr^2 photo-electrons per pixel; each pixel then gets Gaussian noise of
standard deviation sqrt(counts), the large-count limit of Poisson statistics
(common practice), from a ``numpy.random.Generator`` started at a fixed number.
"""

from __future__ import annotations

import numpy as np


def add_photon_noise(counts, rng: np.random.Generator):
    """Noisy counts and their 1-sigma uncertainty for noise-free ``counts`` (photo-electrons).

    Returns ``(noisy, sigma)`` with sigma = sqrt(max(counts, 0)).
    """
    c = np.asarray(counts, dtype=np.float64)
    sigma = np.sqrt(np.clip(c, 0.0, None))
    return c + rng.standard_normal(c.shape) * sigma, sigma


def scale_to_snr(model, reference_level: float, snr: float):
    """``model`` scaled so that ``reference_level`` becomes snr^2 counts per pixel."""
    return np.asarray(model, dtype=np.float64) * (snr * snr / reference_level)
