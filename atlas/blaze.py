"""Continua of echelle orders fitted together: one smooth star continuum times a blaze shape
shared between neighbouring orders.

Each order's continuum is modelled in ln(flux) as

    ln C_o(lambda) = s(ln lambda) + b(u, o)

with ``s`` a cubic B-spline in ln(wavelength) common to all orders (the star's continuum
times the instrument's throughput, smooth over ``star_knot_kms``) and ``b`` a tensor-product
cubic B-spline in the position ``u`` (0..1) along the order and the order's index ``o``
(the blaze, whose shape changes slowly from order to order, ``orders_per_knot``).  Because
``s`` is one curve for all orders, two orders that overlap must agree on the star's
continuum where they overlap (their ratio there is the ratio of their blazes alone, lines
and all cancel), and because ``b`` is shared, an order filled by a broad line (a Balmer
line of a hot star) takes its blaze from its neighbours and its continuum level from the
neighbours' overlap with it.  The fit is weighted least squares on bin medians of
ln(flux) (bins of ``bin_kms``, weights sqrt(F / F_max of the order), as for a single order
in :mod:`atlas.continuum`), with a small second-difference penalty, and bins more than
``low_sigma`` below or ``high_sigma`` above the fit (in units of the robust scatter of the
photon-weighted residual) are left out in turn until the kept set settles: the upper
envelope, common practice for absorption-line stars.

References
----------
Eilers, P. H. C. & Marx, B. D. (1996), Statistical Science 11, 89 (penalised B-splines);
Eilers, P. H. C. & Marx, B. D. (2003), Chemometrics and Intelligent Laboratory Systems 66,
159 (tensor-product penalised splines).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
from scipy.interpolate import BSpline

from atlas.continuum import ContinuumSettings, _bin_medians
from atlas.physics.constants import C_KMS


@dataclass(frozen=True)
class BlazeSettings:
    """Knobs of the joint fit (our choices, measured on the demo echelle star, see DEVELOPERS.md).

    star_knot_kms [25000]: knot spacing of the common star continuum (km/s); wider than a
        Balmer line's wings so the line cannot pull it down.
    u_intervals [12]: knot intervals of the blaze along an order.
    orders_per_knot [6]: orders per knot interval of the blaze across orders.
    penalty [1e-4]: second-difference penalty relative to the mean data weight.
    """

    star_knot_kms: float = 25000.0
    u_intervals: int = 12
    orders_per_knot: float = 6.0
    penalty: float = 1e-4


#: The clipping scatter is at least this (ln flux at an order's peak): noise-free or
#: nearly noise-free orders are not clipped down to a few bins (our choice: 0.1 %).
SIGMA_FLOOR = 1e-3


def _basis(x, lo, hi, n_int):
    """Dense cubic B-spline design matrix on ``n_int`` equal intervals of [lo, hi]."""
    inner = np.linspace(lo, hi, n_int + 1)
    t = np.concatenate([[lo] * 3, inner, [hi] * 3])
    return BSpline.design_matrix(np.clip(x, lo, hi), t, 3).toarray()


def _second_diff(k):
    return np.diff(np.eye(k), 2, axis=0) if k > 2 else np.zeros((0, k))


class _Model:
    """The design of ``s(ln lambda) + b(u, o)`` for a set of orders."""

    def __init__(self, lnw_lo, lnw_hi, n_orders, s: BlazeSettings):
        self.lo, self.hi, self.n_orders = lnw_lo, lnw_hi, n_orders
        self.ns = max(1, math.ceil((lnw_hi - lnw_lo) * C_KMS / s.star_knot_kms))
        self.nu = max(1, int(s.u_intervals))
        self.no = max(1, math.ceil((n_orders - 1) / s.orders_per_knot)) if n_orders > 1 else 1
        self.ks, self.ku, self.ko = self.ns + 3, self.nu + 3, self.no + 3

    def design(self, lnw, u, o):
        S = _basis(lnw, self.lo, self.hi, self.ns)
        U = _basis(u, 0.0, 1.0, self.nu)
        Bo = _basis(o, 0.0, max(self.n_orders - 1, 1), self.no)
        T = (U[:, :, None] * Bo[:, None, :]).reshape(u.size, -1)
        return np.hstack([S, T])

    def penalty(self):
        """Second differences of s, and of b along u and along o."""
        ks, ku, ko = self.ks, self.ku, self.ko
        rows = [np.hstack([_second_diff(ks), np.zeros((max(ks - 2, 0), ku * ko))])]
        Du, Do = _second_diff(ku), _second_diff(ko)
        rows.append(np.hstack([np.zeros((Du.shape[0] * ko, ks)), np.kron(Du, np.eye(ko))]))
        rows.append(np.hstack([np.zeros((Do.shape[0] * ku, ks)), np.kron(np.eye(ku), Do)]))
        return np.vstack(rows)


def _order_bins(lnw, flux, bad, bin_kms):
    """Bin medians (x = ln lambda, y = ln flux, u) of one sorted order; bins <= 0 dropped."""
    n = lnw.size
    step = float(np.median(np.diff(lnw))) * C_KMS if n > 1 else bin_kms
    nb = int(max(1, round(bin_kms / step))) if step > 0 else 1
    xb, yb = _bin_medians(lnw, flux, bad, nb)
    ok = np.isfinite(xb) & np.isfinite(yb) & (yb > 0)
    span = lnw[-1] - lnw[0] if n > 1 else 1.0
    return xb[ok], np.log(yb[ok]), (xb[ok] - lnw[0]) / span, nb


def fit_orders(orders, settings: ContinuumSettings | None = None, blaze: BlazeSettings | None = None):
    """Continua of echelle orders fitted jointly; ``orders`` a list of (wave_A, flux, bad) per order.

    Each order's wavelengths (Å) must be sorted; ``bad`` (True = bad) may be None.  The
    orders are taken in the order given (by wavelength), which is the order axis ``o`` of
    the shared blaze.  Returns a list of continua (same unit as flux), one per order.

    References
    ----------
    Eilers & Marx (1996, 2003): penalised and tensor-product B-splines.
    """
    s = settings or ContinuumSettings()
    bs = blaze or BlazeSettings()
    n_orders = len(orders)
    lnws = [np.log(np.asarray(w, dtype=np.float64)) for w, _, _ in orders]
    lo = min(x[0] for x in lnws if x.size)
    hi = max(x[-1] for x in lnws if x.size)
    xs, ys, us, os_, ws = [], [], [], [], []
    for i, ((_, f, bad), lnw) in enumerate(zip(orders, lnws, strict=True)):
        if lnw.size < 8:
            continue
        f = np.asarray(f, dtype=np.float64)
        xb, yb, ub, _ = _order_bins(lnw, f, None if bad is None else np.asarray(bad, dtype=bool), s.bin_kms)
        if yb.size == 0:
            continue
        xs.append(xb), ys.append(yb), us.append(ub), os_.append(np.full(xb.size, float(i)))
        ws.append(np.exp(0.5 * (yb - yb.max())))
    model = _Model(lo, hi, n_orders, bs)
    if not xs:
        return [np.full(x.size, np.nan) for x in lnws]
    x, y, u, o, w = (np.concatenate(a) for a in (xs, ys, us, os_, ws))
    A = model.design(x, u, o)
    P = model.penalty()
    # photon-weighted residual: ln F of a bin of F counts scatters as 1 / sqrt(F)
    zscale = np.concatenate([np.exp(0.5 * (v - v.max())) for v in ys])
    keep = np.ones(y.size, dtype=bool)
    coef = np.zeros(A.shape[1])
    for _ in range(max(1, s.max_iter)):
        coef = _solve(A[keep], y[keep], w[keep], P, bs.penalty)
        r = y - A @ coef
        z = r * zscale
        zk = z[keep]
        sigma = max(1.4826 * np.median(np.abs(zk - np.median(zk))), SIGMA_FLOOR)
        new = (z >= -s.low_sigma * sigma) & (z <= s.high_sigma * sigma)
        if np.count_nonzero(new) < A.shape[1] or np.array_equal(new, keep):
            break
        keep = new
    out = []
    for i, lnw in enumerate(lnws):
        if lnw.size == 0:
            out.append(np.empty(0))
            continue
        span = lnw[-1] - lnw[0] if lnw.size > 1 else 1.0
        # evaluate on at most 256 points per order and interpolate (the curve is smooth)
        xe = np.linspace(lnw[0], lnw[-1], min(lnw.size, 256))
        ce = model.design(xe, (xe - lnw[0]) / span, np.full(xe.size, float(i))) @ coef
        out.append(np.exp(np.interp(lnw, xe, ce)))
    return out


def _solve(A, y, w, P, lam):
    """argmin sum w (y - A c)^2 + lam * mean(w) * |P c|^2 + a tiny ridge (the s/b degeneracy)."""
    Aw = A * w[:, None]
    N = Aw.T @ A
    scale = max(float(np.mean(np.diag(N))), 1e-300)
    N += lam * scale * (P.T @ P) + 1e-8 * scale * np.eye(A.shape[1])
    return np.linalg.solve(N, Aw.T @ y)
