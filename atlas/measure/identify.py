"""Line identification: absorption features found above the noise, matched to the line list.

1. The normalised depth ``1 - F/C`` is filtered with a Gaussian of the star's line
   width (a matched filter); its amplitude over its own error is each sample's
   significance.  Local maxima above ``min_sigma`` are the features.
2. Each feature gets a Gaussian fit (weighted least squares, all features at once): observed wavelength, depth,
   width, equivalent width (depth * sigma * sqrt(2 pi)) and their errors.
3. Stellar lines of the list are moved by the star's observed radial velocity;
   telluric lines stay where they are (the observer's frame).  A feature matches the
   nearest listed line within a tolerance that adds in quadrature 3 times the
   feature's position error, 3 times the RV error, and a quarter of the line FWHM
   (blends, list accuracy); strong lines win ties.  ``quality`` = 1 - offset/tolerance.
4. Features no single line explains but that lie inside a band are explained by it:
   a telluric band (its start and end rows in the list, observer's frame) or a
   molecular band (from its head, in the direction it fades, over three e-folding
   lengths of our schematic band model, :mod:`atlas.synth.molecules`; moved with the
   star).  ``kind`` is then ``telluric_band`` or ``molecular_band``, ``rest_A`` the
   band's start or head.
5. Features nothing in the list explains are returned apart, most significant first.

References
----------
Turin, G. L. (1960), IRE Trans. Inf. Theory 6, 311 (the matched filter);
relativistic Doppler shift as in :mod:`atlas.physics.doppler`.
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
from scipy import ndimage, signal

from atlas.measure.rv import C_KMS, FWHM_PER_SIGMA, der_noise, normalise

COLUMNS = (
    "observed_A",
    "observed_err_A",
    "rest_A",
    "species",
    "kind",
    "depth",
    "depth_err",
    "ew_mA",
    "ew_err_mA",
    "fwhm_kms",
    "offset_kms",
    "quality",
    "significance",
)


def _gauss(x, d, mu, s):
    return 1.0 - d * np.exp(-0.5 * ((x - mu) / s) ** 2)


def fit_gaussians(x, y, sigma, p0, *, max_iter: int = 200, rtol: float = 1e-10):
    """Least-squares fits of ``1 - d exp(-(x - mu)^2 / 2 s^2)`` to many windows at once.

    ``x``, ``y``, ``sigma``: arrays (n_fits, n_points), a point with ``sigma`` not finite
    or <= 0 has no weight; ``p0``: (n_fits, 3) starting (d, mu, s).  Each fit runs its own
    Levenberg-Marquardt iteration (own damping, own stop), all of them vectorised.
    Returns ``(popt, pcov, ok)``: (n, 3), (n, 3, 3) covariance from the weights
    (``absolute_sigma`` in scipy's terms), and whether each fit converged with a
    well-conditioned covariance.  Agrees with ``scipy.optimize.curve_fit`` fit by fit
    (tests/measure/test_identify.py).

    References
    ----------
    Levenberg, K. (1944), Q. Appl. Math. 2, 164; Marquardt, D. W. (1963),
    J. SIAM 11, 431; Press et al., Numerical Recipes (3rd ed., 2007), section 15.5.
    """
    x = np.asarray(x, dtype=np.float64)
    y = np.asarray(y, dtype=np.float64)
    s = np.asarray(sigma, dtype=np.float64)
    p0 = np.asarray(p0, dtype=np.float64)
    n = x.shape[0]
    good = np.isfinite(x) & np.isfinite(y) & np.isfinite(s) & (s > 0)
    w = np.where(good, 1.0 / np.where(good, s, 1.0), 0.0)
    # each window in its own units: centred on the first guess, scaled by its width
    x0 = p0[:, 1:2].copy()
    sc = np.abs(p0[:, 2:3]).copy()
    sc[~(sc > 0)] = 1.0
    u = np.where(good, (np.where(good, x, 0.0) - x0) / sc, 0.0)
    yy = np.where(good, y, 1.0)
    p = np.column_stack([p0[:, 0], np.zeros(n), np.ones(n)])

    def resid_jac(p, rows=slice(None)):
        d, mu, sg = p[:, 0:1], p[:, 1:2], p[:, 2:3]
        uu, ww = u[rows], w[rows]
        with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
            t = (uu - mu) / sg
            e = np.exp(-0.5 * t * t)
        r = ww * (yy[rows] - 1.0 + d * e)
        # derivatives of r with respect to d, mu and s
        jd = ww * e
        with np.errstate(over="ignore", invalid="ignore", divide="ignore"):
            jmu = ww * d * e * t / sg
        js = jmu * t
        return r, np.stack([jd, jmu, js], axis=-1)

    r, J = resid_jac(p)
    cost = np.einsum("ij,ij->i", r, r)
    lam = np.full(n, 1e-3)
    active = np.isfinite(cost)
    done = np.zeros(n, dtype=bool)
    eye = np.eye(3)
    for _ in range(max_iter):
        idx = np.flatnonzero(active & ~done)
        if idx.size == 0:
            break
        Ji, ri = J[idx], r[idx]
        A = np.einsum("ikp,ikq->ipq", Ji, Ji)
        g = np.einsum("ikp,ik->ip", Ji, ri)
        diag = np.einsum("ipp->ip", A)
        M = A + lam[idx, None, None] * (diag[:, :, None] * eye) + 1e-300 * eye
        try:
            step = -np.linalg.solve(M, g[..., None])[..., 0]
        except np.linalg.LinAlgError:
            step = -np.einsum("ipq,iq->ip", np.linalg.pinv(M), g)
        trial = p[idx] + step
        rt, Jt = resid_jac(trial, idx)
        ct = np.einsum("ij,ij->i", rt, rt)
        better = np.isfinite(ct) & (ct <= cost[idx])
        small = better & ((cost[idx] - ct) <= rtol * np.maximum(cost[idx], 1e-300))
        tiny = np.all(np.abs(step) <= 1e-10 * (np.abs(p[idx]) + 1e-10), axis=1)
        b = idx[better]
        p[b], r[b], J[b], cost[b] = trial[better], rt[better], Jt[better], ct[better]
        lam[b] = np.maximum(lam[b] / 10.0, 1e-12)
        nb = idx[~better]
        lam[nb] = lam[nb] * 10.0
        done[idx[small | tiny]] = True
        active[idx[lam[idx] > 1e12]] = False  # no step lowers the cost any more
    conv = done | ~active  # a stalled damping is a minimum too, as far as steps can tell
    conv &= np.isfinite(cost)
    A = np.einsum("ikp,ikq->ipq", J, J)
    pcov = np.full((n, 3, 3), np.inf)
    ok = conv & (np.linalg.cond(A) < 1e12)
    if ok.any():
        pcov[ok] = np.linalg.inv(A[ok])
    # back to wavelength units: mu = x0 + sc mu', s = sc s'
    scale = np.column_stack([np.ones(n), sc[:, 0], sc[:, 0]])
    popt = p * scale
    popt[:, 1] += x0[:, 0]
    pcov = pcov * scale[:, :, None] * scale[:, None, :]
    return popt, pcov, ok


def find_features(wave_A, norm_flux, sigma, *, line_fwhm_kms: float, min_sigma: float = 5.0,
                  max_features: int = 5000) -> pd.DataFrame:
    """Absorption features of a normalised 1-D spectrum (sorted wavelengths, Å).

    ``sigma`` is the noise of ``norm_flux`` (array or number); ``line_fwhm_kms`` the
    expected line FWHM.  Returns a DataFrame with ``observed_A``, ``observed_err_A``,
    ``depth``, ``depth_err``, ``ew_mA``, ``ew_err_mA``, ``fwhm_kms``, ``significance``.
    """
    w = np.asarray(wave_A, dtype=np.float64)
    f = np.asarray(norm_flux, dtype=np.float64)
    s = np.broadcast_to(np.asarray(sigma, dtype=np.float64), f.shape).copy()
    good = np.isfinite(w) & np.isfinite(f) & np.isfinite(s) & (s > 0)
    d = np.where(good, 1.0 - f, 0.0)
    ivar = np.where(good, 1.0 / np.where(good, s, 1.0) ** 2, 0.0)
    cols = ["observed_A", "observed_err_A", "depth", "depth_err", "ew_mA", "ew_err_mA",
            "fwhm_kms", "significance"]
    if good.sum() < 10:
        return pd.DataFrame(columns=cols)
    x = np.log(np.where(w > 0, w, 1.0))
    pix_kms = float(np.median(np.diff(x[good]))) * C_KMS
    sig_pix = max(line_fwhm_kms / FWHM_PER_SIGMA / pix_kms, 0.5)
    half = int(math.ceil(4 * sig_pix))
    k = np.exp(-0.5 * (np.arange(-half, half + 1) / sig_pix) ** 2)
    num = ndimage.correlate1d(d * ivar, k, mode="constant")
    den = ndimage.correlate1d(ivar, k**2, mode="constant")
    with np.errstate(divide="ignore", invalid="ignore"):
        amp = np.where(den > 0, num / den, 0.0)
        signif = np.where(den > 0, amp * np.sqrt(den), 0.0)
    peaks, props = signal.find_peaks(signif, height=min_sigma, distance=max(1, int(sig_pix)))
    if peaks.size > max_features:
        peaks = peaks[np.argsort(props["peak_heights"])[::-1][:max_features]]
        peaks.sort()
    win = int(math.ceil(1.5 * FWHM_PER_SIGMA * sig_pix / 2)) + 2
    idx = peaks[:, None] + np.arange(-win, win + 1)[None, :]
    inside = (idx >= 0) & (idx < w.size)
    idx = np.clip(idx, 0, w.size - 1)
    use = inside & good[idx]
    keep = use.sum(axis=1) >= 5
    peaks, idx, use = peaks[keep], idx[keep], use[keep]
    if peaks.size == 0:
        return pd.DataFrame(columns=cols)
    xx = np.where(use, w[idx], np.nan)
    s0 = w[peaks] * sig_pix * pix_kms / C_KMS
    p0 = np.column_stack([np.maximum(amp[peaks], 1e-3), w[peaks], s0])
    popt, pcov, ok = fit_gaussians(xx, f[idx], np.where(use, s[idx], np.nan), p0)
    dep, mu, sg = popt[:, 0], popt[:, 1], np.abs(popt[:, 2])
    with np.errstate(invalid="ignore"):
        ok &= (dep > 0) & (mu >= np.nanmin(xx, axis=1)) & (mu <= np.nanmax(xx, axis=1))
    ok &= np.all(np.isfinite(pcov.reshape(-1, 9)), axis=1)
    dep, mu, sg, pcov, sig_at = dep[ok], mu[ok], sg[ok], pcov[ok], signif[peaks[ok]]
    err = np.sqrt(np.clip(np.einsum("ipp->ip", pcov), 0.0, None))
    ew = dep * sg * math.sqrt(2 * math.pi)
    # error of d * s with their covariance
    var_ew = 2 * math.pi * (sg**2 * pcov[:, 0, 0] + dep**2 * pcov[:, 2, 2] + 2 * dep * sg * pcov[:, 0, 2])
    return pd.DataFrame({
        "observed_A": mu, "observed_err_A": err[:, 1], "depth": dep, "depth_err": err[:, 0],
        "ew_mA": ew * 1000.0, "ew_err_mA": np.sqrt(np.clip(var_ew, 0.0, None)) * 1000.0,
        "fwhm_kms": FWHM_PER_SIGMA * sg / mu * C_KMS, "significance": sig_at.astype(np.float64),
    }, columns=cols)


#: A molecular band reaches this many e-folding lengths from its head (exp(-3) = 5 %
#: of its peak opacity: our choice).
BAND_EFOLDS = 3.0


def band_regions(lines: pd.DataFrame, medium: str = "vacuum") -> list[tuple[float, float, str, str, float]]:
    """Band regions of the line list: (lo_A, hi_A, species, kind, ref_A) in ``medium``.

    ``kind`` ``telluric_band`` (observer's frame; ``ref_A`` the band start) from the
    ``band start`` / ``band end`` telluric rows, or ``molecular_band`` (stellar rest
    frame; ``ref_A`` the head) from ``band_head`` rows, reaching ``BAND_EFOLDS`` times
    the band's fade length of :data:`atlas.synth.molecules.BAND_SCALE_A` to the red or
    violet as :data:`atlas.synth.molecules.MOLECULES` says (directions from memory).
    """
    from atlas.measure.rv_template import telluric_regions_A
    from atlas.synth.molecules import BAND_SCALE_A, MOLECULES

    out = []
    col = "vacuum_A" if medium == "vacuum" else "air_A"
    tell = lines[lines["telluric"].astype(str).str.lower().isin(["true", "1"])]
    for lo, hi in telluric_regions_A(lines, medium):
        at = tell[(tell[col] - lo).abs() < 1e-6]
        sp = str(at["species"].iloc[0]) if len(at) else "telluric"
        out.append((lo, hi, sp, "telluric_band", lo))
    heads = lines[lines["kind"].astype(str) == "band_head"]
    for sp, head in zip(heads["species"].astype(str), heads[col].astype(float), strict=True):
        if sp not in BAND_SCALE_A or sp not in MOLECULES:
            continue
        reach = BAND_EFOLDS * BAND_SCALE_A[sp]
        if MOLECULES[sp][-1] == "red":
            out.append((head, head + reach, sp, "molecular_band", head))
        else:
            out.append((head - reach, head, sp, "molecular_band", head))
    return out


def identify(features: pd.DataFrame, lines: pd.DataFrame, *, rv_obs_kms: float,
             rv_err_kms: float = 0.0, line_fwhm_kms: float = 10.0,
             medium: str = "vacuum") -> tuple[pd.DataFrame, pd.DataFrame]:
    """Match features to the line list; returns (identified, unidentified) DataFrames.

    ``rv_obs_kms`` is the star's velocity in the observer's frame (before the
    barycentric correction), ``medium`` the medium of the feature wavelengths.
    Identified rows carry :data:`COLUMNS`; unidentified rows the feature columns,
    sorted by significance (highest first).
    """
    col = "vacuum_A" if medium == "vacuum" else "air_A"
    lw = lines[col].to_numpy(dtype=np.float64)
    tell = lines["telluric"].astype(str).str.lower().isin(["true", "1"]).to_numpy() | (
        lines["kind"].astype(str) == "telluric").to_numpy()
    beta = rv_obs_kms / C_KMS
    factor = math.sqrt((1 + beta) / (1 - beta))
    expected = np.where(tell, lw, lw * factor)
    order = np.argsort(expected)
    expected, lw, tell = expected[order], lw[order], tell[order]
    species = lines["species"].to_numpy()[order]
    kind = lines["kind"].astype(str).to_numpy()[order]
    strength = lines["strength"].to_numpy(dtype=np.float64)[order]
    bands = band_regions(lines, "vacuum" if medium == "vacuum" else "air")
    ident, unid = [], []
    for row in features.itertuples(index=False):
        pos_kms = row.observed_err_A / row.observed_A * C_KMS
        tol = math.sqrt((3 * pos_kms) ** 2 + (3 * rv_err_kms) ** 2 + (0.25 * line_fwhm_kms) ** 2)
        lo = np.searchsorted(expected, row.observed_A * (1 - 1.2 * tol / C_KMS))
        hi = np.searchsorted(expected, row.observed_A * (1 + 1.2 * tol / C_KMS))
        best = None
        for j in range(lo, hi):
            off = (row.observed_A / expected[j] - 1.0) * C_KMS
            if abs(off) > tol:
                continue
            score = abs(off) / tol + 0.05 * (strength[j] - 1)
            if best is None or score < best[0]:
                best = (score, j, off)
        base = row._asdict()
        if best is None:
            band = _in_band(row.observed_A, bands, factor)
            if band is None:
                unid.append(base)
            else:
                sp, knd, ref = band
                ident.append({**base, "rest_A": ref, "species": sp, "kind": knd,
                              "offset_kms": float("nan"), "quality": 0.0})
            continue
        _, j, off = best
        rest = lw[j]
        ident.append({
            **base,
            "rest_A": rest,
            "species": species[j],
            "kind": "telluric" if tell[j] else kind[j],
            "offset_kms": off,
            "quality": 1.0 - abs(off) / tol,
        })
    ident_df = pd.DataFrame(ident, columns=list(COLUMNS))
    unid_df = pd.DataFrame(unid, columns=list(features.columns))
    if len(unid_df):
        unid_df = unid_df.sort_values("significance", ascending=False, ignore_index=True)
    return ident_df, unid_df


def _in_band(observed_A: float, bands, factor: float):
    """(species, kind, ref_A) of the narrowest band holding a feature, telluric bands first."""
    rest = observed_A / factor
    for kind_, at in (("telluric_band", observed_A), ("molecular_band", rest)):
        inside = [b for b in bands if b[3] == kind_ and b[0] <= at <= b[1]]
        if inside:
            lo, hi, sp, knd, ref = min(inside, key=lambda b: b[1] - b[0])
            return sp, knd, ref
    return None


def block_noise(norm_flux, block: int = 2000) -> np.ndarray:
    """Per-sample noise of a normalised flux: DER_SNR's noise (Stoehr et al. 2008, ASP
    Conf. Ser. 394, 505) of each block of ``block`` samples (NaN where too few are finite)."""
    fn = np.asarray(norm_flux, dtype=np.float64)
    sn = np.empty_like(fn)
    for j in range(0, fn.size, block):
        blk = fn[j : j + block]
        sn[j : j + block] = der_noise(blk[np.isfinite(blk)]) if np.isfinite(blk).sum() > 20 else np.nan
    return sn


def spectrum_features(wave_A, flux, *, line_fwhm_kms: float = 10.0, uncertainty=None, mask=None,
                      continuum=None, normalised: bool = False, min_sigma: float = 5.0) -> pd.DataFrame:
    """Absorption features of a 1-D spectrum (:func:`find_features`), before any matching.

    The continuum is ``continuum``, or none when ``normalised``, else fitted by
    :func:`atlas.measure.rv.normalise`.  Without ``uncertainty`` the noise comes from
    DER_SNR (Stoehr et al. 2008, ASP Conf. Ser. 394, 505) in blocks of 2000 samples.
    """
    w = np.asarray(wave_A, dtype=np.float64).ravel()
    f = np.asarray(flux, dtype=np.float64).ravel()
    order = np.argsort(w, kind="stable")
    w, f = w[order], f[order]
    bad = ~np.isfinite(f)
    if mask is not None:
        bad |= np.asarray(mask, dtype=bool).ravel()[order]
    if normalised:
        c = np.ones_like(f)
    elif continuum is not None:
        c = np.asarray(continuum, dtype=np.float64).ravel()[order]
    else:
        c = normalise(w, f, bad)
    with np.errstate(divide="ignore", invalid="ignore"):
        fn = np.where(bad | ~(c > 0), np.nan, f / c)
    if uncertainty is not None:
        with np.errstate(divide="ignore", invalid="ignore"):
            sn = np.asarray(uncertainty, dtype=np.float64).ravel()[order] / c
    else:
        sn = block_noise(fn)
    return find_features(w, fn, sn, line_fwhm_kms=line_fwhm_kms, min_sigma=min_sigma)


def identify_spectrum(wave_A, flux, lines, *, rv_obs_kms: float, rv_err_kms: float = 0.0,
                      line_fwhm_kms: float = 10.0, uncertainty=None, mask=None, continuum=None,
                      normalised: bool = False, medium: str = "vacuum", min_sigma: float = 5.0):
    """Find and identify the absorption lines of a 1-D spectrum: (identified, unidentified).

    Features of :func:`spectrum_features`, matched to the nearest listed line by
    :func:`identify`.
    """
    feats = spectrum_features(wave_A, flux, line_fwhm_kms=line_fwhm_kms, uncertainty=uncertainty,
                              mask=mask, continuum=continuum, normalised=normalised, min_sigma=min_sigma)
    return identify(feats, lines, rv_obs_kms=rv_obs_kms, rv_err_kms=rv_err_kms,
                    line_fwhm_kms=line_fwhm_kms, medium=medium)
