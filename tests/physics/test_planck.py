"""Planck's law, Wien's peak and the colour-temperature fit."""

from __future__ import annotations

import astropy.units as u
import numpy as np
import pytest
from astropy.modeling.physical_models import BlackBody
from scipy.optimize import minimize_scalar

from atlas.errors import InputError
from atlas.physics import planck

# CODATA 2018 exact constants (Tiesinga et al. 2021, Rev. Mod. Phys. 93, 025010).
H = 6.62607015e-34  # J s
C = 299792458.0  # m / s
K_B = 1.380649e-23  # J / K
B_WIEN = 2.897771955e-3  # m K (CODATA 2018)


def test_b_lambda_matches_astropy_blackbody():
    # Reference: astropy.modeling.physical_models.BlackBody (per-Å scale).
    wave = np.geomspace(1000.0, 50000.0, 300)
    for t in (2500.0, 5772.0, 9600.0, 40000.0):
        bb = BlackBody(t * u.K, scale=1.0 * u.erg / (u.s * u.cm**2 * u.AA * u.sr))
        ref = bb(wave * u.AA).to_value(u.erg / (u.s * u.cm**2 * u.AA * u.sr))
        np.testing.assert_allclose(planck.b_lambda(wave, t), ref, rtol=1e-10)


def test_b_lambda_matches_plancks_formula_with_codata_constants():
    # Reference: Planck (1901): B_lambda = 2 h c^2 / lambda^5 / (exp(h c / lambda k T) - 1),
    # CODATA 2018 exact h, c, k.  Converted from W m^-3 sr^-1 to erg s^-1 cm^-2 Å^-1 sr^-1
    # (factor 1e-7).
    wave = np.geomspace(2000.0, 30000.0, 50)
    lam = wave * 1e-10
    for t in (3000.0, 5772.0, 20000.0):
        si = 2 * H * C**2 / lam**5 / np.expm1(H * C / (lam * K_B * t))
        np.testing.assert_allclose(planck.b_lambda(wave, t), si * 1e-7, rtol=1e-10)


@pytest.mark.parametrize("t", [3000.0, 5772.0, 10000.0, 30000.0])
def test_wien_peak_is_b_over_t(t):
    # Reference: Wien's displacement law, b = 2.897771955e-3 m K (CODATA 2018).
    assert planck.wien_peak_A(t) * 1e-10 * t == pytest.approx(B_WIEN, rel=1e-9)
    # and the numerical maximum of B_lambda is there
    res = minimize_scalar(
        lambda w: -planck.b_lambda(w, t),
        bounds=(0.5e7 / t, 5e7 / t),
        method="bounded",
        options={"xatol": 1e-6},
    )
    assert res.x == pytest.approx(planck.wien_peak_A(t), rel=1e-6)


def test_nominal_solar_planck_curve_peaks_at_502_nm():
    # Reference: IAU 2015 Resolution B3, nominal solar effective temperature 5772 K;
    # Wien (CODATA 2018): 2.897771955e-3 / 5772 = 502.04 nm for B_lambda.
    assert round(planck.wien_peak_A(5772.0) / 10.0) == 502


def test_colour_temperature_fit_recovers_t_within_its_error():
    # Reference: the fit is a least-squares fit of Planck (1901) curves (scipy curve_fit);
    # with known Gaussian noise the truth lies within 3 sigma (common practice).
    rng = np.random.default_rng(20241)
    wave = np.linspace(3800.0, 9000.0, 3000)
    for t_true in (3500.0, 5772.0, 12000.0):
        clean = planck.b_lambda(wave, t_true)
        sigma = 0.02 * clean.mean() * np.ones_like(wave)
        noisy = clean + sigma * rng.standard_normal(wave.size)
        t, t_err, scale = planck.fit_colour_temperature(wave, noisy, sigma)
        assert t_err > 0
        assert abs(t - t_true) < 3 * t_err
        assert scale == pytest.approx(1.0, rel=0.05)


def test_colour_temperature_does_not_depend_on_the_flux_scale():
    # common practice: a colour temperature uses only the shape of the spectrum.
    wave = np.linspace(4000.0, 8000.0, 500)
    flux = planck.b_lambda(wave, 6400.0)
    for k in (1e-25, 1.0, 1e20):
        t, _, scale = planck.fit_colour_temperature(wave, k * flux)
        assert t == pytest.approx(6400.0, rel=1e-5)
        assert scale == pytest.approx(k, rel=1e-4)


def test_colour_temperature_ignores_bad_samples_and_rejects_too_few():
    wave = np.linspace(4000.0, 8000.0, 200)
    flux = planck.b_lambda(wave, 4500.0)
    flux[::7] = np.nan
    t, _, _ = planck.fit_colour_temperature(wave, flux)
    assert t == pytest.approx(4500.0, rel=1e-5)
    with pytest.raises(InputError):
        planck.fit_colour_temperature([5000.0, 6000.0], [1.0, 1.0])


def test_fast_planck_used_in_fits_matches_astropy_blackbody():
    # Reference: astropy.modeling.physical_models.BlackBody.
    wave = np.geomspace(1000.0, 50000.0, 300)
    for t in (1500.0, 5772.0, 60000.0):
        np.testing.assert_allclose(
            planck.b_lambda_fast(wave, t), planck.b_lambda(wave, t), rtol=1e-10
        )


def test_quantity_version_accepts_any_spectral_unit():
    # Reference: astropy BlackBody; 5000 Å = 500 nm = c / 5000 Å in Hz (astropy u.spectral).
    ref = planck.b_lambda(5000.0, 5772.0)
    for x in (5000.0 * u.AA, 500.0 * u.nm, (5000.0 * u.AA).to(u.Hz, equivalencies=u.spectral())):
        q = planck.b_lambda_q(x, 5772.0 * u.K)
        assert q.unit == planck.B_LAMBDA_UNIT
        assert q.value == pytest.approx(ref, rel=1e-10)


def test_binning_long_spectra_keeps_the_fit_and_its_error(monkeypatch):
    # Documented shortcut: more than 8192 samples are averaged into 4096 bins first.
    # Averaging Gaussian noise over bins much narrower than the Planck curve's curvature
    # keeps the least-squares estimate and its error (common practice).
    rng = np.random.default_rng(7)
    wave = np.linspace(3800.0, 9000.0, 40000)
    clean = planck.b_lambda_fast(wave, 4800.0)
    sigma = 0.05 * clean
    flux = clean + sigma * rng.standard_normal(wave.size)
    binned = planck.fit_colour_temperature(wave, flux, sigma)
    monkeypatch.setattr(planck, "_MAX_FIT_SAMPLES", 10**9)
    full = planck.fit_colour_temperature(wave, flux, sigma)
    assert abs(binned[0] - full[0]) < 0.2 * full[1]
    assert binned[1] == pytest.approx(full[1], rel=0.1)
