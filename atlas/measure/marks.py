"""Measure a marked range of a star in a built atlas: EW ± error, depth, centroid, FWHM and
the velocity of the centroid against a reference line.

The samples are the star's stored real samples (vacuum Å, observer's frame) of the strips
the range touches, normalised by the stored continuum, so the numbers are those of
``striae measure ATLAS STAR --ew LO:HI`` on the same range.  The equivalent width itself is
:func:`atlas.measure.ew.equivalent_width` (continuum line through the flanks).
"""

from __future__ import annotations

import numpy as np

from atlas.errors import InputError
from atlas.measure.ew import equivalent_width
from atlas.physics.doppler import velocity_kms


def stored_samples(atlas, star_id: str, lo_A: float, hi_A: float) -> dict:
    """Real samples of ``star_id`` between stored Å ``lo_A`` .. ``hi_A``: ``wavelength``,
    ``norm_flux``, ``norm_unc`` (uncertainty / continuum, or None) and ``mask``; each
    wavelength once where strips overlap."""
    ds = atlas.star(star_id)
    smin, smax = (np.asarray(a, dtype=np.float64) for a in atlas.load(star_id, "strip_min_A", "strip_max_A"))
    strips = np.nonzero((smax >= lo_A) & (smin <= hi_A))[0]
    if strips.size == 0:
        raise InputError("mark", f"{lo_A:.3f}..{hi_A:.3f} Å (vacuum, observed) is outside the star")
    names = [n for n in ("wavelength", "flux", "uncertainty", "continuum", "mask") if n in ds]
    sub = ds[names].isel(strip=strips).load()
    w = sub["wavelength"].values.ravel().astype(np.float64)
    keep = np.isfinite(w) & (w >= lo_A) & (w <= hi_A)
    w_u, first = np.unique(w[keep], return_index=True)

    def col(n):
        return sub[n].values.ravel()[keep][first] if n in sub else None

    cont = col("continuum")
    flux = col("flux").astype(np.float64)
    unc = col("uncertainty")
    if cont is None:
        norm, nunc = flux, unc
    else:
        cont = cont.astype(np.float64)
        norm = flux / cont
        nunc = None if unc is None else unc.astype(np.float64) / cont
    if nunc is not None and not np.isfinite(nunc).any():
        nunc = None  # no uncertainty recorded: the flanks' scatter stands in
    mask = col("mask")
    return {"wavelength": w_u, "norm_flux": norm, "norm_unc": nunc,
            "mask": None if mask is None else mask.astype(bool)}


def measure_mark(atlas, star_id: str, lo_A: float, hi_A: float, *, to_display=None,
                 ref_A: float | None = None) -> dict:
    """Measurements of the stored range ``lo_A`` .. ``hi_A`` (vacuum Å, observer's frame).

    ``to_display`` maps stored Å to displayed Å (the viewer's frame and medium; identity
    when None): the centroid and FWHM are given in displayed Å, and ``v_kms`` is the
    centroid's velocity against ``ref_A`` (a rest wavelength in the displayed medium),
    relativistic (:func:`atlas.physics.doppler.velocity_kms`).  The flanks of the
    continuum fit are half the range wide on either side.
    """
    flank = 0.5 * (hi_A - lo_A)
    s = stored_samples(atlas, star_id, lo_A - flank, hi_A + flank)
    e = equivalent_width(s["wavelength"], s["norm_flux"], lo_A, hi_A, uncertainty=s["norm_unc"],
                         mask=s["mask"], where="mark")
    conv = to_display or (lambda a: np.asarray(a, dtype=np.float64))
    centroid = None if e.centroid_A is None else float(conv(np.array([e.centroid_A]))[0])
    fwhm = None
    if e.fwhm_A is not None and e.centroid_A is not None:
        a, b = conv(np.array([e.centroid_A - e.fwhm_A / 2, e.centroid_A + e.fwhm_A / 2]))
        fwhm = float(b - a)
    v = None
    if ref_A and centroid is not None:
        v = float(velocity_kms(centroid, ref_A))
    return {"ew_mA": e.ew_mA, "ew_err_mA": e.ew_err_mA, "depth": e.depth, "depth_err": e.depth_err,
            "centroid_A": centroid, "fwhm_A": fwhm, "v_kms": v, "ref_A": ref_A}


def mark_words(m: dict, unit: str = "A") -> str:
    """One line for a marks list: ``EW 152.1 ± 0.2 mÅ · depth 0.60 · λc 5016.18 Å · FWHM 0.35 Å · v +2.1 km/s``."""
    sc, u = (10.0, "nm") if unit == "nm" else (1.0, "Å")
    parts = []
    if m.get("ew_mA") is not None:
        err = f" ± {m['ew_err_mA']:.1f}" if m.get("ew_err_mA") is not None else ""
        parts.append(f"EW {m['ew_mA']:.1f}{err} mÅ")
    if m.get("depth") is not None:
        parts.append(f"depth {m['depth']:.3f}")
    if m.get("centroid_A") is not None:
        parts.append(f"λc {m['centroid_A'] / sc:.{3 if sc == 1 else 4}f} {u}")
    if m.get("fwhm_A") is not None:
        parts.append(f"FWHM {m['fwhm_A'] / sc:.{3 if sc == 1 else 4}f} {u}")
    if m.get("v_kms") is not None:
        parts.append(f"v {m['v_kms']:+.2f} km/s")
    return " · ".join(parts)
