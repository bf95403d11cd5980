"""Echelle orders merged into one 1-D spectrum, weighted by their blaze.

Each wavelength of the merged spectrum is a sample of exactly one order: order ``o``
gives its own samples between the middles (in ln wavelength) of its overlaps with the
orders before and after it, so no sample is taken twice and the pieces join without a
gap.  Every other order that covers such a sample adds its flux, uncertainty and
continuum there, interpolated linearly to the sample's wavelength (masked or
non-finite samples add nothing).  The merged flux is the sum of the orders' fluxes and
the merged continuum the sum of their continua (their blaze times the star's continuum),
so the merged normalised flux is the mean of the orders' normalised fluxes weighted by
their continua:

    sum_i F_i / sum_i C_i = sum_i C_i (F_i / C_i) / sum_i C_i,

which for photon noise (variance of F_i / C_i about 1 / C_i) is the inverse-variance
weighted mean (common practice).  Uncertainties add in quadrature.
"""

from __future__ import annotations

import numpy as np


def _boundaries(starts, stops):
    """ln-wavelength boundaries between consecutive orders (sorted by start)."""
    cuts = [-np.inf]
    for o in range(len(starts) - 1):
        a, b = starts[o + 1], stops[o]
        cuts.append(0.5 * (a + b) if b > a else b)  # the overlap's middle, or the gap
    cuts.append(np.inf)
    return np.maximum.accumulate(np.array(cuts))  # never backwards: no sample twice


def merge_orders(orders):
    """One 1-D spectrum from orders, each a dict of sorted 1-D arrays ``wavelength`` (Å),
    ``flux``, ``continuum``, ``mask`` (True = bad) and optionally ``uncertainty``.

    Orders must be given sorted by their first wavelength.  Returns a dict of the same
    keys (``uncertainty`` None when any order lacks it) and ``order`` (int32, which
    order gave each sample's wavelength).
    """
    lnw = [np.log(np.asarray(o["wavelength"], dtype=np.float64)) for o in orders]
    has_unc = all(o.get("uncertainty") is not None for o in orders)
    cuts = _boundaries([x[0] for x in lnw], [x[-1] for x in lnw])
    pieces = []
    for k, x in enumerate(lnw):
        a, b = np.searchsorted(x, [cuts[k], cuts[k + 1]], side="left")
        pieces.append((k, a, b))
    out_w = np.concatenate([orders[k]["wavelength"][a:b] for k, a, b in pieces])
    out_o = np.concatenate([np.full(b - a, k, dtype=np.int32) for k, a, b in pieces])
    ln_out = np.log(out_w)
    flux = np.zeros(out_w.size)
    cont = np.zeros(out_w.size)
    var = np.zeros(out_w.size)
    used = np.zeros(out_w.size, dtype=bool)
    for k, x in enumerate(lnw):
        o = orders[k]
        f = np.asarray(o["flux"], dtype=np.float64)
        c = np.asarray(o["continuum"], dtype=np.float64)
        good = ~np.asarray(o["mask"], dtype=bool) & np.isfinite(f) & np.isfinite(c)
        u = np.asarray(o["uncertainty"], dtype=np.float64) if has_unc else None
        if u is not None:
            good &= np.isfinite(u)
        lo = int(np.searchsorted(ln_out, x[0], side="left"))
        hi = int(np.searchsorted(ln_out, x[-1], side="right"))
        if hi <= lo:
            continue
        t = ln_out[lo:hi]
        j = np.clip(np.searchsorted(x, t, side="right") - 1, 0, x.size - 2) if x.size > 1 else np.zeros(t.size, int)
        if x.size > 1:
            frac = np.clip((t - x[j]) / (x[j + 1] - x[j]), 0.0, 1.0)
            ok = good[j] & good[j + 1]
            exact = frac == 0.0  # on a sample of this order: only that sample must be good
            ok = np.where(exact, good[j], ok)
            jn = j + 1
        else:
            frac, ok, jn = np.zeros(t.size), good[j], j
        fi = f[j] * (1 - frac) + f[jn] * frac
        ci = c[j] * (1 - frac) + c[jn] * frac
        sl = slice(lo, hi)
        flux[sl] += np.where(ok, fi, 0.0)
        cont[sl] += np.where(ok, ci, 0.0)
        if u is not None:
            ui = u[j] * (1 - frac) + u[jn] * frac
            var[sl] += np.where(ok, ui * ui, 0.0)
        used[sl] |= ok
    result = {
        "wavelength": out_w,
        "flux": np.where(used, flux, np.nan),
        "continuum": np.where(used, cont, np.nan),
        "mask": ~used,
        "uncertainty": np.where(used, np.sqrt(var), np.nan) if has_unc else None,
        "order": out_o,
    }
    return result
