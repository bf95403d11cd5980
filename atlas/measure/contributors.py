"""Which predicted lines make each found feature: its most probable contributors and their shares.

For each feature (:func:`atlas.measure.identify.find_features`: centre, depth, width) the
lines predicted for this star (:func:`atlas.lines.predict.predict_depths`, moved by the
star's observed radial velocity) within the feature's reach are its candidates.  The reach
adds in quadrature half the feature's FWHM, 3 times its position error and 3 times the
RV error.  Line ``i`` contributes

    c_i = d_i exp(-(dv_i / s)^2 / 2)

at the feature's centre, with ``d_i`` its predicted central depth, ``dv_i`` its offset
(km/s) and ``s`` the feature's Gaussian sigma (km/s): the depth a line of the feature's
width adds there.  The contributors are ranked by ``c_i``; the first names the feature
(``species``, ``rest_A``, ``predicted_depth``), the others with a share
``c_i / sum c`` of at least :data:`MIN_SHARE` are its ``blend``.  The lines together
predict a depth ``1 - prod(1 - c_i)`` (absorption multiplies); over the measured depth
that is ``explained_fraction`` (capped at 1).  A feature whose predicted lines explain
less than :data:`UNEXPLAINED_BELOW` of its depth is explained by a telluric line of the
list (observer's frame, as :func:`atlas.measure.identify.identify` matches), else by a
telluric or molecular band (:func:`atlas.measure.identify.band_regions`), else it is
``unexplained``.

References
----------
Gray, D. F., *The Observation and Analysis of Stellar Photospheres*, 3rd ed. (2005),
ch. 13 (line depths add as optical depths: common practice for blends).
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd

from atlas.measure.identify import _in_band, band_regions
from atlas.measure.rv import FWHM_PER_SIGMA
from atlas.physics.constants import C_KMS

#: Contributors with at least this share of a feature's predicted depth are listed in its
#: blend (our choice).
MIN_SHARE = 0.1
#: A feature is unexplained when the predicted lines account for less than this fraction
#: of its measured depth and no telluric line or band explains it (our choice: the
#: depth is then at least 4 times what the lines predict).
UNEXPLAINED_BELOW = 0.25
#: At most this many contributors are kept per feature.
MAX_CONTRIBUTORS = 6


#: Lines predicted deeper than this take part in the identification (the stored list
#: keeps those deeper than 1 %; weaker components add up in blends: our choice).
IDENTIFY_THRESHOLD = 0.002
#: Components of one species closer than this (Å) count as one line (isotopic and
#: hyperfine components listed apart, common practice).
COMPONENT_A = 0.02


def collapse_components(predicted: pd.DataFrame) -> pd.DataFrame:
    """Predicted lines with the components of one line joined: rows of one species within
    :data:`COMPONENT_A` of each other become one row at the deepest component's wavelength,
    with depth ``1 - prod(1 - d)`` (absorption multiplies)."""
    p = predicted.sort_values(["species", "vacuum_A"], kind="stable").reset_index(drop=True)
    if not len(p):
        return p
    sp = p["species"].astype(str).to_numpy()
    w = p["vacuum_A"].to_numpy(dtype=np.float64)
    d = p["predicted_depth"].to_numpy(dtype=np.float64)
    new = np.ones(len(p), dtype=bool)
    new[1:] = (sp[1:] != sp[:-1]) | (np.diff(w) > COMPONENT_A)
    group = np.cumsum(new) - 1
    logkeep = np.bincount(group, weights=np.log1p(-np.clip(d, 0.0, 0.999)))
    # the deepest component of each group names it
    order = np.lexsort((-d, group))
    first = order[np.r_[True, group[order][1:] != group[order][:-1]]]
    out = p.iloc[first].copy()
    out["predicted_depth"] = -np.expm1(logkeep)
    return out.sort_values("vacuum_A", kind="stable").reset_index(drop=True)


#: Step (km/s) of the grid on which molecular band depths are predicted.
BAND_STEP_KMS = 1.0


def predicted_band_depth(lines: pd.DataFrame, teff_k: float, logg: float | None, lo_A: float, hi_A: float):
    """(rest_A, depth): the molecular bands of ``lines`` predicted for this star on a
    vacuum rest grid over ``lo_A``..``hi_A`` (Å), by the synthesis's band model
    (:func:`atlas.synth.molecules.add_bands`, the representative layer of
    :mod:`atlas.synth.photosphere`, depths by :func:`atlas.synth.depths.depth_from_ratio`)
    before any broadening, so each band's deepest structure."""
    from atlas.synth.depths import depth_from_ratio, max_depth
    from atlas.synth.molecules import add_bands
    from atlas.synth.photosphere import LOGG_REF, layer

    n = max(2, int(math.log(hi_A / lo_A) * C_KMS / BAND_STEP_KMS) + 1)
    grid = np.exp(np.linspace(math.log(lo_A), math.log(hi_A), n))
    eta = np.zeros(n)
    add_bands(grid, eta, lines, layer(teff_k, LOGG_REF if logg is None else logg))
    return grid, 1.0 - depth_from_ratio(eta, max_depth(grid, teff_k))


def _telluric_rows(lines: pd.DataFrame, medium: str):
    col = "vacuum_A" if medium == "vacuum" else "air_A"
    tell = lines["telluric"].astype(str).str.lower().isin(["true", "1"]).to_numpy() | (
        lines["kind"].astype(str) == "telluric").to_numpy()
    kind = lines["kind"].astype(str).to_numpy()
    keep = tell & (kind != "band_head")
    w = lines[col].to_numpy(dtype=np.float64)[keep]
    sp = lines["species"].astype(str).to_numpy()[keep]
    o = np.argsort(w)
    return w[o], sp[o]


def attribute(features: pd.DataFrame, predicted: pd.DataFrame, lines: pd.DataFrame, *,
              rv_obs_kms: float, rv_err_kms: float = 0.0, band_depth=None) -> pd.DataFrame:
    """The features with their contributors: a copy with ``rest_A``, ``species``,
    ``kind``, ``offset_kms``, ``quality``, ``predicted_depth``, ``explained_fraction``,
    ``share`` and ``blend`` (a list of (species, rest_A, share) of the other contributors).

    ``features`` as :func:`atlas.measure.identify.find_features` gives them (vacuum Å,
    observer's frame); ``predicted`` the star's predicted lines (``vacuum_A``,
    ``species``, ``predicted_depth``); ``lines`` the list whose telluric rows and bands
    explain what the predicted lines do not; ``band_depth`` (rest_A, depth) of
    :func:`predicted_band_depth`, when given, lets a molecular band explain a feature
    only where it is predicted deep enough in this star (else any feature within a
    band's reach is explained by it).  ``quality`` is 1 - offset / reach of the
    first contributor.  Unexplained rows have kind ``unexplained``, empty species, NaN
    ``rest_A`` and their ``explained_fraction`` (how little the lines predict).
    """
    f = features.reset_index(drop=True)
    n = len(f)
    beta = rv_obs_kms / C_KMS
    factor = math.sqrt((1 + beta) / (1 - beta))
    pw = predicted["vacuum_A"].to_numpy(dtype=np.float64)
    o = np.argsort(pw)
    rest, expected = pw[o], pw[o] * factor
    depth = predicted["predicted_depth"].to_numpy(dtype=np.float64)[o]
    species = predicted["species"].astype(str).to_numpy()[o]
    mu = f["observed_A"].to_numpy(dtype=np.float64)
    pos_kms = f["observed_err_A"].to_numpy(dtype=np.float64) / mu * C_KMS
    s_kms = f["fwhm_kms"].to_numpy(dtype=np.float64) / FWHM_PER_SIGMA
    reach = np.sqrt((0.5 * FWHM_PER_SIGMA * s_kms) ** 2 + (3 * pos_kms) ** 2 + (3 * rv_err_kms) ** 2)
    lo = np.searchsorted(expected, mu * (1 - reach / C_KMS))
    hi = np.searchsorted(expected, mu * (1 + reach / C_KMS))
    out = {k: np.full(n, np.nan) for k in ("rest_A", "offset_kms", "quality", "predicted_depth",
                                          "explained_fraction", "share")}
    sp_out = np.full(n, "", dtype=object)
    kind = np.full(n, "atomic", dtype=object)
    blend = [[] for _ in range(n)]
    for i in range(n):
        j = np.arange(lo[i], hi[i])
        if j.size == 0:
            out["explained_fraction"][i] = 0.0
            continue
        dv = (mu[i] / expected[j] - 1.0) * C_KMS
        c = depth[j] * np.exp(-0.5 * (dv / s_kms[i]) ** 2)
        rank = np.argsort(c)[::-1][:MAX_CONTRIBUTORS]
        share = c[rank] / c.sum()
        total = 1.0 - np.prod(1.0 - np.clip(c, 0.0, 0.999))
        k = j[rank[0]]
        out["rest_A"][i], out["offset_kms"][i] = rest[k], dv[rank[0]]
        out["quality"][i] = 1.0 - abs(dv[rank[0]]) / reach[i]
        out["predicted_depth"][i], out["share"][i] = depth[k], share[0]
        out["explained_fraction"][i] = min(1.0, total / max(f.at[i, "depth"], 1e-12))
        sp_out[i] = species[k]
        blend[i] = [(species[j[r]], float(rest[j[r]]), float(sh))
                    for r, sh in zip(rank[1:], share[1:], strict=True) if sh >= MIN_SHARE]
    weak = out["explained_fraction"] < UNEXPLAINED_BELOW
    if weak.any():
        tw, tsp = _telluric_rows(lines, "vacuum")
        bands = band_regions(lines, "vacuum")
        for i in np.flatnonzero(weak):
            tol = math.sqrt((3 * pos_kms[i]) ** 2 + (0.5 * FWHM_PER_SIGMA * s_kms[i]) ** 2)
            a = np.searchsorted(tw, mu[i] * (1 - tol / C_KMS))
            b = np.searchsorted(tw, mu[i] * (1 + tol / C_KMS))
            blend[i] = []
            if b > a:
                t = a + int(np.argmin(np.abs(tw[a:b] - mu[i])))
                sp_out[i], kind[i], out["rest_A"][i] = tsp[t], "telluric", tw[t]
                out["offset_kms"][i] = (mu[i] / tw[t] - 1.0) * C_KMS
                out["quality"][i] = 1.0 - abs(out["offset_kms"][i]) / tol
                continue
            band = _in_band(mu[i], bands, factor)
            if band is not None and band[1] == "molecular_band" and band_depth is not None:
                rest_i, half = mu[i] / factor, reach[i] / C_KMS
                a, b = np.searchsorted(band_depth[0], [rest_i * (1 - half), rest_i * (1 + half)])
                deepest = float(np.max(band_depth[1][a : b + 1])) if b + 1 > a else 0.0
                if deepest < UNEXPLAINED_BELOW * f.at[i, "depth"]:
                    band = None
            if band is not None:
                sp_out[i], kind[i], out["rest_A"][i] = band
                out["offset_kms"][i] = out["quality"][i] = np.nan
                continue
            sp_out[i], kind[i] = "", "unexplained"
            out["rest_A"][i] = out["offset_kms"][i] = out["quality"][i] = np.nan
    res = f.copy()
    for k, v in out.items():
        res[k] = v
    res["species"] = sp_out.astype(str)
    res["kind"] = kind.astype(str)
    res["blend"] = blend
    return res


def blend_text(blend) -> str:
    """A blend as one line of text: ``"Fe I 5270.36 (0.31); Ca I 5271.81 (0.12)"`` (Å as given)."""
    return "; ".join(f"{sp} {w:.2f} ({sh:.2f})" for sp, w, sh in blend)
