"""Colour temperature (flux-calibrated spectra) and spectral class from the template grid.

Class: the spectrum is moved to the star's rest frame, normalised to its continuum,
and compared by chi-square with the noise-free class templates of
:mod:`atlas.synth.templates`, computed at the star's own line width and normalised by
the same continuum procedure.  The best template and its better neighbour are mixed
linearly (least squares) to place the star between grid classes; the mixing fraction
interpolates the subclass and, in log Teff, the temperature.  The confidence is the
share of the likelihood exp(-(chi2 - chi2_min) / (2 chi2_min/dof)) that falls on the
templates within 5 subclasses of the estimate (chi2 scaled by the best reduced chi2,
as template mismatch, not photon noise, dominates).

References
----------
Morgan, Keenan & Kellman (1943), An Atlas of Stellar Spectra (the MK classes);
Pecaut & Mamajek (2013), ApJS 208, 9 (class-Teff scale of the templates);
Planck (1901) via :func:`atlas.physics.planck.fit_colour_temperature`.
"""

from __future__ import annotations

import functools
import math
from dataclasses import asdict, dataclass

import numpy as np

from atlas.measure.rv import C_KMS, der_noise, normalise

LETTERS = "OBAFGKM"
#: flux units that mean a calibrated spectral flux density (astropy physical types)
_CALIBRATED_TYPES = {"spectral flux density", "spectral flux density wav"}


@dataclass
class ClassResult:
    """Spectral class estimate and the temperature it implies (K)."""

    spectral_class: str | None
    class_confidence: float | None
    class_teff_k: float | None
    best_template: str | None
    runner_up: str | None
    note: str = ""
    #: the range the criteria and the template fit allow ("B3-B7"), or "uncertain"
    class_range: str | None = None
    #: the criteria behind it: [{"name", "value", "says"}] (atlas.measure.criteria)
    class_criteria: list | None = None

    def as_dict(self) -> dict:
        return asdict(self)


def class_number(name: str) -> float:
    """O0 -> 0, B0 -> 10, ..., M5 -> 65 (letter * 10 + subclass)."""
    return LETTERS.index(name[0]) * 10 + float(name[1:])


def class_name(number: float) -> str:
    """Inverse of :func:`class_number`, rounded to a whole subclass (e.g. 42.4 -> G2)."""
    n = int(round(number))
    n = min(max(n, 0), len(LETTERS) * 10 - 1)
    return f"{LETTERS[n // 10]}{n % 10}"


def is_calibrated(ds) -> bool:
    """True when the Spectrum's ``flux_unit`` is a spectral flux density (astropy units)."""
    import astropy.units as u

    unit = ds.attrs.get("flux_unit") if hasattr(ds, "attrs") else None
    if not unit:
        return False
    try:
        names = set(str(u.Unit(str(unit)).physical_type).split("/"))
        return bool(names & _CALIBRATED_TYPES)
    except (ValueError, TypeError):
        return False


def colour_temperature(wave_A, flux, uncertainty=None, mask=None, *, nbins: int = 400):
    """Colour temperature (K, error K) from a Planck fit to a flux-calibrated spectrum.

    The Planck curve is fitted to the spectrum's continuum (the build's upper-envelope
    fit, :func:`atlas.measure.rv.normalise`, so absorption lines do not cool it), read
    in ``nbins`` bins of equal ln(wavelength) width; each bin's error is
    sigma / sqrt(n) (sigma from ``uncertainty`` or DER_SNR).  The error is multiplied by
    sqrt(reduced chi-square) when the curve fits worse than the noise allows.

    References
    ----------
    Planck (1901); :func:`atlas.physics.planck.fit_colour_temperature`.
    """
    from atlas.physics.planck import b_lambda, fit_colour_temperature

    w = np.asarray(wave_A, dtype=np.float64).ravel()
    f = np.asarray(flux, dtype=np.float64).ravel()
    ok = np.isfinite(w) & np.isfinite(f) & (w > 0)
    if mask is not None:
        ok &= ~np.asarray(mask, dtype=bool).ravel()
    s = None if uncertainty is None else np.asarray(uncertainty, dtype=np.float64).ravel()
    w, f = w[ok], f[ok]
    s = None if s is None else s[ok]
    order = np.argsort(w)
    w, f = w[order], f[order]
    s = None if s is None else s[order]
    cont = normalise(w, f)
    x = np.log(w)
    edges = np.linspace(x[0], x[-1] + 1e-12, nbins + 1)
    idx = np.searchsorted(edges, x, side="right") - 1
    bw, bf, bs = [], [], []
    for i in range(nbins):
        a, b = np.searchsorted(idx, [i, i + 1])
        if b - a < 5:
            continue
        sig = float(np.median(s[a:b])) if s is not None else der_noise(f[a:b])
        c_i = float(np.median(cont[a:b]))
        if not (sig > 0 and np.isfinite(c_i) and c_i > 0):
            continue
        bw.append(float(np.exp(np.mean(x[a:b]))))
        bf.append(c_i)
        bs.append(sig / math.sqrt(b - a))
    bw, bf, bs = np.array(bw), np.array(bf), np.array(bs)
    teff, err, scale = fit_colour_temperature(bw, bf, bs)
    model = scale * np.asarray(b_lambda(bw, teff), dtype=np.float64)
    chi2r = float(np.sum(((bf - model) / bs) ** 2) / max(bw.size - 2, 1))
    if np.isfinite(chi2r) and chi2r > 1.0:
        err *= math.sqrt(chi2r)
    return float(teff), float(err)


@functools.lru_cache(maxsize=8)
def _templates(lo_A: float, hi_A: float, n: int, resolving_power: float, medium: str):
    from atlas.synth.templates import template_grid

    grid = np.exp(np.linspace(math.log(lo_A), math.log(hi_A), n))
    ds = template_grid(grid, R=resolving_power, medium=medium)
    names = [str(c) for c in ds["class"].values]
    flux = np.asarray(ds["flux"].values)
    # the same continuum procedure as the star's, so both are normalised alike
    flux = np.array([t / normalise(grid, t) for t in flux])
    return grid, names, np.asarray(ds["teff_k"].values, dtype=np.float64), flux


def classify(wave_A, flux, uncertainty=None, mask=None, *, rv_obs_kms: float = 0.0,
             line_fwhm_kms: float | None = None, resolving_power: float | None = None,
             medium: str = "vacuum", max_samples: int = 40_000, template_samples: int = 24_000,
             class_resolving_power: float = 5000.0,
             lo_A: float = 3800.0, hi_A: float = 9000.0) -> ClassResult:
    """Spectral class (e.g. ``G2``) of a 1-D spectrum by chi-square against the templates.

    ``rv_obs_kms`` moves the spectrum to rest; the templates are made at resolving power
    ``c / line_fwhm_kms`` when the star's line width is known (so rotation is matched
    too), else ``resolving_power``.  Only ``lo_A``..``hi_A`` is used.

    References
    ----------
    Pecaut & Mamajek (2013), ApJS 208, 9; Morgan, Keenan & Kellman (1943).
    """
    w = np.asarray(wave_A, dtype=np.float64).ravel()
    f = np.asarray(flux, dtype=np.float64).ravel()
    ok = np.isfinite(w) & np.isfinite(f)
    if mask is not None:
        ok &= ~np.asarray(mask, dtype=bool).ravel()
    beta = rv_obs_kms / C_KMS
    rest = w / math.sqrt((1 + beta) / (1 - beta))
    ok &= (rest > max(lo_A, 3750.0)) & (rest < min(hi_A, 9050.0))
    if ok.sum() < 200:
        return ClassResult(None, None, None, None, None,
                           note=f"too little spectrum between {lo_A:g} and {hi_A:g} Å to classify")
    order = np.argsort(rest[ok])
    rw, fl = rest[ok][order], f[ok][order]
    s = None if uncertainty is None else np.asarray(uncertainty, dtype=np.float64).ravel()[ok][order]
    cont = normalise(rw, fl)
    fn = fl / cont
    if s is None:
        sn = np.full(fn.size, der_noise(fn))
    else:
        sn = s / cont
    good = np.isfinite(fn) & np.isfinite(sn) & (sn > 0)
    rw, fn, sn = rw[good], fn[good], sn[good]
    if line_fwhm_kms and line_fwhm_kms > 0:
        r_eff = C_KMS / line_fwhm_kms
    elif resolving_power:
        r_eff = float(resolving_power)
    else:
        r_eff = class_resolving_power
    # compare at the class resolving power (MK classes are defined at low resolution):
    # the star is smoothed down to it when sharper, onto a uniform ln(wavelength) grid
    r_cmp = min(class_resolving_power, r_eff)
    r_cmp = float(10 ** (round(math.log10(r_cmp) * 20) / 20))  # shared cached templates
    n_grid = int(min(max(4 * r_cmp * math.log(rw[-1] / rw[0]), 500), max_samples))
    ug = np.exp(np.linspace(math.log(rw[0]), math.log(rw[-1]), n_grid))
    pix_kms = math.log(rw[-1] / rw[0]) / (n_grid - 1) * C_KMS
    fu = np.interp(ug, rw, fn)
    su = np.interp(ug, rw, sn)
    extra = (C_KMS / r_cmp) ** 2 - (C_KMS / r_eff) ** 2
    if extra > 0:
        sig_pix = math.sqrt(extra) / 2.3548200450309493 / pix_kms
        if sig_pix > 0.3:
            from scipy.ndimage import gaussian_filter1d

            fu = gaussian_filter1d(fu, sig_pix, mode="nearest")
            half = int(4 * sig_pix) + 1
            k = np.exp(-0.5 * (np.arange(-half, half + 1) / sig_pix) ** 2)
            k /= k.sum()
            su = su * math.sqrt(float((k**2).sum()))
    rw, fn, sn = ug, fu, su
    grid, names, teffs, tflux = _templates(3700.0, 9100.0, template_samples, r_cmp,
                                           "vacuum" if medium == "vacuum" else "air")
    t_on = np.array([np.interp(rw, grid, t) for t in tflux])
    iv = 1.0 / sn**2
    chi2 = np.array([float(np.sum((fn - t) ** 2 * iv)) for t in t_on])
    k = int(np.argmin(chi2))
    # mix with the better neighbour: f ~ (1 - a) t_k + a t_j, a in [0, 1]
    best_num = class_number(names[k])
    best_teff = teffs[k]
    best_mix = chi2[k]
    for j in (k - 1, k + 1):
        if not 0 <= j < len(names):
            continue
        dt = t_on[j] - t_on[k]
        den = float(np.sum(dt * dt * iv))
        if den <= 0:
            continue
        a = float(np.clip(np.sum((fn - t_on[k]) * dt * iv) / den, 0.0, 1.0))
        c2 = float(np.sum((fn - t_on[k] - a * dt) ** 2 * iv))
        if c2 < best_mix:
            best_mix = c2
            best_num = (1 - a) * class_number(names[k]) + a * class_number(names[j])
            best_teff = math.exp((1 - a) * math.log(teffs[k]) + a * math.log(teffs[j]))
    dof = max(rw.size - 2, 1)
    scale = max(chi2[k] / dof, 1.0)
    like = np.exp(-(chi2 - chi2[k]) / (2 * scale))
    # templates within 5 subclasses of the estimate (its grid neighbours) share the credit
    near = np.array([abs(class_number(n) - best_num) <= 5.0 for n in names])
    conf = float(like[near].sum() / like.sum())
    second = names[int(np.argsort(chi2)[1])] if len(names) > 1 else None
    # published criteria (line ratios, band depths) calibrated on our class sequence, with
    # the template fit as one more term: atlas.measure.criteria
    from atlas.measure import criteria as cr
    from atlas.synth.templates import subclass_teff_k

    half = round(max(1.0, 1.2 * 4500.0 / r_cmp), 1)
    # normalised again at the compared resolution, as the calibration sequence is
    renorm = normalise(rw, fn)
    vals, errs = cr.measure(rw, fn / renorm, sn / renorm, half_A=half)
    comb = cr.combine(vals, errs, cr.calibration(grid, r_cmp, half), best_num)
    if comb.number is None:
        return ClassResult(None, None, None, names[k], second, note=comb.note,
                           class_range=comb.class_range, class_criteria=comb.criteria)
    if abs(comb.number - best_num) >= 0.5:
        best_num, best_teff = comb.number, subclass_teff_k(comb.number)
    return ClassResult(class_name(best_num), conf, float(best_teff), names[k], second,
                       class_range=comb.class_range, class_criteria=comb.criteria)
