"""Identification on the star's predicted lines: contributors, blends, unexplained features.

The test star is invented data: atlas.synth's model of a 5800 K dwarf made from the dense
Gaia-ESO lines (Heiter et al. 2021, A&A 645, A106, as shipped in atlas.lines.dense) over
5100-5400 Å, with known noise and velocity.  The checks are against the line list's
published species and wavelengths and against the model's own input.
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from atlas.lines import load_lines
from atlas.lines.dense import load_dense_lines, load_merged_lines
from atlas.lines.predict import predict_depths
from atlas.measure.contributors import collapse_components, predicted_band_depth
from atlas.measure.pipeline import UNEXPLAINED, run_datasets, run_features
from atlas.measure.wings import strong_centres_A
from atlas.physics import doppler
from atlas.physics.constants import C_KMS

LO, HI = 5100.0, 5400.0
RV_KMS = 20.0
R = 50000.0
SNR = 200.0
#: the line width the features are searched with: instrument (c / R) and rotation in quadrature
FWHM_KMS = float(np.hypot(C_KMS / R, 4.0))


def _injection_sites(merged, pred, n=8):
    """Rest wavelengths (vacuum Å) with no listed line within 0.15 Å, no predicted line
    deeper than 0.05 within 15 km/s and no strong line's wing within 10 Å (invented positions)."""
    allw = np.sort(merged["vacuum_A"].to_numpy())
    gaps = np.diff(allw)
    mids = 0.5 * (allw[:-1] + allw[1:])
    pw, pdp = pred["vacuum_A"].to_numpy(), pred["predicted_depth"].to_numpy()
    strong = strong_centres_A(pred, 0.0)  # H I, Ca II, Na I D, Mg I b
    out = []
    for x in mids[(gaps > 0.3) & (mids > LO + 10) & (mids < HI - 10)]:
        near = np.abs(pw / x - 1) * C_KMS < 15
        if (pdp[near] > 0.05).any() or (np.abs(strong - x) < 10).any():
            continue
        if not out or x - out[-1] > 5:
            out.append(x)
    return np.array(out[:n])


@pytest.fixture(scope="module")
def dense_star():
    from atlas.synth.model import Star, synthesize

    dense, merged = load_dense_lines(), load_merged_lines()
    near = dense[(dense.vacuum_A > LO - 5) & (dense.vacuum_A < HI + 5)]
    msub = merged[(merged.vacuum_A > LO - 5) & (merged.vacuum_A < HI + 5)]
    pred = collapse_components(predict_depths(msub, 5800.0, 4.44, line_fwhm_kms=FWHM_KMS, threshold=0.002))
    wave = np.exp(np.linspace(np.log(LO), np.log(HI), 60_000))
    syn = synthesize(wave, Star(teff_k=5800.0, logg=4.44, rv_kms=RV_KMS, vsini_kms=2.0),
                     resolving_power=R, lines=near)
    sites = _injection_sites(merged, pred)
    fac = doppler.factor(RV_KMS)
    flux = syn.normalised.copy()
    for x in sites:  # Gaussian lines of depth 0.15 where the list has none
        s = x * fac * FWHM_KMS / 2.3548 / C_KMS
        flux *= 1.0 - 0.15 * np.exp(-0.5 * ((wave - x * fac) / s) ** 2)
    sigma = np.full(wave.size, 1.0 / SNR)
    flux = flux + np.random.default_rng(11).normal(size=wave.size) * sigma
    seq = {"wavelength": wave, "flux": flux, "mask": np.zeros(wave.size, bool),
           "continuum": np.ones(wave.size), "uncertainty": sigma}
    _, nds = run_datasets(seq, {})
    bands = predicted_band_depth(merged[merged.kind == "band_head"], 5800.0, 4.44, LO - 20, HI + 20)
    feats = run_features(nds, load_lines(), rv_obs_kms=RV_KMS, rv_err_kms=0.05, line_fwhm_kms=FWHM_KMS,
                         predicted=pred, band_depth=bands)
    return feats, pred, sites * fac


def _nearest(feats, obs_A):
    k = int(np.argmin(np.abs(feats["observed_A"].to_numpy() - obs_A)))
    return feats.iloc[k], abs(feats["observed_A"].iloc[k] / obs_A - 1.0) * C_KMS


@pytest.mark.slow
def test_isolated_deep_lines_get_their_listed_species(dense_star):
    # Lines predicted deeper than 0.2 with no other line a tenth as deep within 2 line
    # widths: >= 90 % must be found within 3 km/s and named by the species the GES list
    # gives at that wavelength (Heiter et al. 2021, the spectrum's own input).
    feats, pred, _ = dense_star
    pw, pdp = pred["vacuum_A"].to_numpy(), pred["predicted_depth"].to_numpy()
    fac = doppler.factor(RV_KMS)
    right = total = 0
    for i in np.flatnonzero(pdp > 0.2):
        near = np.abs(pw / pw[i] - 1) * C_KMS < 2 * FWHM_KMS
        near[i] = False
        if (pdp[near] > 0.1 * pdp[i]).any() or not LO + 1 < pw[i] < HI - 1:
            continue
        total += 1
        row, off = _nearest(feats, pw[i] * fac)
        right += off < 3.0 and row["species"] == pred["species"].iloc[i]
    assert total >= 30
    assert right >= 0.9 * total, (right, total)


@pytest.mark.slow
def test_few_real_features_are_unexplained(dense_star):
    # Every real feature of this star comes from the listed lines it was made from, so
    # at most 5 % may be left unexplained (the injected lines left out of the count).
    feats, _, injected = dense_star
    obs = feats["observed_A"].to_numpy()
    is_injected = np.zeros(len(feats), dtype=bool)
    for x in injected:
        is_injected |= np.abs(obs / x - 1) * C_KMS < FWHM_KMS
    real = feats[~is_injected]
    assert len(real) > 300  # a dense star: hundreds of features in 300 Å
    unexplained = (real["kind"] == UNEXPLAINED).mean()
    assert unexplained <= 0.05, unexplained


@pytest.mark.slow
def test_injected_lines_with_no_listed_line_are_all_unexplained(dense_star):
    # Lines put where the list has no line within 0.15 Å must each be found (within
    # 2 km/s) and called unexplained, saying that the lines explain none of their depth.
    feats, _, injected = dense_star
    assert len(injected) >= 5
    for x in injected:
        row, off = _nearest(feats, x)
        assert off < 2.0, (x, off)
        assert row["kind"] == UNEXPLAINED and row["species"] == "", (x, row.to_dict())
        assert row["explained_fraction"] < 0.25


@pytest.mark.slow
def test_blends_list_their_other_contributors_with_shares(dense_star):
    # A blend's shares (first contributor and the listed others) sum to at most 1 and
    # every listed contributor is a line of the predicted list (GES wavelengths).
    feats, pred, _ = dense_star
    listed = set(zip(pred["species"], np.round(pred["vacuum_A"], 4), strict=True))
    blends = feats[[len(b) > 0 for b in feats["blend"]]]
    assert len(blends) >= 10
    for row in blends.itertuples():
        shares = [row.share] + [sh for _, _, sh in row.blend]
        assert sum(shares) <= 1.0 + 1e-9
        assert all(sh >= 0.1 for sh in shares[1:])
        assert all((sp, round(w, 4)) in listed for sp, w, _ in row.blend)


def test_components_of_one_line_are_joined():
    # Two components of one species 0.01 Å apart with depths 0.3 and 0.2 become one line
    # of depth 1 - 0.7 * 0.8 = 0.44 (absorption multiplies: common practice) at the
    # deeper one's wavelength; a line of another species there stays apart.
    p = pd.DataFrame({"species": ["Nd II", "Nd II", "Fe I"], "vacuum_A": [5000.00, 5000.01, 5000.005],
                      "predicted_depth": [0.2, 0.3, 0.1]})
    out = collapse_components(p)
    nd = out[out.species == "Nd II"]
    assert len(out) == 2 and len(nd) == 1
    assert nd["predicted_depth"].iloc[0] == pytest.approx(0.44)
    assert nd["vacuum_A"].iloc[0] == 5000.01
