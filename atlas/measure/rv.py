"""Radial velocity by cross-correlation in ln(wavelength) against a line mask.

Works on plain arrays (wavelength in Å, flux, optional uncertainty and mask) of one
spectrum or of several echelle orders.  The steps:

1. normalise the flux to its continuum (:func:`normalise`, or a continuum given);
2. coarse search: correlate the smoothed line depth ``1 - F/C`` with a mask of
   listed line positions, weighted by strength, over the whole velocity range;
3. matched template: fit each mask line's depth (non-negative least squares, Gaussian
   profile with the width found in step 2) at the coarse velocity;
4. fine search, strip by strip (or order by order): the inverse-variance weighted CCF
   against that template, a Gaussian fit to its peak, and the photon-noise limit of the
   strip from the template (Bouchy, Pepe & Queloz 2001);
5. strips combined with inverse-variance weights after a sigma clip; the error is
   inflated by sqrt(reduced chi-square) when the strips scatter more than their errors.

Velocities are relativistic: a shift of ``dx`` in ln(wavelength) is ``v = c tanh(dx)``,
the same law as :mod:`atlas.physics.doppler`.

References
----------
Tonry & Davis (1979), AJ 84, 1511 (cross-correlation radial velocities);
Baranne et al. (1996), A&AS 119, 373 (weighted line-mask cross-correlation);
Bouchy, Pepe & Queloz (2001), A&A 374, 733 (photon-noise limit of a radial velocity);
Stoehr et al. (2008), ASP Conf. Ser. 394, 505 (DER_SNR noise estimate);
Wright & Eastman (2014), PASP 126, 838 (barycentric correction).
"""

from __future__ import annotations

import math
import warnings
from dataclasses import dataclass, field

import numpy as np
from scipy import ndimage, optimize, sparse
from scipy.sparse.linalg import spsolve

from atlas.physics.constants import C_KMS

#: FWHM of a Gaussian in units of its sigma.
FWHM_PER_SIGMA = 2.0 * math.sqrt(2.0 * math.log(2.0))
#: FWHM of the rotation profile in units of v sin i, linear limb darkening eps = 0.6
#: (solved from the profile of Gray 2005, "The Observation and Analysis of Stellar
#: Photospheres", 3rd ed., eq. 18.14).
ROT_FWHM_PER_VSINI = 1.559
#: Initial mask weight per line-list strength class (1 strongest .. 4 weak); only the
#: coarse search uses it, the fine search fits each line's depth.  `common practice`.
STRENGTH_WEIGHT = {1: 1.0, 2: 0.7, 3: 0.45, 4: 0.25}


@dataclass
class StripRV:
    """One strip's (or order's) velocity: wavelength range (Å), RV and error (km/s)."""

    lo_A: float
    hi_A: float
    rv_kms: float | None
    err_kms: float | None
    n_lines: int
    used: bool = True
    note: str = ""


@dataclass
class RVResult:
    """Radial velocity of one spectrum; velocities in km/s, positive = receding."""

    rv_obs_kms: float | None
    rv_err_kms: float | None
    rv_kms: float | None = None  # barycentric, when the correction is known
    barycentric_kms: float | None = None
    ccf_fwhm_kms: float | None = None
    ccf_contrast: float | None = None
    line_fwhm_kms: float | None = None
    vsini_rough_kms: float | None = None
    significance: float | None = None
    photon_limit_kms: float | None = None
    n_lines: int = 0
    strips: list[StripRV] = field(default_factory=list)
    note: str = ""
    ccf_velocity_kms: np.ndarray | None = None
    ccf: np.ndarray | None = None
    method: str = "line mask"
    systematic_kms: float | None = None  # template fit: half the shift with the runner-up class (not in rv_err_kms)

    def as_dict(self) -> dict:
        """JSON-ready summary (no arrays)."""
        out = {
            k: getattr(self, k)
            for k in (
                "rv_kms",
                "rv_err_kms",
                "rv_obs_kms",
                "barycentric_kms",
                "ccf_fwhm_kms",
                "ccf_contrast",
                "line_fwhm_kms",
                "vsini_rough_kms",
                "significance",
                "photon_limit_kms",
                "n_lines",
                "note",
                "method",
                "systematic_kms",
            )
        }
        out["strips"] = [
            {
                "lo_A": s.lo_A,
                "hi_A": s.hi_A,
                "rv_kms": s.rv_kms,
                "err_kms": s.err_kms,
                "n_lines": s.n_lines,
                "used": s.used,
                "note": s.note,
            }
            for s in self.strips
        ]
        return out


# --------------------------------------------------------------------------- helpers


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


def _fit_peak(v, ccf, guess_mu=None, guess_s=None, half_window=None):
    """Gaussian fit (scipy curve_fit) to the top of a CCF peak: (mu, sigma, amplitude, base).

    The baseline is the CCF's median; only the contiguous run above 75 % of the peak
    height (or ``half_window`` around the peak) is fitted, so a blend on one flank
    does not pull the centre.  Returns None when no peak can be fitted.
    """
    v = np.asarray(v)
    ccf = np.asarray(ccf)
    good = np.isfinite(ccf)
    if good.sum() < 5:
        return None
    v, ccf = v[good], ccf[good]
    i = int(np.argmax(ccf)) if guess_mu is None else int(np.argmin(np.abs(v - guess_mu)))
    base = float(np.median(ccf))
    amp = float(ccf[i] - base)
    if amp <= 0:
        return None

    def run_above(level):
        above = ccf > level
        lo = hi = i
        while lo > 0 and above[lo - 1]:
            lo -= 1
        while hi < ccf.size - 1 and above[hi + 1]:
            hi += 1
        return lo, hi

    step = abs(v[1] - v[0])
    if guess_s is None:
        lo, hi = run_above(base + 0.5 * amp)
        guess_s = max((v[hi] - v[lo]) / FWHM_PER_SIGMA, step)
    if half_window is None:
        lo, hi = run_above(base + 0.75 * amp)
        sel = np.zeros(v.size, dtype=bool)
        sel[lo : hi + 1] = True
    else:
        sel = np.abs(v - v[i]) <= half_window
    if sel.sum() < 5:
        sel = np.zeros(v.size, dtype=bool)
        sel[np.argsort(np.abs(v - v[i]))[:5]] = True

    def model(x, a, mu, s):
        return base + a * np.exp(-0.5 * ((x - mu) / s) ** 2)

    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            p, _ = optimize.curve_fit(model, v[sel], ccf[sel], p0=(amp, v[i], guess_s),
                                      maxfev=2000)
    except (RuntimeError, ValueError):
        return None
    a, mu, s = p
    if not (np.isfinite(mu) and a > 0 and s != 0) or abs(mu - v[i]) > 2 * abs(guess_s) + step:
        return None
    return float(mu), abs(float(s)), float(a), base


@dataclass
class _Segment:
    x: np.ndarray  # ln wavelength (sorted)
    d: np.ndarray  # line depth 1 - F/C (0 where masked)
    ivar: np.ndarray  # 1 / sigma^2 of d (0 where masked)
    lo_A: float
    hi_A: float


def _segments(wave_A, flux, uncertainty, mask, continuum, normalised, n_strips):
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
            segs.append(_Segment(x[sl], d, ivar, float(w[sl][0]), float(w[sl][-1])))
    return segs


def _coarse_ccf(segs, xl, wl, v_kms, sigma_t_kms):
    """Mask CCF on a velocity grid: weighted mean smoothed depth at the shifted lines."""
    num = np.zeros(v_kms.size)
    den = np.zeros(v_kms.size)
    dxv = np.arctanh(v_kms / C_KMS)
    for sg in segs:
        x = sg.x
        step = np.median(np.diff(x))
        grid = np.arange(x[0], x[-1], step)
        if grid.size < 10:
            continue
        dg = np.interp(grid, x, sg.d)
        wg = np.interp(grid, x, (sg.ivar > 0).astype(float))
        sm = ndimage.gaussian_filter1d(dg, sigma_t_kms / C_KMS / step, mode="constant")
        nm = ndimage.gaussian_filter1d(wg, sigma_t_kms / C_KMS / step, mode="constant")
        sel = (xl + dxv.max() > x[0]) & (xl + dxv.min() < x[-1])
        if not sel.any():
            continue
        pos = xl[sel][:, None] + dxv[None, :]
        inside = (pos > grid[0]) & (pos < grid[-1])
        val = np.interp(pos, grid, sm, left=0.0, right=0.0)
        cov = np.interp(pos, grid, nm, left=0.0, right=0.0)
        with np.errstate(invalid="ignore", divide="ignore"):
            val = np.where(inside & (cov > 0.5), val / cov, 0.0)
        ww = wl[sel][:, None] * (inside & (cov > 0.5))
        num += (ww * val).sum(axis=0)
        den += ww.sum(axis=0)
    with np.errstate(invalid="ignore", divide="ignore"):
        return np.where(den > 0, num / den, np.nan)


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


def _solve_strip(sg, xl, sigma_x, dx0, iterations=8, fit_width=True):
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
        t, dt, ds = _template_on(sg, xl, depth, sigma_x, dx, width_derivative=True)
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
    t, dt = _template_on(sg, xl, depth, sigma_x, dx)
    info = float((dt**2 * sg.ivar).sum())
    if info <= 0:
        return None
    return dx, 1.0 / math.sqrt(info), depth, info, sigma_x


def _template_on(sg, xl, depth, sigma_x, dx, width_derivative=False):
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


def measure_rv(
    wave_A,
    flux,
    uncertainty=None,
    mask=None,
    *,
    line_wave_A,
    line_weight=None,
    continuum=None,
    normalised: bool = False,
    v_min_kms: float = -300.0,
    v_max_kms: float = 300.0,
    n_strips: int | None = None,
    clip_sigma: float = 4.0,
    min_significance: float = 6.0,
) -> RVResult:
    """Radial velocity (km/s, observer's frame) of a spectrum against a line mask.

    ``wave_A`` and ``flux`` are 1-D, or 2-D (order, sample) for echelle orders, which
    then act as the strips.  ``line_wave_A`` are rest positions in the spectrum's own
    medium; ``line_weight`` their initial weights (default 1).  ``continuum`` (same
    shape as flux) or ``normalised=True`` skip the built-in continuum.  The search runs
    over [``v_min_kms``, ``v_max_kms``]; strips more than ``clip_sigma`` away from the
    weighted mean are flagged and left out.  Returns an :class:`RVResult` whose
    ``rv_obs_kms`` is None (with a note) when no significant correlation peak exists.

    References
    ----------
    Baranne et al. (1996), A&AS 119, 373; Bouchy, Pepe & Queloz (2001), A&A 374, 733.
    """
    lw = np.asarray(line_wave_A, dtype=np.float64)
    wl = np.ones_like(lw) if line_weight is None else np.asarray(line_weight, dtype=np.float64)
    good = np.isfinite(lw) & (lw > 0) & np.isfinite(wl) & (wl > 0)
    lw, wl = lw[good], wl[good]
    segs = _segments(wave_A, flux, uncertainty, mask, continuum, normalised, n_strips)
    if not segs:
        return RVResult(None, None, note="too few good samples")
    order = np.argsort(lw)
    lw, wl = lw[order], wl[order]
    xl_all = np.log(lw)
    xmin = min(s.x[0] for s in segs)
    xmax = max(s.x[-1] for s in segs)
    # the CCF runs BASE_PAD_KMS beyond the search range on both sides, for its baseline
    # and noise (broad-lined stars have peaks hundreds of km/s wide)
    base_pad = 600.0
    margin = (max(abs(v_min_kms), abs(v_max_kms)) + base_pad) / C_KMS * 1.05 + 1e-4
    sel = (xl_all > xmin - margin) & (xl_all < xmax + margin)
    xl_all, wl = xl_all[sel], wl[sel]
    if xl_all.size == 0:
        return RVResult(None, None, note="no listed line falls in the spectrum's wavelength range")

    # ---- coarse search with a narrow template
    pix_kms = float(np.median([np.median(np.diff(s.x)) for s in segs])) * C_KMS
    sigma_t = max(pix_kms, 0.3)
    step_v = max(pix_kms / 2.0, (v_max_kms - v_min_kms + 2 * base_pad) / 4000.0)
    pad = 10 * sigma_t
    v_coarse = np.arange(v_min_kms - base_pad, v_max_kms + base_pad + step_v / 2, step_v)
    ccf_c = _coarse_ccf(segs, xl_all, wl, v_coarse, sigma_t)
    inrange = (v_coarse >= v_min_kms) & (v_coarse <= v_max_kms) & np.isfinite(ccf_c)
    if not inrange.any():
        return RVResult(None, None, note="no listed line falls in the spectrum's wavelength range")
    ipk = int(np.flatnonzero(inrange)[np.argmax(ccf_c[inrange])])
    fit = _fit_peak(v_coarse, ccf_c, guess_mu=v_coarse[ipk])
    finite = np.isfinite(ccf_c)
    if fit is None:
        return RVResult(None, None, note="no correlation peak could be fitted",
                        ccf_velocity_kms=v_coarse, ccf=ccf_c)
    v0, s_ccf, amp_c, base_c = fit
    max_sigma = 0.25 * (v_max_kms - v_min_kms)
    if not (v_min_kms - pad <= v0 <= v_max_kms + pad) or s_ccf > max_sigma:
        # the Gaussian ran away (a very broad or asymmetric peak): keep the maximum and
        # the half-maximum width instead
        v0 = float(v_coarse[ipk])
        above = finite & (ccf_c >= 0.5 * (ccf_c[ipk] + np.nanmedian(ccf_c)))
        lo_i = hi_i = ipk
        while lo_i > 0 and above[lo_i - 1]:
            lo_i -= 1
        while hi_i < above.size - 1 and above[hi_i + 1]:
            hi_i += 1
        s_ccf = min(max((v_coarse[hi_i] - v_coarse[lo_i]) / FWHM_PER_SIGMA, sigma_t), max_sigma)
        amp_c = float(ccf_c[ipk] - np.nanmedian(ccf_c))
    # significance: the peak over the scatter of the CCF away from it, after removing
    # the slow trends of blended wings (a running median 8 peak widths long)
    away = finite & (np.abs(v_coarse - v0) > 4 * s_ccf + 3 * sigma_t)
    width = int(8 * s_ccf / step_v) | 1
    trend = ndimage.median_filter(np.where(finite, ccf_c, np.nanmedian(ccf_c)), size=max(width, 3))
    detr = ccf_c - trend
    noise_c = (1.482602 * np.median(np.abs(detr[away] - np.median(detr[away])))
               if away.sum() > 10 else np.nan)
    near = finite & (np.abs(v_coarse - v0) > 3 * s_ccf) & (np.abs(v_coarse - v0) < 6 * s_ccf)
    local_base = float(np.median(ccf_c[near])) if near.sum() > 3 else float(np.nanmedian(ccf_c))
    amp_c = float(ccf_c[ipk]) - local_base
    signif = amp_c / noise_c if noise_c > 0 else float("inf")
    result = RVResult(None, None, ccf_velocity_kms=v_coarse, ccf=ccf_c)
    result.significance = float(signif) if np.isfinite(signif) else None
    result.ccf_fwhm_kms = FWHM_PER_SIGMA * s_ccf
    result.ccf_contrast = amp_c
    if not (signif >= min_significance) or not (v_min_kms - pad <= v0 <= v_max_kms + pad):
        result.note = f"no significant correlation peak (best {signif:.1f} sigma)"
        return result
    sigma_line = math.sqrt(max(s_ccf**2 - sigma_t**2, (0.5 * pix_kms) ** 2))
    result.line_fwhm_kms = FWHM_PER_SIGMA * sigma_line

    # ---- matched template and fine search per strip
    sigma_x = sigma_line / C_KMS
    # remove what the template cannot model and would bias it: slow trends of the depth
    # (wings of unlisted broad lines, continuum errors), by a running median 15 line
    # widths long (common practice: a local pseudo-continuum)
    for sg in segs:
        size = int(15 * FWHM_PER_SIGMA * sigma_line / pix_kms) | 1
        if size < sg.d.size // 2:
            ok_ = sg.ivar > 0
            trend = ndimage.median_filter(np.where(ok_, sg.d, 0.0), size=size, mode="nearest")
            sg.d = np.where(ok_, sg.d - trend, 0.0)
    dx0 = math.atanh(v0 / C_KMS)
    strips = []
    info_total = 0.0
    total_lines = 0
    strip_sigmas = []
    for sg in segs:
        # lines just beyond the strip ends are fitted too, so their wings bias nothing
        inside = (xl_all + dx0 > sg.x[0] - 3 * sigma_x) & (xl_all + dx0 < sg.x[-1] + 3 * sigma_x)
        xl = xl_all[inside]
        strip = StripRV(math.exp(sg.x[0]), math.exp(sg.x[-1]), None, None, int(xl.size))
        strips.append(strip)
        if xl.size == 0:
            strip.used, strip.note = False, "no listed line in this strip"
            continue
        # the common width is fitted only where enough lines constrain it
        sol = _solve_strip(sg, xl, sigma_x, dx0, fit_width=xl.size >= 8)
        if sol is None:
            strip.used, strip.note = False, "no line found in this strip"
            continue
        dx, err_dx, depth, info, sx = sol
        strip_sigmas.append(sx * C_KMS)
        strip.n_lines = int((depth > 0).sum())
        total_lines += strip.n_lines
        info_total += info
        beta = math.tanh(dx)
        strip.rv_kms = C_KMS * beta
        strip.err_kms = C_KMS * (1.0 - beta**2) * err_dx
    result.strips = strips
    if strip_sigmas:
        result.line_fwhm_kms = FWHM_PER_SIGMA * float(np.median(strip_sigmas))
    result.n_lines = total_lines
    ok = [s for s in strips if s.rv_kms is not None]
    if not ok:
        result.note = "no strip gave a velocity"
        return result
    mean, err, use, chi2r = combine_strips(ok, clip_sigma)
    if chi2r is not None:
        if chi2r > 100.0 or (~use).sum() > 0.25 * use.size:
            result.note = ("strips disagree (reduced chi-square "
                           f"{chi2r:.0f}, {(~use).sum()} of {use.size} set aside): velocity unreliable")
    if not (v_min_kms - 2 * pad <= mean <= v_max_kms + 2 * pad):
        result.note = f"the velocity fit left the search range ({mean:+.0f} km/s)"
        return result
    result.rv_obs_kms = mean
    result.rv_err_kms = err
    result.photon_limit_kms = C_KMS / math.sqrt(info_total) if info_total > 0 else None
    return result


def combine_strips(ok, clip_sigma: float):
    """Combine per-strip velocities (km/s) into one, setting outlier strips aside.

    ``ok`` are strips with ``rv_kms`` and ``err_kms``.  A robust clip takes the residuals
    from the inverse-variance weighted median in units of each strip's error, the
    threshold scaled by their median absolute deviation when that exceeds 1; the kept
    strips are averaged with inverse-variance weights and, with three or more, the error
    is inflated by sqrt(reduced chi-square) when the strips scatter more than their
    errors (common practice).  Marks the set-aside strips ``used = False``.
    Returns ``(mean_kms, err_kms, used_mask, reduced_chi2 or None)``.
    """
    rv = np.array([s.rv_kms for s in ok])
    er = np.array([s.err_kms for s in ok])
    order_ = np.argsort(rv)
    cw = np.cumsum(1.0 / er[order_] ** 2)
    centre = float(rv[order_][np.searchsorted(cw, 0.5 * cw[-1])])
    z = (rv - centre) / er
    scale = max(1.0, 1.482602 * float(np.median(np.abs(z)))) if rv.size >= 3 else np.inf
    use = np.abs(z) <= clip_sigma * scale
    for s, u_ in zip(ok, use, strict=True):
        if not u_:
            s.used, s.note = False, "outlier (sigma clip)"
    w = 1.0 / er[use] ** 2
    mean = float((w * rv[use]).sum() / w.sum())
    err = math.sqrt(1.0 / w.sum())
    chi2r = None
    if use.sum() >= 3:
        chi2r = float((((rv[use] - mean) / er[use]) ** 2).sum() / (use.sum() - 1))
        err *= max(1.0, math.sqrt(chi2r))
    return mean, err, use, chi2r


def vsini_rough(line_fwhm_kms: float | None, resolving_power: float | None) -> float | None:
    """A rough v sin i (km/s) from the line FWHM and the instrument's resolving power.

    The instrumental FWHM c/R is removed in quadrature and the rest is read as a
    rotation profile with limb darkening 0.6 (Gray 2005, The Observation and Analysis
    of Stellar Photospheres, 3rd ed., ch. 18).  Rough: both steps are approximations.
    """
    if not line_fwhm_kms or not resolving_power or resolving_power <= 0:
        return None
    inst = C_KMS / float(resolving_power)
    rest = line_fwhm_kms**2 - inst**2
    if rest <= 0:
        return 0.0
    return math.sqrt(rest) / ROT_FWHM_PER_VSINI


def template_depth(wave_A, line_wave_A, depth, sigma_kms, rv_kms=0.0):
    """A line-depth model ``1 - F/C`` (Gaussian lines of width ``sigma_kms``) on ``wave_A``.

    Used to compute the Bouchy, Pepe & Queloz (2001) photon-noise limit of a model.
    """
    x = np.log(np.asarray(wave_A, dtype=np.float64))
    seg = _Segment(x, np.zeros_like(x), np.ones_like(x), 0.0, 0.0)
    xl = np.log(np.asarray(line_wave_A, dtype=np.float64))
    t, dt = _template_on(seg, xl, np.asarray(depth, dtype=np.float64), sigma_kms / C_KMS,
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
