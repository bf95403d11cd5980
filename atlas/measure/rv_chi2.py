"""Chi-square of a shifted template times a polynomial, chunk by chunk, for many shifts.

The model of chunk c is ``T(x - dx) * P_c(u)`` (``u`` the chunk's position, -1..1); it is
linear in the polynomial's coefficients, so each trial shift's chi-square is exact (the
normal equations per chunk, summed with ``np.add.reduceat``).

References
----------
Press et al. (2007), Numerical Recipes, 3rd ed., sec. 15.4 (general linear least squares)
and 15.6 (confidence from delta chi-square).
"""

from __future__ import annotations

import math

import numpy as np


class ChunkFitter:
    """Chi-square of ``template(x - dx) * polynomial`` per chunk, for many shifts."""

    def __init__(self, chunks, degree):
        self.chunks = chunks
        self.degree = degree
        self.x = np.concatenate([c[0] for c in chunks])
        self.d = np.concatenate([c[1] for c in chunks])
        self.iv = np.concatenate([c[2] for c in chunks])
        sizes = np.array([c[0].size for c in chunks])
        self.starts = np.concatenate([[0], np.cumsum(sizes)[:-1]])
        self.u = np.concatenate([(c[0] - 0.5 * (c[0][0] + c[0][-1])) / max(0.5 * (c[0][-1] - c[0][0]), 1e-12)
                                 for c in chunks])
        self.nch = len(chunks)
        self.lo_A = np.array([math.exp(c[0][0]) for c in chunks])
        self.hi_A = np.array([math.exp(c[0][-1]) for c in chunks])
        self.cdd = np.add.reduceat(self.iv * self.d**2, self.starts)
        self.npts = np.add.reduceat((self.iv > 0).astype(float), self.starts)
        self.ivu = [self.iv * self.u**k for k in range(2 * degree + 1)]
        self.ivdu = [self.iv * self.d * self.u**k for k in range(degree + 1)]

    def coarser(self, factor: int) -> ChunkFitter:
        """The same data binned by ``factor`` within each chunk: for quick searches."""
        out = []
        for x, d, iv in self.chunks:
            n = x.size // factor * factor
            if n < 10 * factor:
                return self
            ivr = iv[:n].reshape(-1, factor)
            den = ivr.sum(axis=1)
            with np.errstate(invalid="ignore", divide="ignore"):
                dd = np.where(den > 0, (ivr * d[:n].reshape(-1, factor)).sum(axis=1) / den, 0.0)
            out.append((x[:n].reshape(-1, factor).mean(axis=1), dd, den))
        return ChunkFitter(out, self.degree)

    def chi2(self, tx, t, dx):
        """Per-chunk chi-square (nch,) of the best polynomial times ``t`` shifted by ``dx``."""
        tt = np.interp(self.x - dx, tx, t)
        t2 = tt * tt
        p = self.degree + 1
        m = [np.add.reduceat(t2 * ivu, self.starts) for ivu in self.ivu]
        r = [np.add.reduceat(tt * ivdu, self.starts) for ivdu in self.ivdu]
        a = np.empty((self.nch, p, p))
        for i in range(p):
            for j in range(p):
                a[:, i, j] = m[i + j]
        rhs = np.stack(r, axis=1)
        # a tiny ridge keeps empty chunks solvable (they add nothing)
        a += 1e-12 * (np.trace(a, axis1=1, axis2=2)[:, None, None] + 1e-30) * np.eye(p)
        sol = np.linalg.solve(a, rhs[:, :, None])[:, :, 0]
        return self.cdd - np.einsum("ki,ki->k", sol, rhs)


def parabola_min(v, c2):
    """(v_min, curvature a) of a parabola fitted to the lowest points of c2(v), or None."""
    i = int(np.argmin(c2))
    if i < 2 or i > v.size - 3:
        return None
    sl = slice(i - 2, i + 3)
    a, b, _ = np.polyfit(v[sl] - v[i], c2[sl], 2)
    if not a > 0:
        return None
    vm = v[i] - b / (2 * a)
    if abs(vm - v[i]) > 2 * abs(v[1] - v[0]):
        return None
    return float(vm), float(a)
