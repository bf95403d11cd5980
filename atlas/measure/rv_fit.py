"""The matched-template fit of a line-mask velocity, strip by strip.

In one strip of line depth (:class:`atlas.measure.rv_input.Segment`) the listed lines are
Gaussians of one common width; their depths (non-negative least squares), the width and
the shift are fitted jointly (:func:`solve_strip`), and the shift's error is the
photon-noise limit of that fitted template.  :func:`photon_limit_kms` gives the same limit
for any noise-free model.

References
----------
Bouchy, Pepe & Queloz (2001), A&A 374, 733 (photon-noise limit of a radial velocity).
"""

from __future__ import annotations

import math

import numpy as np
from scipy import sparse
from scipy.sparse.linalg import spsolve

from atlas.measure.rv_input import Segment
from atlas.physics.constants import C_KMS


def _windows(x, centres, half):
    """Index windows (n, 2*half+1) around the samples nearest ``centres``, clipped."""
    i0 = np.searchsorted(x, centres)
    idx = i0[:, None] + np.arange(-half, half + 1)[None, :]
    valid = (idx >= 0) & (idx < x.size)
    return np.clip(idx, 0, x.size - 1), valid


def _fit_depths(sg, xl, sigma_x, dx0):
    """Least-squares depths of Gaussian lines at ``xl + dx0`` in one segment.

    Weighted normal equations (sparse, banded) solved directly; lines that come out
    negative are dropped and the rest solved again, so every depth is >= 0.
    """
    step = np.median(np.diff(sg.x))
    half = int(math.ceil(4.0 * sigma_x / step)) + 1
    idx, valid = _windows(sg.x, xl + dx0, half)
    g = np.exp(-0.5 * ((sg.x[idx] - (xl + dx0)[:, None]) / sigma_x) ** 2) * valid
    rows = idx.ravel()
    cols = np.repeat(np.arange(xl.size), idx.shape[1])
    vals = g.ravel()
    keep = vals > 1e-12
    a_mat = sparse.csr_matrix((vals[keep], (rows[keep], cols[keep])), shape=(sg.x.size, xl.size))
    wa = sparse.diags(sg.ivar) @ a_mat
    normal = (a_mat.T @ wa).tocsc()
    rhs = wa.T @ sg.d
    depth = np.zeros(xl.size)
    active = np.asarray(normal.diagonal()) > 0
    for _ in range(4):
        if not active.any():
            break
        sub = normal[active][:, active]
        ridge = 1e-9 * float(sub.diagonal().mean())
        eye = sparse.identity(sub.shape[0], format="csc")
        sol = np.atleast_1d(spsolve((sub + ridge * eye).tocsc(), rhs[active]))
        depth[:] = 0.0
        depth[active] = sol
        neg = depth < 0
        if not neg.any():
            break
        active &= ~neg
        depth[neg] = 0.0
    return np.clip(depth, 0.0, None)


def solve_strip(sg, xl, sigma_x, dx0, iterations=8, fit_width=True):
    """Joint least-squares shift, width and depths of one strip.

    Returns (dx, err_dx, depths, info, sigma_x) or None.  Alternates the line depths
    (linear) with a Gauss-Newton step on the shift and the common line width; the shift
    step is Newton's method for the peak of the inverse-variance weighted CCF against
    the matched template, and ``err_dx`` is the photon-noise limit of that template
    (Bouchy, Pepe & Queloz 2001).
    """
    dx = dx0
    for _ in range(iterations):
        depth = _fit_depths(sg, xl, sigma_x, dx)
        if not (depth > 0).any():
            return None
        t, dt, ds = template_on(sg, xl, depth, sigma_x, dx, width_derivative=True)
        r = (sg.d - t) * sg.ivar
        jac = np.array([[np.sum(dt * dt * sg.ivar), -np.sum(dt * ds * sg.ivar)],
                        [-np.sum(dt * ds * sg.ivar), np.sum(ds * ds * sg.ivar)]])
        rhs = np.array([-np.sum(r * dt), np.sum(r * ds)])
        try:
            if fit_width:
                step_x, step_s = np.linalg.solve(jac, rhs)
            else:
                step_x, step_s = rhs[0] / jac[0, 0], 0.0
        except (np.linalg.LinAlgError, ZeroDivisionError):
            return None
        # small damped steps: with few broad lines Gauss-Newton can wander far
        step_x = float(np.clip(step_x, -0.3 * sigma_x, 0.3 * sigma_x))
        step_s = float(np.clip(step_s, -0.1 * sigma_x, 0.1 * sigma_x)) if fit_width else 0.0
        dx += step_x
        sigma_x += step_s
        if abs(step_x) * math.sqrt(jac[0, 0]) < 1e-3 and abs(step_s) < 1e-4 * sigma_x:
            break
    depth = _fit_depths(sg, xl, sigma_x, dx)
    t, dt = template_on(sg, xl, depth, sigma_x, dx)
    info = float((dt**2 * sg.ivar).sum())
    if info <= 0:
        return None
    return dx, 1.0 / math.sqrt(info), depth, info, sigma_x


def template_on(sg, xl, depth, sigma_x, dx, width_derivative=False):
    """Matched template depth and its derivative d/dx (and d/dsigma) on a segment."""
    step = np.median(np.diff(sg.x))
    half = int(math.ceil(5.0 * sigma_x / step)) + 1
    idx, valid = _windows(sg.x, xl + dx, half)
    u = (sg.x[idx] - (xl + dx)[:, None]) / sigma_x
    g = np.exp(-0.5 * u**2) * valid * depth[:, None]
    flat = idx.ravel()
    n = sg.x.size
    # windows of different lines may overlap: accumulate with bincount (clipped window
    # duplicates at the ends carry valid = 0, so they add nothing)
    t = np.bincount(flat, weights=g.ravel(), minlength=n)
    dt = np.bincount(flat, weights=(-g * u / sigma_x).ravel(), minlength=n)
    if not width_derivative:
        return t, dt
    ds = np.bincount(flat, weights=(g * u**2 / sigma_x).ravel(), minlength=n)
    return t, dt, ds


def template_depth(wave_A, line_wave_A, depth, sigma_kms, rv_kms=0.0):
    """A line-depth model ``1 - F/C`` (Gaussian lines of width ``sigma_kms``) on ``wave_A``.

    Used to compute the Bouchy, Pepe & Queloz (2001) photon-noise limit of a model.
    """
    x = np.log(np.asarray(wave_A, dtype=np.float64))
    seg = Segment(x, np.zeros_like(x), np.ones_like(x), 0.0, 0.0)
    xl = np.log(np.asarray(line_wave_A, dtype=np.float64))
    t, dt = template_on(seg, xl, np.asarray(depth, dtype=np.float64), sigma_kms / C_KMS,
                         math.atanh(rv_kms / C_KMS))
    return t, dt


def photon_limit_kms(wave_A, model_flux, sigma) -> float:
    """Photon-noise RV limit (km/s) of a noise-free model spectrum with noise ``sigma``.

    sigma_v = c / sqrt(sum_i (lambda_i dA_i/dlambda)^2 / sigma_i^2), the quality-factor
    form of the limit.

    References
    ----------
    Bouchy, Pepe & Queloz (2001), A&A 374, 733, eqs. 6-9.
    """
    w = np.asarray(wave_A, dtype=np.float64)
    a = np.asarray(model_flux, dtype=np.float64)
    s = np.broadcast_to(np.asarray(sigma, dtype=np.float64), a.shape)
    deriv = np.gradient(a, np.log(w))  # lambda dA/dlambda
    return float(C_KMS / math.sqrt(np.sum(deriv**2 / s**2)))
