"""All measurements of one Spectrum in one call: velocity, lines, temperature, class.

Used by ``striae measure`` and available to the viewer; the build's per-star numbers
come from :func:`atlas.measure.card.star_measurements`, which calls the same pieces.
"""

from __future__ import annotations

import numpy as np

from atlas.measure import classify as cls
from atlas.measure import identify as ident
from atlas.measure import rv as rvmod
from atlas.measure import velocity
from atlas.spectrum import finite_or_none


def normalised_1d(ds, continuum=None):
    """(wave_A, norm_flux, norm_sigma, flux, sigma) of a Spectrum as one sorted 1-D run.

    Echelle orders are normalised each by its own continuum, then merged.  Masked or
    non-finite samples are dropped; sigma is None without an uncertainty variable.
    """
    wave = np.atleast_2d(np.asarray(ds["wavelength"].values, dtype=np.float64))
    flux = np.atleast_2d(np.asarray(ds["flux"].values, dtype=np.float64))
    unc = np.atleast_2d(ds["uncertainty"].values) if "uncertainty" in ds else None
    mask = np.atleast_2d(ds["mask"].values) if "mask" in ds else np.zeros(flux.shape, bool)
    cont = None if continuum is None else np.atleast_2d(np.asarray(continuum, dtype=np.float64))
    ws, fs, ss, rs, us = [], [], [], [], []
    for k in range(flux.shape[0]):
        o = np.argsort(wave[k], kind="stable")
        w, f, b = wave[k][o], flux[k][o], mask[k][o] | ~np.isfinite(flux[k][o])
        c = cont[k][o] if cont is not None else rvmod.normalise(w, f, b, order=flux.shape[0] > 1)
        with np.errstate(divide="ignore", invalid="ignore"):
            fn = f / c
            sn = None if unc is None else unc[k][o] / c
        # where the continuum failed (order ends, blaze edges) the ratio is absurd: dropped
        keep = ~b & np.isfinite(fn) & (c > 0) & (fn > -0.2) & (fn < 2.0)
        ws.append(w[keep])
        fs.append(fn[keep])
        rs.append(f[keep])
        if unc is not None:
            ss.append(sn[keep])
            us.append(unc[k][o][keep])
    w = np.concatenate(ws)
    o = np.argsort(w, kind="stable")
    sig = np.concatenate(ss)[o] if unc is not None else None
    usig = np.concatenate(us)[o] if unc is not None else None
    return w[o], np.concatenate(fs)[o], sig, np.concatenate(rs)[o], usig


def measure_spectrum(ds, lines=None, *, calibrated: bool | None = None, site=None, radec=None,
                     time=None, continuum=None, ew_ranges=(), with_lines: bool = True) -> dict:
    """Every measurement of a Spectrum Dataset as a JSON-ready dict (see README, Measuring).

    ``calibrated`` forces (True) or forbids (False) the Planck fit; None decides from
    the flux unit.  ``ew_ranges`` is a list of (lo_A, hi_A) in the spectrum's medium.
    """
    from atlas.measure.ew import equivalent_width
    from atlas.spectrum import medium_of

    if lines is None:
        from atlas.lines import load_lines

        lines = load_lines()
    medium = medium_of(ds)
    lmed = "vacuum" if medium == "vacuum" else "air"
    notes = []
    r = velocity.rv_of_spectrum(ds, lines, site=site, radec=radec, time=time, continuum=continuum)
    if r.note:
        notes.append(r.note)
    out = {
        "medium": medium,
        "rv_kms": finite_or_none(r.rv_kms),
        "rv_err_kms": finite_or_none(r.rv_err_kms),
        "rv_obs_kms": finite_or_none(r.rv_obs_kms),
        "barycentric_kms": finite_or_none(r.barycentric_kms),
        "ccf_fwhm_kms": finite_or_none(r.ccf_fwhm_kms),
        "ccf_contrast": finite_or_none(r.ccf_contrast),
        "line_fwhm_kms": finite_or_none(r.line_fwhm_kms),
        "vsini_rough_kms": finite_or_none(r.vsini_rough_kms),
        "rv_strips": r.as_dict()["strips"],
    }
    w, fn, sn, f_raw, s_raw = normalised_1d(ds, continuum)
    rv_obs = r.rv_obs_kms if r.rv_obs_kms is not None else 0.0
    if r.rv_obs_kms is None:
        notes.append("lines and class placed at zero velocity (no RV)")
    fwhm = r.line_fwhm_kms or (rvmod.C_KMS / float(ds.attrs.get("resolving_power", 20000.0)))

    # temperature and class
    if calibrated is None:
        calibrated = cls.is_calibrated(ds)
    c = cls.classify(w, fn, sn, rv_obs_kms=rv_obs, line_fwhm_kms=fwhm, medium=lmed)
    if c.note:
        notes.append(c.note)
    out.update(spectral_class=c.spectral_class, class_confidence=finite_or_none(c.class_confidence),
               class_runner_up=c.runner_up)
    out["teff_k"] = out["teff_err_k"] = None
    out["teff_method"] = None
    if calibrated:
        try:
            t, e = cls.colour_temperature(w, f_raw, s_raw)
            out.update(teff_k=finite_or_none(t), teff_err_k=finite_or_none(e), teff_method="Planck colour temperature")
        except Exception as exc:  # noqa: BLE001 - a failed fit is reported, not fatal
            notes.append(f"no colour temperature: {exc}")
    elif c.class_teff_k is not None:
        out.update(teff_k=finite_or_none(c.class_teff_k), teff_method="from the class (flux not calibrated)")

    # lines
    if with_lines:
        found, unknown = ident.identify_spectrum(
            w, fn, lines, rv_obs_kms=rv_obs, rv_err_kms=r.rv_err_kms or 1.0, line_fwhm_kms=fwhm,
            uncertainty=sn, normalised=True, medium=lmed)
        out["lines"] = _records(found)
        out["unidentified"] = _records(unknown)
        # the line width from weak identified lines (depth 0.05-0.5): strong lines'
        # damping wings widen the RV template's common width
        weak = found[(found.depth > 0.05) & (found.depth < 0.5)] if len(found) else found
        out["line_fwhm_from"] = "RV template"
        if len(weak) >= 5:
            out["line_fwhm_kms"] = finite_or_none(np.median(weak.fwhm_kms))
            out["line_fwhm_from"] = f"median of {len(weak)} weak identified lines"
            out["vsini_rough_kms"] = finite_or_none(rvmod.vsini_rough(out["line_fwhm_kms"],
                                                            ds.attrs.get("resolving_power")))
    if ew_ranges:
        out["ew"] = [equivalent_width(w, fn, lo, hi, uncertainty=sn).as_dict() for lo, hi in ew_ranges]
    out["notes"] = notes
    return out


def _records(df):
    recs = df.to_dict(orient="records")
    for rec in recs:
        for k, v in rec.items():
            if isinstance(v, (np.floating, float)):
                rec[k] = finite_or_none(v)
            elif isinstance(v, np.integer):
                rec[k] = int(v)
    return recs
