"""Planck's law per unit wavelength, Wien's peak, and colour-temperature fits.

Wavelengths in Å, temperatures in K, B_lambda in erg s^-1 cm^-2 Å^-1 sr^-1.
Evaluation goes through ``astropy.modeling.physical_models.BlackBody`` with a
per-Å scale (a bare float would be read as a frequency in Hz, so Quantities are
passed).

References
----------
Planck, M. (1901), Ann. Phys. 4, 553.
Wien's displacement constant b = 2.897771955e-3 m K (CODATA 2018, Tiesinga et al. 2021,
Rev. Mod. Phys. 93, 025010), via astropy.constants.b_wien.
"""

from __future__ import annotations

import warnings

import astropy.units as u
import numpy as np
from astropy.constants import b_wien, c, h, k_B
from astropy.modeling.physical_models import BlackBody
from scipy.optimize import OptimizeWarning, curve_fit, minimize_scalar

from atlas.errors import InputError

#: Unit of :func:`b_lambda`.
B_LAMBDA_UNIT = u.erg / (u.s * u.cm**2 * u.AA * u.sr)


def b_lambda(wave_A, teff_k):
    """Planck spectral radiance B_lambda (erg s^-1 cm^-2 Å^-1 sr^-1) at ``wave_A`` (Å), ``teff_k`` (K).

    References
    ----------
    Planck (1901); astropy.modeling.physical_models.BlackBody.
    """
    bb = BlackBody(temperature=float(teff_k) * u.K, scale=1.0 * B_LAMBDA_UNIT)
    return bb(np.asarray(wave_A, dtype=np.float64) * u.AA).to_value(B_LAMBDA_UNIT)


def b_lambda_q(wave, temperature):
    """Quantity version of :func:`b_lambda`: any spectral unit in, B_lambda per Å out."""
    bb = BlackBody(temperature=u.Quantity(temperature, u.K), scale=1.0 * B_LAMBDA_UNIT)
    return bb(u.Quantity(wave).to(u.AA, equivalencies=u.spectral())).to(B_LAMBDA_UNIT)


def wien_peak_A(teff_k):
    """Wavelength (Å) where B_lambda peaks for temperature ``teff_k`` (K): b / T.

    References
    ----------
    Wien's displacement law; b from CODATA 2018 (astropy.constants.b_wien).
    """
    return (b_wien / (np.asarray(teff_k, dtype=np.float64) * u.K)).to_value(u.AA)


_C1 = (2 * h * c**2).to_value(u.erg * u.AA**4 / u.s / u.cm**2)  # 2 h c^2, erg Å^4 s^-1 cm^-2
_C2 = (h * c / k_B).to_value(u.AA * u.K)  # h c / k, Å K


def b_lambda_fast(wave_A, teff_k):
    """Same as :func:`b_lambda` (erg s^-1 cm^-2 Å^-1 sr^-1) in plain numpy, for inner loops of fits.

    Constants from astropy.constants (h, c, k exact since the 2019 SI); a test checks it
    against ``BlackBody`` to 1e-10.

    References
    ----------
    Planck (1901).
    """
    w = np.asarray(wave_A, dtype=np.float64)
    with np.errstate(over="ignore"):
        return _C1 / w**5 / np.expm1(_C2 / (w * float(teff_k)))


#: Spectra longer than this are averaged into ``_FIT_BINS`` bins of equal sample count
#: before a colour-temperature fit (a Planck curve is smooth on that scale).
_MAX_FIT_SAMPLES = 8192
_FIT_BINS = 4096


def _bin_samples(w, f, sig, nbins):
    # Contiguous bins of equal sample count; inverse-variance weighted means when
    # uncertainties are given (bin uncertainty 1/sqrt(sum of weights)), plain means otherwise.
    order = np.argsort(w, kind="stable")
    w, f = w[order], f[order]
    starts = np.linspace(0, w.size, nbins + 1).astype(np.int64)[:-1]
    counts = np.diff(np.append(starts, w.size))
    if sig is None:
        return (np.add.reduceat(w, starts) / counts, np.add.reduceat(f, starts) / counts, None)
    wt = 1.0 / sig[order] ** 2
    sw = np.add.reduceat(wt, starts)
    return (
        np.add.reduceat(wt * w, starts) / sw,
        np.add.reduceat(wt * f, starts) / sw,
        1.0 / np.sqrt(sw),
    )


def _log_expm1(x):
    # log(exp(x) - 1) without overflow for large x.
    x = np.asarray(x, dtype=np.float64)
    big = x > 30.0
    with np.errstate(over="ignore", divide="ignore"):
        return np.where(big, x + np.log1p(-np.exp(-x)), np.log(np.expm1(np.minimum(x, 30.0))))


def fit_colour_temperature(wave_A, flux, uncertainty=None, *, t_min_k=1000.0, t_max_k=100000.0):
    """Fit a scaled Planck curve to a spectrum: the colour temperature.

    ``wave_A`` in Å, ``flux`` in any per-wavelength unit (any scale),
    ``uncertainty`` (same unit) optional.  Non-finite samples, and samples whose
    uncertainty is not positive, are ignored.  Returns ``(teff_k, teff_err_k, scale)`` where the model is
    ``scale * B_lambda(wave_A, teff_k)`` with B_lambda from :func:`b_lambda`.  Without
    uncertainties the error is scaled by the scatter of the residuals.

    Spectra of more than 8192 usable samples are first averaged into 4096 bins of
    equal sample count (inverse-variance weighted when uncertainties are given), which
    leaves the fitted temperature and its error practically unchanged for a smooth
    Planck curve and keeps the fit fast on millions of samples.

    Raises ``InputError`` when fewer than 3 usable samples remain.

    References
    ----------
    Planck (1901); scipy.optimize.curve_fit (Levenberg-Marquardt least squares).
    """
    w = np.asarray(wave_A, dtype=np.float64).ravel()
    f = np.asarray(flux, dtype=np.float64).ravel()
    sig = None if uncertainty is None else np.asarray(uncertainty, dtype=np.float64).ravel()
    ok = np.isfinite(w) & np.isfinite(f) & (w > 0)
    if sig is not None:
        ok &= np.isfinite(sig) & (sig > 0)
    if ok.sum() < 3:
        raise InputError("flux", "fewer than 3 usable samples for a colour-temperature fit")
    w, f = w[ok], f[ok]
    sig = None if sig is None else sig[ok]
    if w.size > _MAX_FIT_SAMPLES:
        w, f, sig = _bin_samples(w, f, sig, _FIT_BINS)
    fscale = np.nanmax(np.abs(f))
    if not fscale > 0:
        raise InputError("flux", "flux is zero everywhere; no colour temperature")
    fn = f / fscale
    sn = None if sig is None else sig / fscale
    wref = float(np.median(w))
    weights = 1.0 if sn is None else 1.0 / sn**2
    # Shape B(w, T) / B(wref, T) = (wref / w)^5 expm1(c2 / (wref T)) / expm1(c2 / (w T)),
    # with the T-independent parts computed once (this runs ~100 times per fit).
    ratio5 = (wref / w) ** 5
    u_w = _C2 / w
    u_ref = _C2 / wref

    def shape(t):
        return ratio5 * np.exp(_log_expm1(u_ref / t) - _log_expm1(u_w / t))

    def best_amp(t):
        m = shape(t)
        a = np.sum(weights * m * fn) / np.sum(weights * m * m)
        return a, m

    def chi2(log_t):
        a, m = best_amp(np.exp(log_t))
        return float(np.sum(weights * (fn - a * m) ** 2))

    # Coarse grid then bounded 1-D search in log T, then a joint fit for the errors.
    grid = np.linspace(np.log(t_min_k), np.log(t_max_k), 60)
    vals = [chi2(g) for g in grid]
    i = int(np.argmin(vals))
    lo, hi = grid[max(i - 1, 0)], grid[min(i + 1, len(grid) - 1)]
    res = minimize_scalar(chi2, bounds=(lo, hi), method="bounded", options={"xatol": 1e-7})
    t0 = float(np.exp(res.x))
    a0, _ = best_amp(t0)

    def model(x, t, a):
        return a * shape(t)  # x is w: curve_fit evaluates on the same samples

    with warnings.catch_warnings():
        warnings.simplefilter("ignore", OptimizeWarning)
        try:
            popt, pcov = curve_fit(
                model,
                w,
                fn,
                p0=(t0, a0),
                sigma=sn,
                absolute_sigma=sn is not None,
                bounds=((t_min_k, 0.0), (t_max_k, np.inf)),
            )
            t_fit, a_fit = float(popt[0]), float(popt[1])
            t_err = float(np.sqrt(pcov[0, 0])) if np.isfinite(pcov[0, 0]) else float("nan")
        except (RuntimeError, ValueError):
            t_fit, a_fit, t_err = t0, a0, float("nan")
    scale = a_fit * fscale / float(b_lambda_fast(wref, t_fit))
    return t_fit, t_err, scale
