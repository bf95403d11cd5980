"""Comparing two spectra: a common grid, their difference, and which lines grow or fade.

Plain numpy (no panel, no bokeh).  The depth of a line is ``1 - F_min / F_c`` measured
on continuum-normalised flux (``F_c`` = 1), the minimum taken within a small window
around the line's expected position (common practice for a quick line-depth reading).
A line "grows" from the first star to the second when its depth is larger in the
second by more than ``threshold``, and "fades" when it is smaller by as much.
"""

from __future__ import annotations

import numpy as np

from atlas.physics.constants import C_KMS


def common_grid(xa, ya, xb, yb, n: int) -> dict:
    """Both spectra interpolated onto ``n`` points across the stretch they share.

    ``xa``/``xb`` increasing (NaN gaps allowed, they interpolate to NaN); returns
    ``x``, ``a``, ``b`` and ``diff`` = b - a (float32), empty when they do not overlap.
    """
    xa, ya = np.asarray(xa, np.float64), np.asarray(ya, np.float64)
    xb, yb = np.asarray(xb, np.float64), np.asarray(yb, np.float64)
    ga, gb = np.isfinite(xa), np.isfinite(xb)
    xa, ya, xb, yb = xa[ga], ya[ga], xb[gb], yb[gb]
    empty = {k: np.zeros(0, np.float32) for k in ("x", "a", "b", "diff")}
    if len(xa) < 2 or len(xb) < 2 or n < 2:
        return empty
    lo, hi = max(xa[0], xb[0]), min(xa[-1], xb[-1])
    if not hi > lo:
        return empty
    x = np.linspace(lo, hi, int(n))
    a = np.interp(x, xa, ya)
    b = np.interp(x, xb, yb)
    return {"x": x.astype(np.float32), "a": a.astype(np.float32), "b": b.astype(np.float32),
            "diff": (b - a).astype(np.float32)}


def line_depths(x, y, centres, half_width, cont_half_width=None) -> np.ndarray:
    """Depth ``1 - min(y) / F_c`` within ``centres ± half_width`` (same units as ``x``;
    widths scalar or per line); NaN where no finite sample.

    ``F_c`` is 1 (normalised flux), or with ``cont_half_width`` the 95th percentile of
    ``y`` within ``centres ± cont_half_width``: a local pseudo-continuum, so that a
    line inside a broad depression (molecular bands, a wide hydrogen wing) is read
    against its surroundings (common practice).
    """
    x, y = np.asarray(x, np.float64), np.asarray(y, np.float64)
    c = np.asarray(centres, np.float64)
    h = np.broadcast_to(np.asarray(half_width, np.float64), c.shape)
    good = np.isfinite(x) & np.isfinite(y)
    x, y = x[good], y[good]
    order = np.argsort(x, kind="stable")
    x, y = x[order], y[order]
    out = np.full(c.shape, np.nan)
    i0 = np.searchsorted(x, c - h, side="left")
    i1 = np.searchsorted(x, c + h, side="right")
    if cont_half_width is not None:
        w = np.broadcast_to(np.asarray(cont_half_width, np.float64), c.shape)
        j0 = np.searchsorted(x, c - w, side="left")
        j1 = np.searchsorted(x, c + w, side="right")
    for k in range(c.size):
        if i1[k] > i0[k]:
            fc = 1.0
            if cont_half_width is not None and j1[k] > j0[k]:
                fc = float(np.percentile(y[j0[k]:j1[k]], 95))
            out[k] = 1.0 - float(np.min(y[i0[k]:i1[k]])) / fc if fc > 0 else np.nan
    return out


def depth_half_width(centres, spacing, kms: float = 6.0) -> np.ndarray:
    """Window half-width for a depth reading: ``kms`` of velocity, at least 1.5 points."""
    c = np.asarray(centres, np.float64)
    return np.maximum(c * kms / C_KMS, 1.5 * float(spacing))


def change(depth_a, depth_b, threshold: float = 0.03) -> np.ndarray:
    """+1 where a line grows from the first spectrum to the second, -1 where it fades,
    0 where the change is within ``threshold`` or unknown."""
    d = np.asarray(depth_b, np.float64) - np.asarray(depth_a, np.float64)
    out = np.zeros(d.shape, int)
    out[np.isfinite(d) & (d > threshold)] = 1
    out[np.isfinite(d) & (d < -threshold)] = -1
    return out
