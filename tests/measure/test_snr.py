"""DER_SNR (Stoehr et al. 2008) and the sampling helpers."""

from __future__ import annotations

import astropy.constants as const
import astropy.units as u
import numpy as np
import pytest

from atlas.measure.sampling import implied_resolving_power, median_sampling_kms
from atlas.measure.snr import der_snr

N = 200_000


@pytest.mark.parametrize("sigma", [0.5, 2.0, 10.0])
def test_flat_spectrum_with_gaussian_noise(sigma):
    # DER_SNR recovers median / sigma for white Gaussian noise (Stoehr et al. 2008, ASP Conf. Ser. 394, 505)
    rng = np.random.default_rng(7)
    flux = 100.0 + rng.normal(0.0, sigma, N)
    assert der_snr(flux) == pytest.approx(100.0 / sigma, rel=0.03)


def test_smooth_spectrum_with_gaussian_noise():
    # smooth over 5 pixels: the second difference removes the signal (Stoehr et al. 2008, sect. 2)
    rng = np.random.default_rng(11)
    x = np.arange(N)
    smooth = 50.0 * (1.0 + 0.2 * np.sin(2 * np.pi * x / 5000.0))
    flux = smooth + rng.normal(0.0, 1.0, N)
    assert der_snr(flux) == pytest.approx(np.median(smooth) / 1.0, rel=0.03)


def test_nan_and_masked_samples_are_ignored():
    rng = np.random.default_rng(3)
    flux = 100.0 + rng.normal(0.0, 1.0, N)
    clean = der_snr(flux)
    spoiled = flux.copy()
    spoiled[::50] = np.nan
    mask = np.zeros(N, dtype=bool)
    mask[1::50] = True
    spoiled[1::50] = 1e6  # wild values under the mask
    assert der_snr(spoiled, mask=mask) == pytest.approx(clean, rel=0.02)
    assert der_snr(np.ma.masked_array(spoiled, mask=mask)) == pytest.approx(clean, rel=0.02)
    assert np.isfinite(der_snr(spoiled, mask=mask))


def test_orders_give_the_median_of_their_values():
    rng = np.random.default_rng(5)
    orders = np.stack([100.0 + rng.normal(0.0, s, 20_000) for s in (1.0, 2.0, 4.0)])
    assert der_snr(orders) == pytest.approx(
        50.0, rel=0.05
    )  # median of 100, 50, 25 (Stoehr et al. 2008)


def test_too_few_samples_give_nan():
    assert np.isnan(der_snr([1.0, 2.0, np.nan, 3.0, 4.0]))
    assert np.isnan(der_snr(np.ones(100)))  # zero noise: no finite S/N


def test_sampling_of_a_log_grid_and_the_resolving_power_it_implies():
    c_kms = const.c.to_value(u.km / u.s)  # CODATA value via astropy.constants
    step = 1e-5
    wave = 5000.0 * np.exp(step * np.arange(1000))
    s = median_sampling_kms(wave)
    # constant ln(lambda) step = constant velocity step c * d(ln lambda) (common practice)
    assert s == pytest.approx(c_kms * step, rel=1e-9)
    # 2 pixels per resolution element (Nyquist, common practice): R = c / (2 * step_kms)
    assert implied_resolving_power(s) == pytest.approx(1.0 / (2 * step), rel=1e-9)
    assert implied_resolving_power(s, pixels_per_element=3) == pytest.approx(
        1.0 / (3 * step), rel=1e-9
    )


def test_sampling_is_taken_within_orders_and_ignores_order_gaps():
    step = 2e-5
    orders = np.stack([w0 * np.exp(step * np.arange(500)) for w0 in (4000.0, 4100.0, 4200.0)])
    c_kms = const.c.to_value(u.km / u.s)
    assert median_sampling_kms(orders) == pytest.approx(c_kms * step, rel=1e-9)
    assert np.isnan(median_sampling_kms([5000.0]))
    assert np.isnan(implied_resolving_power(float("nan")))
