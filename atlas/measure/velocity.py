"""A star's radial velocity from a Spectrum: the line-mask fit, the template fit where it
fails (hot or fast-rotating stars), the barycentric correction, and the binning of very
long spectra before any of it.

:mod:`atlas.measure.rv` (the line-mask cross-correlation) and
:mod:`atlas.measure.rv_template` (the template fit) are the two methods; this module
chooses between them, so neither imports the other's caller.
"""

from __future__ import annotations

import math

import numpy as np

from atlas.measure.rv import RVResult, line_mask, measure_rv, vsini_rough
from atlas.physics.constants import C_KMS


def rv_of_spectrum(ds, lines=None, *, site=None, radec=None, time=None,
                   v_min_kms: float = -300.0, v_max_kms: float = 300.0,
                   continuum=None) -> RVResult:
    """Radial velocity of a Spectrum Dataset, with the barycentric correction when known.

    Uses the shipped line list unless ``lines`` (a DataFrame of the same columns) is
    given, in the column matching the spectrum's medium (``unknown`` is read as air,
    noted in ``note``).  ``site``/``radec``/``time`` override the file as in
    :func:`atlas.physics.barycentric.correction_for`.  ``rv_kms`` is barycentric:
    v = v_obs + v_bary + v_obs v_bary / c.

    References
    ----------
    Wright & Eastman (2014), PASP 126, 838.
    """
    from atlas.physics.barycentric import apply_kms, correction_for
    from atlas.spectrum import medium_of

    if lines is None:
        from atlas.lines import load_lines

        lines = load_lines()
    medium = medium_of(ds)
    lw, wt = line_mask(lines, "vacuum" if medium == "vacuum" else "air")
    unc = ds["uncertainty"].values if "uncertainty" in ds else None
    mask = ds["mask"].values if "mask" in ds else None
    res = measure_rv(ds["wavelength"].values, ds["flux"].values, unc, mask,
                     line_wave_A=lw, line_weight=wt, continuum=continuum,
                     v_min_kms=v_min_kms, v_max_kms=v_max_kms)
    if needs_template(res):
        from atlas.measure.rv_template import template_rv

        tres = template_rv(ds["wavelength"].values, ds["flux"].values, unc, mask,
                           continuum=continuum, medium="vacuum" if medium == "vacuum" else "air",
                           resolving_power=ds.attrs.get("resolving_power"), lines=lines,
                           v_min_kms=v_min_kms, v_max_kms=v_max_kms)
        res = choose_rv(res, tres)
    notes = [res.note] if res.note else []
    if medium == "unknown":
        notes.append("wavelength medium unknown: read as air")
    bary, missing = correction_for(ds, site=site, radec=radec, time=time)
    res.barycentric_kms = bary
    if bary is None:
        notes.append("no barycentric correction: missing " + ", ".join(missing) + " (give --time/--site/--radec)")
    elif res.rv_obs_kms is not None:
        res.rv_kms = float(apply_kms(res.rv_obs_kms, bary))
    if res.method == "line mask":
        res.vsini_rough_kms = vsini_rough(res.line_fwhm_kms, ds.attrs.get("resolving_power"))
    res.note = "; ".join(notes)
    return res


#: Line-mask results below this significance, or with lines broader than this FWHM
#: (km/s), are checked against the template fit (our choice, from the demo and tests).
MASK_MIN_SIGNIFICANCE = 10.0
MASK_MAX_FWHM_KMS = 60.0


def needs_template(res: RVResult) -> bool:
    """True when a line-mask result is missing, unreliable, weak or from broad lines."""
    if res.rv_obs_kms is None or "unreliable" in (res.note or ""):
        return True
    if res.significance is not None and res.significance < MASK_MIN_SIGNIFICANCE:
        return True
    return bool(res.line_fwhm_kms and res.line_fwhm_kms > MASK_MAX_FWHM_KMS)


def choose_rv(mask_res: RVResult, template_res: RVResult) -> RVResult:
    """The better of a line-mask and a template result (a usable one, then the smaller error)."""
    mask_ok = mask_res.rv_obs_kms is not None and "unreliable" not in (mask_res.note or "")
    tmpl_ok = template_res.rv_obs_kms is not None
    if tmpl_ok and (not mask_ok or template_res.rv_err_kms < mask_res.rv_err_kms):
        if mask_res.rv_obs_kms is None or not mask_ok:
            why = mask_res.note or "line mask failed"
            template_res.note = "; ".join(x for x in (template_res.note, f"line mask: {why}") if x)
        return template_res
    if not mask_ok and not tmpl_ok and template_res.note:
        mask_res.note = "; ".join(x for x in (mask_res.note, template_res.note) if x)
    return mask_res


#: Stars this cool or cooler (K; F0 and later) have lines dense enough that the curated
#: mask is blended: their velocity is re-measured against the templates of their own
#: class (:func:`refine_with_class`).  Our choice, from tests/bench/bench_ident.py.
DENSE_TEFF_K = 7500.0
#: Half-width (km/s) of the velocity search around the first estimate when refining.
REFINE_HALF_KMS = 30.0


def neighbour_classes(teff_k: float) -> tuple[str, ...]:
    """The template classes (:data:`atlas.synth.templates.CLASS_TEFF_K`) either side of
    ``teff_k``, or the nearest one beyond the grid's ends."""
    from atlas.synth.templates import CLASS_TEFF_K

    names = sorted(CLASS_TEFF_K, key=CLASS_TEFF_K.get)  # coolest first
    temps = [CLASS_TEFF_K[n] for n in names]
    k = int(np.searchsorted(temps, float(teff_k)))
    if k <= 0:
        return (names[0],)
    if k >= len(names):
        return (names[-1],)
    return (names[k - 1], names[k])


def template_step_kms(line_fwhm_kms: float) -> float:
    """Grid step (km/s) of a template fit for lines of this FWHM: a tenth of it, within
    0.5-2.5 km/s (coarser bins biased a dense G star by 0.15 km/s in bench_ident)."""
    return float(np.clip(line_fwhm_kms / 10.0, 0.5, 2.5))


def refine_with_class(ds, res: RVResult | None, class_teff_k: float | None, lines, *,
                      continuum=None) -> RVResult | None:
    """A cool star's velocity re-measured against the templates next to its class.

    When the star is at or below :data:`DENSE_TEFF_K` and its first velocity came from
    the hot-star template fit or from an unreliable line mask (as on spectra with
    thousands of blended lines), :func:`atlas.measure.rv_template.template_rv` is run
    with :func:`neighbour_classes` at :func:`template_step_kms`, within
    :data:`REFINE_HALF_KMS` of the first velocity; its result replaces the first when it
    finds a minimum.  Otherwise ``res`` is returned unchanged.
    """
    from atlas.measure.rv_template import template_rv
    from atlas.physics.barycentric import apply_kms
    from atlas.spectrum import medium_of

    if res is None or res.rv_obs_kms is None or class_teff_k is None or not np.isfinite(class_teff_k):
        return res
    if class_teff_k > DENSE_TEFF_K or (res.method == "line mask" and not needs_template(res)):
        return res
    r = ds.attrs.get("resolving_power")
    fwhm = res.line_fwhm_kms or (C_KMS / float(r) if r else 10.0)
    classes = neighbour_classes(class_teff_k)
    medium = medium_of(ds)
    t = template_rv(ds["wavelength"].values, ds["flux"].values,
                    ds["uncertainty"].values if "uncertainty" in ds else None,
                    ds["mask"].values if "mask" in ds else None, continuum=continuum,
                    medium="vacuum" if medium == "vacuum" else "air", resolving_power=r, lines=lines,
                    classes=classes, v_min_kms=res.rv_obs_kms - REFINE_HALF_KMS,
                    v_max_kms=res.rv_obs_kms + REFINE_HALF_KMS, step_kms=template_step_kms(fwhm))
    if t.rv_obs_kms is None:
        return res
    t.barycentric_kms = res.barycentric_kms
    if res.barycentric_kms is not None:
        t.rv_kms = float(apply_kms(t.rv_obs_kms, res.barycentric_kms))
    said = f"velocity re-measured against the {'/'.join(classes)} templates (dense lines)"
    t.note = "; ".join(x for x in (t.note, said) if x)
    return t


#: Spectra longer than this (samples) are binned before the velocity, class and feature
#: steps, so their memory stays bounded (see :func:`bin_long_spectrum`).
LONG_SAMPLES = 2_000_000
#: Bin width (km/s) for long spectra: a boxcar this wide adds sigma = width / sqrt(12)
#: = 0.14 km/s in quadrature to a line, far below any stellar line width (common practice).
LONG_BIN_KMS = 0.5


def bin_long_spectrum(ds, *, max_samples: int = LONG_SAMPLES, step_kms: float = LONG_BIN_KMS,
                      piece: int = 1_000_000):
    """A long 1-D sorted Spectrum binned to ``step_kms`` in ln(wavelength): (Dataset, note).

    Returned unchanged (note None) when it is short, 2-D, unsorted, or sampled coarser
    than half the bin (binning would gain nothing), or when the resolving power in its
    attributes puts fewer than 4 bins in a resolution element.  Each bin is the mean of
    its good samples (wavelength and flux), its uncertainty sqrt(sum sigma^2) / n; bins
    with no good sample are masked.  Works ``piece`` samples at a time.
    """
    import xarray as xr

    wave = ds["wavelength"].values
    if wave.ndim != 1 or wave.size <= max_samples:
        return ds, None
    r = ds.attrs.get("resolving_power")
    if r:
        try:
            step_kms = min(step_kms, C_KMS / float(r) / 4.0)
        except (TypeError, ValueError):
            pass
    n_all = wave.size
    span = math.log(float(wave[-1]) / float(wave[0])) if wave[0] > 0 and wave[-1] > wave[0] else 0.0
    if span <= 0 or span * C_KMS / (n_all - 1) > step_kms / 2:
        return ds, None
    if np.any(np.diff(wave[:: max(1, n_all // 10_000)]) < 0):
        return ds, None
    dln = step_kms / C_KMS
    nb = int(span / dln) + 1
    x0 = math.log(float(wave[0]))
    wsum = np.zeros(nb)
    fsum = np.zeros(nb)
    vsum = np.zeros(nb)
    cnt = np.zeros(nb)
    has_unc = "uncertainty" in ds and np.isfinite(ds["uncertainty"].values[: min(n_all, 1000)]).any()
    for a in range(0, n_all, piece):
        sl = slice(a, min(n_all, a + piece))
        w = np.asarray(wave[sl], dtype=np.float64)
        f = np.asarray(ds["flux"].values[sl], dtype=np.float64)
        good = np.isfinite(f) & np.isfinite(w) & (w > 0)
        if "mask" in ds:
            good &= ~np.asarray(ds["mask"].values[sl], dtype=bool)
        u = None
        if has_unc:
            u = np.asarray(ds["uncertainty"].values[sl], dtype=np.float64)
            good &= np.isfinite(u)
        idx = np.clip(((np.log(w[good]) - x0) / dln).astype(np.int64), 0, nb - 1)
        wsum += np.bincount(idx, weights=w[good], minlength=nb)
        fsum += np.bincount(idx, weights=f[good], minlength=nb)
        cnt += np.bincount(idx, minlength=nb)
        if u is not None:
            vsum += np.bincount(idx, weights=u[good] ** 2, minlength=nb)
    empty = cnt == 0
    centre = np.exp(x0 + dln * (np.arange(nb) + 0.5))
    with np.errstate(invalid="ignore", divide="ignore"):
        wb = np.where(empty, centre, wsum / cnt)
        fb = np.where(empty, np.nan, fsum / cnt)
        ub = np.where(empty, np.nan, np.sqrt(vsum) / cnt)
    del wsum, fsum, vsum
    # means of bins are increasing except where a bin is empty: keep the grid order
    wb = np.maximum.accumulate(wb)
    data = {"flux": ("sample", fb), "mask": ("sample", empty)}
    if has_unc:
        data["uncertainty"] = ("sample", ub)
    attrs = dict(ds["wavelength"].attrs)
    out = xr.Dataset(data, coords={"wavelength": ("sample", wb, attrs)}, attrs=dict(ds.attrs))
    return out, f"{n_all:,} samples binned to {step_kms:g} km/s ({nb:,} bins) for the measurements"
