"""Wings of strong lines taken into the continuum before features are searched.

The broad wings of H I, Ca II (H and K, the infrared triplet), Na I D and Mg I b lower
the flux over many line widths; measured against the continuum, every weak line on a
wing looks deeper than its own depth and every noise bump on the slope becomes a
"feature".  Around each strong line (a line of :data:`STRONG_SPECIES` predicted deeper
than :data:`STRONG_DEPTH` in this star) the wing is followed by the upper envelope of
the spectrum: the running maximum over :data:`ENVELOPE_FWHM` line widths of the flux
smoothed to the line width, then its running mean over the same length (common
practice: a local pseudo-continuum).  The wing reaches as far as that envelope stays
:data:`WING_LEVEL` below the continuum (at most :data:`MAX_WING_KMS`).  Inside it the
flux is divided by the envelope, so the features there are the weak lines on the wing,
with their own depths; the strong line's core is measured on the undivided flux, as one
feature (:func:`core_slices`).
"""

from __future__ import annotations

import math

import numpy as np
from scipy import ndimage

from atlas.physics.constants import C_KMS

#: Species whose strong lines have wings taken into the continuum (H I, Ca II H and K and
#: the infrared triplet, Na I D, Mg I b: common practice).
STRONG_SPECIES = ("H I", "Ca II", "Na I", "Mg I")
#: A line of those species predicted deeper than this is strong (our choice).
STRONG_DEPTH = 0.5
#: Envelope length in line FWHMs (our choice: longer than a line, shorter than a wing).
ENVELOPE_FWHM = 8.0
#: The wing ends where the envelope comes within this of the continuum (our choice).
WING_LEVEL = 0.02
#: No wing is followed farther than this from its line (km/s; Balmer wings of A stars
#: reach some 2000 km/s: common practice).
MAX_WING_KMS = 2500.0
#: Half-width of the core region, in line FWHMs, searched on the undivided flux.
CORE_FWHM = 4.0


def strong_centres_A(predicted, rv_obs_kms: float) -> np.ndarray:
    """Observed vacuum wavelengths (Å) of the strong lines among the predicted ones."""
    if predicted is None or not len(predicted):
        return np.array([])
    sp = predicted["species"].astype(str)
    keep = sp.isin(STRONG_SPECIES).to_numpy() & (predicted["predicted_depth"].to_numpy() > STRONG_DEPTH)
    beta = rv_obs_kms / C_KMS
    return np.sort(predicted["vacuum_A"].to_numpy(dtype=np.float64)[keep] * math.sqrt((1 + beta) / (1 - beta)))


def divide_wings(wave_A, flux, sigma, centres_A, line_fwhm_kms: float):
    """(flux, sigma) with the strong lines' wings divided out, and the wing slices.

    ``wave_A`` sorted (Å), ``flux`` normalised (NaN where bad), ``sigma`` its noise
    (array); returns copies, changed only inside the wings, and a list of (a, b) index
    ranges that were changed.
    """
    w = np.asarray(wave_A, dtype=np.float64)
    f = np.array(flux, dtype=np.float64)
    s = np.array(np.broadcast_to(sigma, f.shape), dtype=np.float64)
    changed = []
    if not len(centres_A) or w.size < 10:
        return f, s, changed
    pix_kms = float(np.median(np.diff(np.log(w)))) * C_KMS
    line_pix = max(line_fwhm_kms / pix_kms, 1.0)
    k = max(3, int(round(ENVELOPE_FWHM * line_pix)))
    half = int(MAX_WING_KMS / pix_kms)
    for c in centres_A:
        i = int(np.searchsorted(w, c))
        a, b = max(0, i - half), min(w.size, i + half)
        if b - a < 3 * k:
            continue
        seg = f[a:b]
        good = np.isfinite(seg)
        if good.sum() < 3 * k:
            continue
        filled = np.where(good, seg, np.interp(np.arange(seg.size), np.flatnonzero(good), seg[good]))
        smooth = ndimage.gaussian_filter1d(filled, line_pix / 2.3548)
        env = ndimage.uniform_filter1d(ndimage.maximum_filter1d(smooth, k), k)
        env = np.minimum(env, 1.0)
        low = env < 1.0 - WING_LEVEL
        j = min(max(i - a, 0), seg.size - 1)
        if not low[j]:
            continue
        lo = j - int(np.argmin(low[j::-1])) if not low[: j + 1].all() else 0
        hi = j + int(np.argmin(low[j:])) if not low[j:].all() else seg.size
        sl = slice(a + lo, a + hi)
        f[sl] = f[sl] / env[lo:hi]
        s[sl] = s[sl] / env[lo:hi]
        changed.append((a + lo, a + hi))
    return f, s, changed


def core_slices(wave_A, centres_A, line_fwhm_kms: float):
    """Index ranges (a, b) of the strong lines' cores (:data:`CORE_FWHM` line FWHMs each side)."""
    w = np.asarray(wave_A, dtype=np.float64)
    reach = CORE_FWHM * line_fwhm_kms / C_KMS
    out = []
    for c in centres_A:
        a, b = np.searchsorted(w, [c * (1 - reach), c * (1 + reach)])
        if b > a:
            out.append((int(a), int(b)))
    return out
