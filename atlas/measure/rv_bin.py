"""The spectrum as the template fit sees it: binned normalised flux on ln(lambda) chunks.

:func:`bin_spectrum` bins the flux (inverse-variance means) onto vacuum ln(wavelength)
grids, telluric band regions (:func:`telluric_regions_A`) left out, and cuts it into
chunks that each get their own continuum polynomial in :mod:`atlas.measure.rv_template`.
"""

from __future__ import annotations

import math

import numpy as np

from atlas.measure.rv_input import der_noise, normalise
from atlas.physics.constants import C_KMS

#: Wavelength range (Å, vacuum) the template fit uses: where the class templates have
#: their H I, He I, He II and metal lines (the shipped list's optical range; our choice).
FIT_RANGE_A = (3600.0, 10_000.0)


def telluric_regions_A(lines, medium: str = "vacuum") -> list[tuple[float, float]]:
    """Telluric band regions (start, end) in Å of the line list's ``medium`` column.

    The list gives each band as two ``telluric`` rows whose ``source`` ends in
    ``band start`` and ``band end`` (see DEVELOPERS, line list); rows are paired per
    species in wavelength order.
    """
    if lines is None or "source" not in lines:
        return []
    col = "vacuum_A" if medium == "vacuum" else "air_A"
    tell = lines["telluric"].astype(str).str.lower().isin(["true", "1"]) | (
        lines["kind"].astype(str) == "telluric")
    df = lines[tell].sort_values(col)
    out = []
    open_at: dict[str, float] = {}
    for sp, w, src in zip(df["species"].astype(str), df[col].astype(float),
                          df["source"].astype(str), strict=True):
        s = src.lower()
        if "band start" in s:
            open_at[sp] = w
        elif "band end" in s and sp in open_at:
            out.append((open_at.pop(sp), w))
    return sorted(out)


def _bin_row(w, f, s, bad, medium, step_kms, bands, x0, dln, n):
    """Inverse-variance binned sums (num, den) of one sorted row onto a ln(lambda) grid."""
    from atlas.physics.airvac import air_to_vacuum_A

    num = np.zeros(n)
    den = np.zeros(n)
    piece = 500_000
    for a in range(0, w.size, piece):
        sl = slice(a, a + piece)
        fn, bb = f[sl], bad[sl].copy()
        wv = w[sl] if medium == "vacuum" else air_to_vacuum_A(w[sl])
        for lo, hi in bands:
            i0, i1 = np.searchsorted(wv, [lo, hi])
            bb[i0:i1] = True
        if s is not None:
            sg = s[sl]
        else:
            sg = np.empty(fn.size)
            for j in range(0, fn.size, 2000):
                blk = fn[j : j + 2000][~bb[j : j + 2000]]
                sg[j : j + 2000] = der_noise(blk) if blk.size >= 20 else np.nan
        bb |= ~np.isfinite(sg) | ~(sg > 0) | ~np.isfinite(fn)
        if bb.all():
            continue
        idx = np.rint((np.log(wv[~bb]) - x0) / dln).astype(np.int64)
        ok = (idx >= 0) & (idx < n)
        iv = 1.0 / sg[~bb] ** 2
        num += np.bincount(idx[ok], weights=(fn[~bb] * iv)[ok], minlength=n)
        den += np.bincount(idx[ok], weights=iv[ok], minlength=n)
    return num, den




def bin_spectrum(wave_A, flux, uncertainty, mask, continuum, medium, step_kms, bands, chunk_kms):
    """Chunks of binned flux on vacuum ln(lambda) grids: list of (x, value, ivar).

    1-D: the normalised flux ``F/C`` (continuum given or fitted), one grid cut into
    chunks ``chunk_kms`` long.  2-D echelle orders: each order is one chunk of raw flux
    over its median (its blaze is left to the chunk's polynomial, since broad lines can be
    wider than an order and an order-by-order continuum would flatten them).  Works one
    row and at most 500,000 samples at a time, so memory stays bounded.
    """
    from atlas.physics.airvac import air_to_vacuum_A

    wave = np.asarray(wave_A)
    two_d = wave.ndim == 2
    rows = wave.shape[0] if two_d else 1
    dln = math.log1p(step_kms / C_KMS)
    chunks = []
    for k in range(rows):
        w_row = wave[k] if two_d else wave
        o = np.argsort(w_row, kind="stable") if np.any(np.diff(w_row) < 0) else slice(None)
        w = np.asarray(w_row[o], dtype=np.float64)
        # a copy (never a view of the caller's array: it is divided in place below)
        f = np.array((flux[k] if two_d else flux)[o], dtype=np.float64)
        bad = ~np.isfinite(f) | ~np.isfinite(w) | (w <= 0)
        if mask is not None:
            bad |= np.asarray((mask[k] if two_d else mask)[o], dtype=bool)
        bad |= (w < FIT_RANGE_A[0]) | (w > FIT_RANGE_A[1])
        if (~bad).sum() < 20:
            continue
        if two_d:
            c = np.full(f.size, float(np.median(f[~bad])))
        elif continuum is not None:
            c = np.asarray(continuum[o], dtype=np.float64)
        else:
            c = normalise(w, f, bad)
        with np.errstate(invalid="ignore", divide="ignore"):
            f /= c
            bad |= ~(c > 0) | (f < -0.2) | (f > (50.0 if two_d else 2.0))
            s = None
            if uncertainty is not None:
                s = np.asarray((uncertainty[k] if two_d else uncertainty)[o], dtype=np.float64) / np.abs(c)
        del c
        good_i = np.flatnonzero(~bad)
        lo, hi = float(w[good_i[0]]), float(w[good_i[-1]])
        if medium != "vacuum":
            lo, hi = (float(v) for v in air_to_vacuum_A(np.array([lo, hi])))
        x0 = math.log(lo) - dln
        n = int((math.log(hi) - x0) / dln) + 3
        num, den = _bin_row(w, f, s, bad, medium, step_kms, bands, x0, dln, n)
        with np.errstate(invalid="ignore", divide="ignore"):
            val = np.where(den > 0, num / den, 0.0)
        x = x0 + dln * np.arange(n)
        if two_d:
            pieces = 1
        else:
            pieces = max(1, int(round((x[-1] - x[0]) * C_KMS / chunk_kms)))
        for idx in np.array_split(np.arange(n), pieces):
            if np.count_nonzero(den[idx]) >= 20:
                chunks.append((x[idx], val[idx], den[idx]))
    return chunks
