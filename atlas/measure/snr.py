"""Signal-to-noise ratio of a spectrum from the flux alone (DER_SNR).

References
----------
Stoehr, F., et al. 2008, "DER_SNR: A Simple & General Spectroscopic
Signal-to-Noise Measurement Algorithm", ASP Conf. Ser. 394, 505.
"""

from __future__ import annotations

import numpy as np

#: 1.482602 / sqrt(6): turns the median absolute second difference into a Gaussian sigma
#: (Stoehr et al. 2008, eq. 2).
DER_SNR_FACTOR = 0.6052697


def der_snr(flux, mask=None) -> float:
    """S/N per pixel of a spectrum by DER_SNR: median(flux) / noise estimated from second differences.

    ``flux`` is 1-D (or 2-D: orders x samples, giving the median of the per-order
    values).  NaN, infinite and masked samples (``mask`` True = bad, or a numpy
    masked array) are left out before the differences are taken, as the reference
    implementation leaves out missing pixels.  Returns NaN when fewer than 5
    usable samples remain or the noise estimate is zero.

    The noise is ``0.6052697 * median(|2 f[i] - f[i-2] - f[i+2]|)``, unbiased for
    white Gaussian noise on a spectrum that is smooth over 5 pixels.

    References
    ----------
    Stoehr et al. 2008, ASP Conf. Ser. 394, 505.

    Examples
    --------
    >>> rng = np.random.default_rng(1)
    >>> round(der_snr(100.0 + rng.normal(0.0, 2.0, 100_000)) / 50.0, 1)
    1.0
    """
    f = np.ma.asarray(flux)
    bad = np.ma.getmaskarray(f) | ~np.isfinite(np.ma.getdata(f))
    if mask is not None:
        bad = bad | np.asarray(mask, dtype=bool)
    data = np.asarray(np.ma.getdata(f), dtype=np.float64)
    if data.ndim == 2:
        values = [der_snr(row, m) for row, m in zip(data, bad, strict=True)]
        values = [v for v in values if np.isfinite(v)]
        return float(np.median(values)) if values else float("nan")
    good = data.reshape(-1)[~bad.reshape(-1)]
    n = good.size
    if n < 5:
        return float("nan")
    signal = np.median(good)
    noise = DER_SNR_FACTOR * np.median(np.abs(2.0 * good[2 : n - 2] - good[0 : n - 4] - good[4:n]))
    if not noise > 0:
        return float("nan")
    return float(signal / noise)
