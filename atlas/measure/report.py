"""All measurements of one Spectrum in one call: velocity, lines, temperature, class.

Used by ``striae measure``.  The numbers come from
:func:`atlas.measure.pipeline.measure_run` on the run of
:func:`atlas.flatten.vacuum_run`, the same steps the build takes, so a star measured
here and the same star in a built atlas agree; wavelengths are reported in the file's
medium (air files: converted back from vacuum with the IAU formula).
"""

from __future__ import annotations

import numpy as np

from atlas.measure import rv as rvmod
from atlas.spectrum import finite_or_none


def spectrum_run(ds, continuum=None):
    """(seq, rv_source) of a Spectrum: the 1-D vacuum run and the echelle orders (or None).

    With ``continuum`` (a 1-D vacuum Spectrum of a built atlas and its stored
    continuum) the run is the Spectrum itself; otherwise
    :func:`atlas.flatten.vacuum_run` with the build's default continuum settings.
    """
    from atlas.flatten import vacuum_run
    from atlas.spectrum import is_echelle

    if continuum is None:
        seq, _, _ = vacuum_run(ds)
        return seq, (ds if is_echelle(ds) else None)
    flux = np.asarray(ds["flux"].values, dtype=np.float64)
    seq = {"wavelength": np.asarray(ds["wavelength"].values, dtype=np.float64), "flux": flux,
           "mask": np.asarray(ds["mask"].values, dtype=bool) if "mask" in ds else ~np.isfinite(flux),
           "continuum": np.asarray(continuum),
           "uncertainty": ds["uncertainty"].values if "uncertainty" in ds else None}
    return seq, None


def _to_medium(wave_A, medium: str):
    """Vacuum wavelengths (Å) in the file's medium (unknown is read as air)."""
    if medium == "vacuum":
        return wave_A
    from atlas.physics.airvac import vacuum_to_air_A

    return np.asarray(vacuum_to_air_A(np.asarray(wave_A, dtype=np.float64)), dtype=np.float64)


def _to_vacuum_A(x: float, medium: str) -> float:
    if medium == "vacuum":
        return x
    from atlas.physics.airvac import air_to_vacuum_A

    return float(air_to_vacuum_A(np.asarray([x], dtype=np.float64))[0])


def measure_spectrum(ds, lines=None, *, calibrated: bool | None = None, site=None, radec=None,
                     time=None, continuum=None, ew_ranges=(), with_lines: bool = True) -> dict:
    """Every measurement of a Spectrum Dataset as a JSON-ready dict (see README, Measuring).

    ``calibrated`` forces (True) or forbids (False) the Planck fit; None decides from
    the flux unit.  ``ew_ranges`` is a list of (lo_A, hi_A) in the spectrum's medium.
    """
    from atlas.measure.ew import equivalent_width
    from atlas.measure.pipeline import UNEXPLAINED, measure_run, weak_line_fwhm_kms
    from atlas.spectrum import medium_of

    medium = medium_of(ds)
    seq, rv_source = spectrum_run(ds, continuum)
    m = measure_run(seq, dict(ds.attrs), lines, site=site, radec=radec, time=time,
                    rv_source=rv_source, calibrated=calibrated, with_features=with_lines)
    del seq
    r = m.rv
    out = {"medium": medium}
    keys = ("rv_kms", "rv_err_kms", "rv_obs_kms", "ccf_fwhm_kms", "ccf_contrast", "line_fwhm_kms",
            "vsini_rough_kms", "systematic_kms")
    out.update({k: (None if r is None else finite_or_none(getattr(r, k))) for k in keys})
    out["barycentric_kms"] = finite_or_none(m.barycentric_kms)
    out["method"] = None if r is None else r.method
    out["rv_strips"] = [] if r is None else r.as_dict()["strips"]
    c = m.spectral_class
    out.update(spectral_class=None if c is None else c.spectral_class,
               class_confidence=None if c is None else finite_or_none(c.class_confidence),
               class_runner_up=None if c is None else c.runner_up,
               class_range=None if c is None else c.class_range,
               class_criteria=None if c is None else c.class_criteria)
    out.update(teff_k=finite_or_none(m.teff_k), teff_err_k=finite_or_none(m.teff_err_k),
               teff_method=m.teff_method)
    if with_lines and m.features is not None:
        f = m.features.copy()
        f["observed_A"] = _to_medium(f["observed_A"].to_numpy(), medium)
        f["rest_A"] = _to_medium(f["rest_A"].to_numpy(), medium)
        back = (lambda x: float(_to_medium(np.array([x]), medium)[0])) if medium != "vacuum" else float
        f["blend"] = [[{"species": sp, "rest_A": back(wv), "share": sh} for sp, wv, sh in b] for b in f["blend"]]
        unexplained = f["kind"] == UNEXPLAINED
        out["lines"] = _records(f[~unexplained])
        un = f[unexplained].drop(columns=["rest_A", "species", "offset_kms", "quality", "share", "blend"])
        out[UNEXPLAINED] = _records(un.sort_values("significance", ascending=False))
        # the line width from weak identified lines: strong lines' damping wings widen
        # the RV template's common width
        fw, n_weak = weak_line_fwhm_kms(m.features)
        out["line_fwhm_from"] = "RV template"
        if fw is not None:
            out["line_fwhm_kms"] = finite_or_none(fw)
            out["line_fwhm_from"] = f"median of {n_weak} weak identified lines"
            out["vsini_rough_kms"] = finite_or_none(rvmod.vsini_rough(fw, ds.attrs.get("resolving_power")))
    if ew_ranges:
        nds = m.normalised
        w, fn = nds["wavelength"].values, nds["flux"].values
        sn = nds["uncertainty"].values if "uncertainty" in nds else None
        out["ew"] = []
        for lo, hi in ew_ranges:
            e = equivalent_width(w, fn, _to_vacuum_A(lo, medium), _to_vacuum_A(hi, medium),
                                 uncertainty=sn, mask=nds["mask"].values).as_dict()
            e.update(lo_A=lo, hi_A=hi)
            out["ew"].append(e)
    out["notes"] = m.notes
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
