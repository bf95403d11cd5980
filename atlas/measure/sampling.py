"""Spectral sampling in velocity and the resolving power it can support."""

from __future__ import annotations

import numpy as np

from atlas.physics.constants import C_KMS

#: Pixels per resolution element assumed by :func:`implied_resolving_power`:
#: Nyquist sampling, two pixels per FWHM (common practice).
PIXELS_PER_ELEMENT = 2.0


def median_sampling_kms(wave_A) -> float:
    """Median step between neighbouring samples in km/s: c * ln(lambda[i+1] / lambda[i]).

    ``wave_A`` is 1-D, or 2-D (orders x samples, steps taken within each order).
    Non-finite wavelengths are skipped.  The unit of the wavelengths cancels.
    Returns NaN when no step can be formed.
    """
    w = np.asarray(wave_A, dtype=np.float64)
    if w.ndim == 1:
        w = w[np.newaxis, :]
    steps = []
    for row in w:
        row = row[np.isfinite(row) & (row > 0)]
        if row.size >= 2:
            steps.append(np.abs(np.diff(np.log(row))))
    if not steps:
        return float("nan")
    return float(np.median(np.concatenate(steps)) * C_KMS)


def implied_resolving_power(
    sampling_kms: float, pixels_per_element: float = PIXELS_PER_ELEMENT
) -> float:
    """Resolving power R = c / (pixels_per_element * sampling) that a sampling in km/s per pixel supports.

    With the default of two pixels per resolution element (Nyquist sampling,
    common practice) this is the highest R the sampling can carry, not a measured R.
    """
    s = float(sampling_kms)
    if not np.isfinite(s) or s <= 0:
        return float("nan")
    return C_KMS / (pixels_per_element * s)
