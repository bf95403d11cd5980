"""The continuum: normalised flux near 1 away from lines on a spectrum with a known continuum."""

from __future__ import annotations

import numpy as np

from atlas.continuum import ContinuumSettings, fit_continuum, normalise

from ._data import C_KMS, synthetic


def test_normalised_flux_is_near_one_away_from_lines():
    # Synthetic spectrum made here: known sloped continuum, 40 absorption lines, 0.5 % noise.
    wave, flux, cont = synthetic(n=60_000, step_kms=2.0, lines=80, noise=0.005, seed=11)
    c = fit_continuum(wave, flux)
    # Upper-envelope continuum within 1 % of the truth (common practice for S/N ~ 200).
    np.testing.assert_allclose(c, cont, rtol=0.01)
    norm = normalise(flux, c)
    line_free = np.abs(flux / cont - 1.0) < 0.015  # away from lines (noise only)
    assert abs(np.median(norm[line_free]) - 1.0) < 0.005


def test_deep_broad_line_does_not_pull_the_continuum_down():
    # A deep line 40 Å wide (like a Balmer line in a hot star) on a flat continuum (common practice:
    # the continuum passes over the line, not into it).
    wave = 4000.0 * np.exp(np.arange(60_000) * 4.0 / C_KMS)
    cont = np.full(wave.size, 50.0)
    prof = 1.0 - 0.7 * np.exp(-0.5 * ((wave - 4400.0) / 8.0) ** 2)
    rng = np.random.default_rng(2)
    flux = cont * prof * (1 + rng.normal(0, 0.003, wave.size))
    c = fit_continuum(wave, flux)
    core = np.abs(wave - 4400.0) < 5.0
    assert np.all(np.abs(c[core] / 50.0 - 1.0) < 0.05)


def test_masked_samples_and_emission_spikes_are_ignored():
    wave, flux, cont = synthetic(n=30_000, lines=20, seed=4)
    spiky = flux.copy()
    spiky[::997] *= 5.0  # cosmic-ray like spikes
    mask = np.zeros(wave.size, dtype=bool)
    mask[1000:3000] = True
    spiky[1000:3000] = 0.0
    c = fit_continuum(wave, spiky, mask)
    np.testing.assert_allclose(c, cont, rtol=0.015)


def test_segments_are_fitted_separately():
    # Two "orders" with different blaze levels side by side.
    w1 = 5000.0 * np.exp(np.arange(10_000) * 2e-6)
    w2 = w1[-1] * np.exp(np.arange(1, 10_001) * 2e-6)
    wave = np.concatenate([w1, w2])
    flux = np.concatenate([np.full(w1.size, 10.0), np.full(w2.size, 30.0)])
    c = fit_continuum(wave, flux, segments=[(0, 10_000), (10_000, 20_000)],
                      settings=ContinuumSettings(knot_kms=500.0))
    np.testing.assert_allclose(c[:10_000], 10.0, rtol=1e-6)
    np.testing.assert_allclose(c[10_000:], 30.0, rtol=1e-6)


def test_a_steep_echelle_blaze_is_followed_and_stays_positive():
    # One order whose blaze falls to almost nothing at both ends: the grating blaze
    # function sinc^2 (common practice), over 97 % of its main lobe's half-width,
    # with absorption lines and photon noise.  Before fitting ln(flux) per order, the
    # fitted curve went below zero near the ends of most orders of such a spectrum.
    rng = np.random.default_rng(4)
    n = 2048
    wave = 3930.0 * np.exp(np.arange(n) * 2.0 / C_KMS)
    u = np.linspace(-0.97, 0.97, n)
    blaze = 38_000.0 * np.sinc(u) ** 2 + 5.0
    lines = np.ones(n)
    for c in rng.uniform(wave[100], wave[-100], 25):
        lines *= 1.0 - rng.uniform(0.1, 0.7) * np.exp(-0.5 * ((wave - c) / (c * 6.0 / C_KMS)) ** 2)
    flux = rng.poisson(blaze * lines).astype(float)
    cont = fit_continuum(wave, flux, segments=[(0, n)])
    assert np.all(cont > 0)
    err = np.abs(cont / blaze - 1)
    above5, above20 = blaze > 0.05 * blaze.max(), blaze > 0.2 * blaze.max()
    assert np.median(err[above5]) < 0.01, np.median(err[above5])
    assert np.max(err[above20]) < 0.05, np.max(err[above20])
    assert np.nanmax(normalise(flux, cont)[above20]) < 1.1
