"""Line identification on synthetic spectra made at the shipped list's own wavelengths."""

from __future__ import annotations

import numpy as np
import pytest

from atlas.measure.identify import identify_spectrum

RV = 48.0  # km/s, observer's frame
SIGMA_KMS = 4.0


def isolated_stellar_lines(lines, lo, hi, clearance_A=1.5):
    """Atomic, non-telluric list lines with no other list line within clearance_A."""
    w = lines.vacuum_A.to_numpy()
    order = np.argsort(w)
    ws = w[order]
    gap = np.minimum(np.diff(ws, prepend=-np.inf), np.diff(ws, append=np.inf))
    iso = np.zeros(w.size, dtype=bool)
    iso[order] = gap > clearance_A
    atomic = (lines.kind == "atomic").to_numpy() & ~lines.telluric.astype(str).eq("True").to_numpy()
    sel = iso & atomic & (w > lo) & (w < hi)
    return lines[sel]


def test_injected_lines_identified_with_the_right_species(synth, lines):
    # Doppler-shifted list lines (relativistic Doppler, as atlas.physics.doppler) must be
    # found and named; a line where the list has none must be reported unidentified.
    # The pass mark (95 %, no wrong species) is this project's requirement.
    rng = np.random.default_rng(11)
    chosen = isolated_stellar_lines(lines, 4550.0, 6650.0)
    assert len(chosen) >= 40
    depth = rng.uniform(0.15, 0.6, len(chosen))
    # an extra line far (> 5 Å) from every list line: nothing should explain it
    all_w = np.sort(lines.vacuum_A.to_numpy())
    cand = np.arange(4600.0, 6600.0, 0.5)
    dist = np.min(np.abs(cand[:, None] - all_w[None, :]), axis=1)
    lonely = float(cand[np.argmax(dist > 5.0)])
    assert np.min(np.abs(all_w - lonely)) > 5.0
    rest = np.concatenate([chosen.vacuum_A.to_numpy(), [lonely]])
    depths = np.concatenate([depth, [0.4]])
    wave = synth.log_grid(4500.0, 6700.0, 120_000)
    flux, sigma, _ = synth.make_star(wave, rest, depths, rv_kms=RV, sigma_kms=SIGMA_KMS,
                                     snr=100, rng=rng)
    # a telluric line stays in the observer's frame
    tell = lines[(lines.kind == "telluric") & (lines.vacuum_A > 6200) & (lines.vacuum_A < 6400)]
    t_w = float(tell.vacuum_A.iloc[0])
    flux *= 1.0 - synth.line_depth(wave, [t_w], [0.3], 0.0, SIGMA_KMS)

    ident, unid = identify_spectrum(wave, flux, lines, rv_obs_kms=RV, rv_err_kms=0.05,
                                    line_fwhm_kms=2.3548 * SIGMA_KMS, uncertainty=sigma,
                                    medium="vacuum")
    found = dict(zip(ident.rest_A.round(3), ident.species, strict=True))
    right = sum(found.get(round(r, 3)) == s for r, s in zip(chosen.vacuum_A, chosen.species, strict=True))
    assert right >= 0.95 * len(chosen), (right, len(chosen))
    # no injected line got a wrong name: every identification near an injected line is right
    shifted = rest * np.sqrt((1 + RV / 299792.458) / (1 - RV / 299792.458))
    for row in ident.itertuples():
        near = np.abs(shifted[:-1] - row.observed_A) < 0.2
        if near.any():
            assert row.species == chosen.species.to_numpy()[near][0], row
    assert any(abs(u - lonely * shifted[-1] / rest[-1]) < 0.2 for u in unid.observed_A)
    # the telluric line is named as such, at its unshifted position
    tl = ident[ident.kind == "telluric"]
    assert any(abs(tl.rest_A - t_w) < 1e-6) and any(abs(tl.observed_A - t_w) < 0.1)


def test_noise_alone_gives_few_features(synth, lines):
    # With pure Gaussian noise, a 5-sigma matched filter should fire rarely
    # (one-sided 5-sigma tail 2.9e-7 per independent trial; common practice).
    wave = synth.log_grid(5000.0, 6000.0, 50_000)
    flux = 1.0 + np.random.default_rng(2).normal(0, 0.01, wave.size)
    ident, unid = identify_spectrum(wave, flux, lines, rv_obs_kms=0.0, line_fwhm_kms=9.0,
                                    uncertainty=np.full(wave.size, 0.01), normalised=True)
    assert len(ident) + len(unid) <= 2


def _feature(observed_A, err_A=0.01):
    return {"observed_A": observed_A, "observed_err_A": err_A, "depth": 0.1, "depth_err": 0.01,
            "ew_mA": 20.0, "ew_err_mA": 2.0, "fwhm_kms": 8.0, "significance": 10.0}


def test_features_inside_bands_are_explained_by_them(lines):
    # Band regions come from the list itself: the O2 band's start/end rows (observer's
    # frame; the O2 B band near 6867-6884 Å air, from memory) and the TiO head at
    # 7054 Å air fading to the red (TiO bands are red-degraded: Herzberg 1950, from memory).
    import pandas as pd

    from atlas.measure.identify import band_regions, identify

    regions = band_regions(lines, "vacuum")
    o2 = [r for r in regions if r[2] == "O2" and r[3] == "telluric_band" and r[0] < 6880 < r[1]]
    tio = [r for r in regions if r[2] == "TiO" and r[3] == "molecular_band" and abs(r[4] - 7056.1) < 0.1]
    assert o2 and tio and tio[0][1] > tio[0][0] == tio[0][4]  # red-degraded: head at the blue end
    rv_kms = 60.0
    d = float(np.sqrt((1 + rv_kms / 299792.458) / (1 - rv_kms / 299792.458)))
    feats = pd.DataFrame([_feature(6876.3), _feature(7100.7 * d), _feature(3000.0)])
    ident, unid = identify(feats, lines, rv_obs_kms=rv_kms, line_fwhm_kms=8.0)
    got = {round(r.observed_A, 1): (r.species, r.kind) for r in ident.itertuples()}
    assert got[6876.3] == ("O2", "telluric_band")  # the narrower band, not the wider H2O one
    assert got[round(7100.7 * d, 1)] == ("TiO", "molecular_band")
    assert list(unid.observed_A) == [3000.0]


@pytest.mark.slow
def test_m_star_band_features_are_not_left_unexplained(lines):
    # An M3 dwarf from atlas.synth (TiO, CaH bands; telluric O2/H2O at airmass 1.5):
    # no feature inside a band region may be left among the unidentified.
    from atlas.measure.identify import band_regions
    from atlas.synth.model import Star, synthesize

    wave = np.exp(np.linspace(np.log(6800.0), np.log(7300.0), 40_000))
    syn = synthesize(wave, Star(teff_k=3430.0, logg=4.8, vsini_kms=2.0, rv_kms=-20.0),
                     resolving_power=50000, airmass=1.5)
    flux = syn.normalised + np.random.default_rng(3).normal(size=wave.size) / 150.0
    ident, unid = identify_spectrum(wave, flux, lines, rv_obs_kms=-20.0, line_fwhm_kms=7.0,
                                    normalised=True, uncertainty=np.full(wave.size, 1 / 150.0))
    kinds = set(ident.kind)
    assert {"telluric_band", "molecular_band"} <= kinds
    d = float(np.sqrt((1 - 20.0 / 299792.458) / (1 + 20.0 / 299792.458)))
    for lo, hi, _, knd, _ in band_regions(lines, "vacuum"):
        scale = d if knd == "molecular_band" else 1.0
        inside = (unid.observed_A >= lo * scale) & (unid.observed_A <= hi * scale)
        assert not inside.any(), (lo, hi, unid.observed_A[inside].tolist()[:5])


def test_batched_gaussian_fits_agree_with_scipy_curve_fit():
    # Reference: scipy.optimize.curve_fit (MINPACK lmdif, absolute_sigma=True), fitted
    # window by window; the batched fit must find the same minimum and covariance.
    import warnings

    from scipy.optimize import curve_fit

    from atlas.measure.identify import _gauss, fit_gaussians

    rng = np.random.default_rng(11)
    n, m = 40, 25
    mu_true = rng.uniform(5000, 6000, n)
    s_true = mu_true * rng.uniform(3, 9, n) / 299792.458
    d_true = rng.uniform(0.05, 0.8, n)
    x = mu_true[:, None] + np.linspace(-4, 4, m)[None, :] * s_true[:, None]
    noise = rng.uniform(0.003, 0.03, n)[:, None] * np.ones(m)
    y = _gauss(x, d_true[:, None], mu_true[:, None], s_true[:, None]) + rng.normal(0, 1, (n, m)) * noise
    noise[3, :4] = np.nan  # points without weight are left out
    p0 = np.column_stack([d_true * 1.3, mu_true + 0.4 * s_true, s_true * 0.7])
    popt, pcov, ok = fit_gaussians(x, y, noise, p0)
    assert ok.all()
    for i in range(n):
        use = np.isfinite(noise[i])
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            ref, rcov = curve_fit(_gauss, x[i, use], y[i, use], p0=p0[i], sigma=noise[i, use],
                                  absolute_sigma=True, maxfev=2000, xtol=1e-12, ftol=1e-12)
        err = np.sqrt(np.diag(rcov))
        assert np.all(np.abs(popt[i] - ref) < 1e-3 * err), (i, popt[i], ref)
        # compared as correlations (curve_fit's finite-difference Jacobian is good to ~1e-3)
        assert np.all(np.abs(pcov[i] - rcov) / np.outer(err, err) < 2e-3)


def test_batched_gaussian_fit_reports_a_flat_window_as_failed():
    # A window with no line: the depth is free but width and centre are not determined,
    # so the covariance is singular and the fit is flagged (common practice).
    from atlas.measure.identify import fit_gaussians

    x = np.linspace(6000.0, 6001.0, 30)[None, :]
    y = np.ones_like(x)
    popt, pcov, ok = fit_gaussians(x, y, np.full_like(x, 0.01), np.array([[0.0, 6000.5, 0.1]]))
    assert not ok[0]
