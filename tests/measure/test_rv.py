"""Radial velocities of synthetic stars made from the shipped line list."""

from __future__ import annotations

import numpy as np
import pytest

from atlas.measure import rv, velocity
from atlas.spectrum import make_spectrum

DEPTH_OF_STRENGTH = {1: 0.7, 2: 0.45, 3: 0.25, 4: 0.12}


def star_lines(lines, lo=4400.0, hi=6800.0):
    """Vacuum positions and depths of the atomic stellar lines between lo and hi (Å)."""
    wave, _ = rv.line_mask(lines, "vacuum")
    sel = lines[(lines.kind == "atomic") & ~lines.telluric.astype(str).str.lower().eq("true")]
    sel = sel[(sel.vacuum_A > lo) & (sel.vacuum_A < hi)]
    depth = np.array([DEPTH_OF_STRENGTH[int(s)] for s in sel.strength])
    assert wave.size > 0
    return sel.vacuum_A.to_numpy(), depth


@pytest.mark.parametrize("rv_true", [-300.0, -123.4, 0.0, 17.9, 211.0, 300.0])
def test_injected_velocity_recovered_within_3_sigma(synth, lines, rv_true):
    # Doppler recovery of an injected shift (relativistic Doppler, Einstein 1905, as
    # astropy's doppler_relativistic); 3-sigma agreement with the reported error.
    rest, depth = star_lines(lines)
    wave = synth.log_grid(4500.0, 6700.0, 60_000)
    flux, sigma, _ = synth.make_star(wave, rest, depth, rv_kms=rv_true, sigma_kms=4.0,
                                     snr=80, teff_k=6000.0, rng=int(abs(rv_true) * 10) + 1)
    res = rv.measure_rv(wave, flux, sigma, line_wave_A=rest)
    assert res.rv_obs_kms is not None, res.note
    assert abs(res.rv_obs_kms - rv_true) < 3 * res.rv_err_kms, (res.rv_obs_kms, res.rv_err_kms)
    assert res.rv_err_kms < 0.5


def test_error_is_realistic_over_noise_realisations(synth, lines):
    # The reported error should match the scatter over realisations (within 35 % for 40
    # draws) and approach the photon-noise limit of Bouchy, Pepe & Queloz (2001).
    rest, depth = star_lines(lines)
    wave = synth.log_grid(4500.0, 6700.0, 40_000)
    rng = np.random.default_rng(3)
    got, errs = [], []
    for _ in range(40):
        flux, sigma, _ = synth.make_star(wave, rest, depth, rv_kms=25.0, sigma_kms=4.0,
                                         snr=60, rng=rng)
        r = rv.measure_rv(wave, flux, sigma, line_wave_A=rest)
        got.append(r.rv_obs_kms)
        errs.append(r.rv_err_kms)
    scatter = np.std(got, ddof=1)
    assert scatter == pytest.approx(np.median(errs), rel=0.35)
    assert abs(np.mean(got) - 25.0) < 3 * scatter / np.sqrt(len(got)) + 0.3 * scatter


def test_echelle_orders_act_as_strips(synth, lines):
    rest, depth = star_lines(lines)
    wave = synth.log_grid(4500.0, 6700.0, 60_000).reshape(6, 10_000)
    flux, sigma, _ = synth.make_star(wave.ravel(), rest, depth, rv_kms=-42.0, snr=100, rng=5)
    res = rv.measure_rv(wave, flux.reshape(6, -1), sigma.reshape(6, -1), line_wave_A=rest)
    assert len(res.strips) == 6
    assert abs(res.rv_obs_kms + 42.0) < 3 * res.rv_err_kms


def test_outlier_strip_is_flagged(synth, lines):
    # A strip whose lines are displaced (a wavelength-solution fault) must be clipped
    # (sigma clipping, common practice).
    rest, depth = star_lines(lines)
    wave = synth.log_grid(4500.0, 6700.0, 60_000).reshape(6, 10_000)
    flux, sigma, _ = synth.make_star(wave.ravel(), rest, depth, rv_kms=10.0, snr=150, rng=9)
    wave_bad = wave.copy()
    wave_bad[2] *= 1 + 3.0 / rv.C_KMS  # order 2 off by 3 km/s
    res = rv.measure_rv(wave_bad, flux.reshape(6, -1), sigma.reshape(6, -1), line_wave_A=rest)
    flagged = [s for s in res.strips if not s.used]
    assert len(flagged) == 1 and flagged[0].lo_A == pytest.approx(wave_bad[2][0])
    assert abs(res.rv_obs_kms - 10.0) < 3 * res.rv_err_kms


def test_featureless_spectrum_gives_no_velocity(synth, lines):
    rest, _ = star_lines(lines)
    wave = synth.log_grid(4500.0, 6700.0, 20_000)
    flux = 1.0 + np.random.default_rng(1).normal(0, 0.01, wave.size)
    res = rv.measure_rv(wave, flux, np.full(wave.size, 0.01), line_wave_A=rest)
    assert res.rv_obs_kms is None and "no significant" in res.note


def test_dataset_wrapper_applies_barycentric_correction(synth, lines):
    # v = v_obs + v_bary + v_obs v_bary / c (Wright & Eastman 2014, PASP 126, 838, eq. 11)
    rest, depth = star_lines(lines)
    wave = synth.log_grid(4500.0, 6700.0, 40_000)
    flux, sigma, _ = synth.make_star(wave, rest, depth, rv_kms=30.0, snr=100, rng=2)
    ds = make_spectrum(wave, flux, sigma, medium="vacuum", obs_time_utc="2024-03-01T03:00:00",
                       ra_deg=101.3, dec_deg=-16.7, site_lat_deg=-30.0, site_lon_deg=-70.7,
                       site_height_m=2200.0)
    res = velocity.rv_of_spectrum(ds, lines)
    assert res.barycentric_kms is not None
    expect = res.rv_obs_kms + res.barycentric_kms + res.rv_obs_kms * res.barycentric_kms / rv.C_KMS
    assert res.rv_kms == pytest.approx(expect, abs=1e-9)
    ds2 = make_spectrum(wave, flux, sigma, medium="vacuum")
    res2 = velocity.rv_of_spectrum(ds2, lines)
    assert res2.rv_kms is None and "missing time" in res2.note


@pytest.mark.slow
@pytest.mark.parametrize(("teff_k", "vsini_kms"), [(5800.0, 3.0), (4500.0, 10.0), (5800.0, 25.0)])
def test_velocity_of_model_star_with_voigt_lines_and_rotation(lines, teff_k, vsini_kms):
    # Stars from atlas.synth (Saha-Boltzmann strengths, Voigt profiles, rotation; their
    # lines are not the Gaussians of the template): injected 61.3 km/s back within 3 sigma
    # (relativistic Doppler, astropy doppler_relativistic).
    from atlas.synth.model import Star, synthesize

    wave = np.exp(np.linspace(np.log(4800.0), np.log(6600.0), 60_000))
    s = synthesize(wave, Star(teff_k=teff_k, vsini_kms=vsini_kms, rv_kms=61.3),
                   resolving_power=50000)
    flux = s.normalised * s.continuum
    sigma = np.sqrt(flux * np.median(flux)) / 100
    noisy = flux + np.random.default_rng(1).normal(size=wave.size) * sigma
    lw, wt = rv.line_mask(lines, "vacuum")
    res = rv.measure_rv(wave, noisy, sigma, line_wave_A=lw, line_weight=wt)
    assert abs(res.rv_obs_kms - 61.3) < 3 * res.rv_err_kms, (res.rv_obs_kms, res.rv_err_kms)
    # the rough v sin i is rough: only its order of magnitude is checked for fast rotators
    if vsini_kms >= 20:
        assert 0.5 < rv.vsini_rough(res.line_fwhm_kms, 50000) / vsini_kms < 1.5


def test_long_spectrum_binned_keeps_velocity_and_line_area(synth, lines):
    # Binning 10 samples of 0.05 km/s into 0.5 km/s bins (a boxcar, common practice)
    # keeps the injected velocity within 3 sigma and the area of the lines
    # (the equivalent width is an integral, Gray 2005 ch. 13) to 0.5 %.
    rest, depth = star_lines(lines, 5000.0, 5600.0)
    wave = synth.log_grid(5000.0, 5600.0, 2_300_000)
    flux, sigma, _ = synth.make_star(wave, rest, depth, rv_kms=-71.2, sigma_kms=3.0, snr=30, rng=11)
    ds = make_spectrum(wave, flux, sigma, medium="vacuum")
    small, note = velocity.bin_long_spectrum(ds, max_samples=1_000_000)
    assert note and small.sizes["sample"] < 250_000
    assert velocity.bin_long_spectrum(ds)[1] is not None  # above the default 2,000,000 too
    short = make_spectrum(wave[:1000], flux[:1000], sigma[:1000], medium="vacuum")
    assert velocity.bin_long_spectrum(short)[1] is None
    res = velocity.rv_of_spectrum(small, lines)
    assert abs(res.rv_obs_kms + 71.2) < 3 * res.rv_err_kms
    w_b = small["wavelength"].values
    f_b = small["flux"].values
    c = float(np.nanmedian(f_b))  # one continuum level for both
    area_full = np.trapezoid(1 - flux / c, wave)
    area_bin = np.trapezoid(1 - f_b / c, w_b)
    assert area_bin == pytest.approx(area_full, rel=5e-3)
