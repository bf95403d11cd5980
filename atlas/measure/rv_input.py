"""The inputs of a line-mask velocity: noise, continuum, the mask, normalised strips.

:func:`der_noise` (DER_SNR noise), :func:`normalise` (the build's continuum),
:func:`line_mask` (positions and weights of the lines used) and :func:`segments` (the
spectrum cut into strips or orders of line depth ``1 - F/C`` with inverse variances).

References
----------
Stoehr et al. (2008), ASP Conf. Ser. 394, 505 (DER_SNR noise estimate).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np

from atlas.physics.constants import C_KMS

#: Initial mask weight per line-list strength class (1 strongest .. 4 weak); only the
#: coarse search uses it, the fine search fits each line's depth.  `common practice`.
STRENGTH_WEIGHT = {1: 1.0, 2: 0.7, 3: 0.45, 4: 0.25}

def der_noise(flux) -> float:
    """Noise sigma of a flux array from second differences (DER_SNR estimator).

    References
    ----------
    Stoehr et al. (2008), ASP Conf. Ser. 394, 505: sigma = 1.482602 / sqrt(6) *
    median(|2 f_i - f_(i-2) - f_(i+2)|).
    """
    f = np.asarray(flux, dtype=np.float64)
    f = f[np.isfinite(f)]
    if f.size < 5:
        return float("nan")
    d = np.abs(2.0 * f[2:-2] - f[:-4] - f[4:])
    return float(1.482602 / math.sqrt(6.0) * np.median(d))


def normalise(wave_A, flux, mask=None, *, order: bool = False):
    """Continuum (flux units) of a 1-D spectrum with sorted wavelengths (Å).

    The build's continuum, :func:`atlas.continuum.fit_continuum` (a penalised B-spline
    with asymmetric clipping, Eilers & Marx 1996), so measurements and the atlas agree.
    ``order=True`` is for one echelle order: knots every eighth of its length, so the
    blaze is followed.
    """
    from atlas.continuum import ContinuumSettings, fit_continuum

    w = np.asarray(wave_A, dtype=np.float64)
    settings = None
    if order:
        good = np.isfinite(w) & (w > 0)
        span_kms = float(np.log(w[good].max() / w[good].min())) * C_KMS if good.sum() > 1 else 0.0
        if span_kms > 0:
            settings = ContinuumSettings(knot_kms=max(span_kms / 8.0, 50.0),
                                         bin_kms=max(min(20.0, span_kms / 100.0), 1.0))
    return fit_continuum(w, flux, mask, settings=settings, blaze=order)


def line_mask(lines, medium: str = "vacuum"):
    """Positions (Å, in ``medium``) and initial weights of the lines used for RV.

    ``lines`` is the line-list DataFrame of :func:`atlas.lines.load_lines`; telluric
    lines, molecular band heads and hydrogen lines are left out (`common practice`:
    they do not move with the star, are not single lines, or are far broader).  ``medium`` ``air`` (or ``unknown``) uses
    the ``air_A`` column, ``vacuum`` the ``vacuum_A`` column.
    """
    df = lines
    keep = np.ones(len(df), dtype=bool)
    if "kind" in df:
        keep &= df["kind"].astype(str).str.lower().eq("atomic").to_numpy()
    if "species" in df:
        # hydrogen lines are far wider than the metal lines (Stark wings) and would drag
        # the common line width of the template: left out (common practice for masks)
        keep &= ~df["species"].astype(str).str.strip().eq("H I").to_numpy()
    if "telluric" in df:
        keep &= ~df["telluric"].astype(str).str.lower().isin(["true", "1", "yes"]).to_numpy()
    col = "vacuum_A" if medium == "vacuum" else "air_A"
    wave = df[col].to_numpy(dtype=np.float64)[keep]
    strength = df["strength"].to_numpy()[keep] if "strength" in df else np.full(keep.sum(), 2)
    weight = np.array([STRENGTH_WEIGHT.get(int(s), 0.25) for s in strength], dtype=np.float64)
    good = np.isfinite(wave) & (wave > 0)
    return wave[good], weight[good]


@dataclass
class Segment:
    """One strip of normalised line depth on a ln(wavelength) axis."""

    x: np.ndarray  # ln wavelength (sorted)
    d: np.ndarray  # line depth 1 - F/C (0 where masked)
    ivar: np.ndarray  # 1 / sigma^2 of d (0 where masked)
    lo_A: float
    hi_A: float


def segments(wave_A, flux, uncertainty, mask, continuum, normalised, n_strips):
    """Split the spectrum into strips (1-D) or orders (2-D) of normalised depth."""
    wave = np.atleast_2d(np.asarray(wave_A, dtype=np.float64))
    flux = np.atleast_2d(np.asarray(flux, dtype=np.float64))
    if wave.shape != flux.shape:
        raise ValueError("wavelength and flux arrays differ in shape")
    unc = None if uncertainty is None else np.atleast_2d(np.asarray(uncertainty, dtype=np.float64))
    bad = np.zeros(flux.shape, dtype=bool) if mask is None else np.atleast_2d(np.asarray(mask, bool))
    cont = None if continuum is None else np.atleast_2d(np.asarray(continuum, dtype=np.float64))
    pieces = []
    for k in range(flux.shape[0]):
        w, f = wave[k], flux[k]
        order = np.argsort(w, kind="stable")
        w, f = w[order], f[order]
        b = bad[k][order] | ~np.isfinite(f) | ~np.isfinite(w) | (w <= 0)
        if normalised:
            c = np.ones_like(f)
        elif cont is not None:
            c = cont[k][order]
        else:
            c = normalise(w, f, b, order=flux.shape[0] > 1)
        with np.errstate(invalid="ignore", divide="ignore"):
            fn = f / c
            sn = None if unc is None else unc[k][order] / np.abs(c)
        # where the continuum failed (order ends, blaze edges) the ratio is absurd: masked
        b |= ~np.isfinite(fn) | (c <= 0) | (fn < -0.2) | (fn > 2.0)
        if sn is not None:
            b |= ~np.isfinite(sn) | (sn <= 0)
        pieces.append((w, fn, sn, b))
    segs = []
    one_d = flux.shape[0] == 1
    for w, fn, sn, b in pieces:
        if (~b).sum() < 20:
            continue
        x = np.log(np.where(w > 0, w, 1.0))
        if one_d:
            n = n_strips or max(1, min(24, int((~b).sum() // 8000)))
            edges = np.linspace(x[~b].min(), x[~b].max(), n + 1)
            cuts = np.searchsorted(x, edges[1:-1])
            bounds = np.concatenate([[0], cuts, [x.size]])
        else:
            bounds = np.array([0, x.size])
        for a, z in zip(bounds[:-1], bounds[1:], strict=True):
            sl = slice(a, z)
            bb = b[sl]
            if (~bb).sum() < 20:
                continue
            fs = fn[sl]
            if sn is None:
                # noise from the data itself, in blocks of 2000 samples
                s = np.empty(z - a)
                for j in range(0, z - a, 2000):
                    blk = fs[j : j + 2000][~bb[j : j + 2000]]
                    s[j : j + 2000] = der_noise(blk) if blk.size >= 20 else np.nan
                s = np.where(np.isfinite(s) & (s > 0), s, np.nanmedian(s))
            else:
                s = sn[sl]
            d = np.where(bb, 0.0, 1.0 - fs)
            with np.errstate(divide="ignore", invalid="ignore"):
                ivar = np.where(bb | ~np.isfinite(s) | (s <= 0), 0.0, 1.0 / s**2)
            d = np.where(np.isfinite(d), d, 0.0)
            segs.append(Segment(x[sl], d, ivar, float(w[sl][0]), float(w[sl][-1])))
    return segs
