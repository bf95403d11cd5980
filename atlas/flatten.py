"""A Spectrum as one run of 1-D vacuum samples with its continuum (:func:`vacuum_run`).

The build cuts this run into strips and measures it; ``striae measure`` measures the
same run, so both see one normalisation (the continuum of :mod:`atlas.continuum`).
"""

from __future__ import annotations

import numpy as np

from atlas.blaze import fit_orders
from atlas.continuum import ContinuumSettings, fit_continuum
from atlas.errors import InputError
from atlas.spectrum import is_echelle, medium_of


def sorted_1d(wave, *arrays):
    """Drop samples without a finite positive wavelength; sort by wavelength if needed.

    Returns ``(wave, arrays, dropped)``; ``None`` entries of ``arrays`` stay None.
    """
    good = np.isfinite(wave) & (wave > 0)
    dropped = int(good.size - np.count_nonzero(good))
    if dropped:
        wave = wave[good]
        arrays = tuple(None if a is None else a[good] for a in arrays)
    if wave.size > 1 and not np.all(wave[1:] >= wave[:-1]):
        order = np.argsort(wave, kind="stable")
        wave = wave[order]
        arrays = tuple(None if a is None else a[order] for a in arrays)
    return wave, arrays, dropped


def to_vacuum(wave, medium: str, notes: list[str]):
    """Wavelengths (Å) in vacuum; air and unknown media converted (IAU formula), with a note."""
    if medium == "vacuum":
        return wave
    from atlas.physics.airvac import air_to_vacuum_A

    if medium != "air":
        notes.append("wavelength medium unknown: treated as air above 2000 Å and converted to vacuum")
    return np.asarray(air_to_vacuum_A(wave), dtype=np.float64)


def merged_orders(parts, conts) -> dict:
    """``atlas.merge_orders.merge_orders`` of sorted (wave, flux, mask, uncertainty) parts and their continua."""
    from atlas.merge_orders import merge_orders

    m = merge_orders([{"wavelength": p[0], "flux": p[1], "mask": p[2], "uncertainty": p[3], "continuum": cc}
                      for p, cc in zip(parts, conts, strict=True)])
    m.pop("order")
    m["continuum"] = m["continuum"].astype(np.float32)
    return m


def vacuum_run(ds, settings: ContinuumSettings | None = None, *, keep_orders: bool = False):
    """The samples of a Spectrum as 1-D vacuum arrays with their continuum.

    Returns ``(seq, orders, notes)``: ``seq`` a dict of 1-D arrays ``wavelength``
    (float64, vacuum Å), ``flux``, ``mask``, ``uncertainty`` (None without one) and
    ``continuum`` (float32), sorted by wavelength.  Echelle orders are sorted by their
    first wavelength, their continua fitted together (:func:`atlas.blaze.fit_orders`)
    and merged into one spectrum (:func:`atlas.merge_orders.merge_orders`); with
    ``keep_orders`` the orders instead come one after the other, unmerged, and
    ``seq["measure"]`` holds the merged spectrum (what the measurements use).
    ``orders`` is then a list of (samples, first_A, last_A) per order, else None.
    Samples without a finite wavelength are left out (said in ``notes``).  Raises
    ``InputError`` when no sample has a finite wavelength.
    """
    c = settings or ContinuumSettings()
    notes: list[str] = []
    medium = medium_of(ds)
    unc_present = "uncertainty" in ds
    orders = None
    if is_echelle(ds):
        W = to_vacuum(np.asarray(ds["wavelength"].values, dtype=np.float64), medium, notes)
        F = np.asarray(ds["flux"].values, dtype=np.float64)
        M = np.asarray(ds["mask"].values, dtype=bool) if "mask" in ds else ~np.isfinite(F)
        U = np.asarray(ds["uncertainty"].values, dtype=np.float64) if unc_present else None
        parts, dropped = [], 0
        for o in range(W.shape[0]):
            w, (f, m, u), d = sorted_1d(W[o], F[o], M[o], None if U is None else U[o])
            dropped += d
            if w.size:
                parts.append((w, f, m, u))
        if not parts:
            raise InputError(ds.attrs.get("source_path", "spectrum"), "no sample has a finite wavelength")
        parts.sort(key=lambda p: p[0][0])
        # The orders' continua are fitted together (atlas.blaze): one star continuum, a
        # blaze shared between neighbouring orders, overlaps that agree.
        conts = fit_orders([(p[0], p[1], p[2]) for p in parts], c)
        orders = [(int(p[0].size), float(p[0][0]), float(p[0][-1])) for p in parts]
        if keep_orders:
            seq = {
                "wavelength": np.concatenate([p[0] for p in parts]),
                "flux": np.concatenate([p[1] for p in parts]),
                "mask": np.concatenate([p[2] for p in parts]),
                "uncertainty": np.concatenate([p[3] for p in parts]) if unc_present else None,
                "continuum": np.concatenate(conts).astype(np.float32),
                "measure": merged_orders(parts, conts),
            }
        else:
            seq = merged_orders(parts, conts)
    else:
        w = np.asarray(ds["wavelength"].values, dtype=np.float64)
        f = np.asarray(ds["flux"].values, dtype=np.float64)
        m = np.asarray(ds["mask"].values, dtype=bool) if "mask" in ds else ~np.isfinite(f)
        u = np.asarray(ds["uncertainty"].values, dtype=np.float64) if unc_present else None
        w = to_vacuum(w, medium, notes)
        w, (f, m, u), dropped = sorted_1d(w, f, m, u)
        if w.size == 0:
            raise InputError(ds.attrs.get("source_path", "spectrum"), "no sample has a finite wavelength")
        seq = {"wavelength": w, "flux": f, "mask": m, "uncertainty": u}
        seq["continuum"] = fit_continuum(w, f, m, c).astype(np.float32)
    if dropped:
        notes.append(f"{dropped} samples without a finite wavelength left out")
    return seq, orders, notes
