"""Photon noise at a requested S/N."""

from __future__ import annotations

import numpy as np
import pytest

from atlas.synth import noise


def der_snr(flux):
    """DER_SNR (Stoehr et al. 2008, ASP Conf. Ser. 394, 505): median signal / robust noise."""
    f = np.asarray(flux, dtype=np.float64)
    n = 1.482602 / np.sqrt(6.0) * np.median(np.abs(2.0 * f[2:-2] - f[:-4] - f[4:]))
    return np.median(f) / n


@pytest.mark.parametrize("snr", [30.0, 100.0, 250.0])
def test_realised_snr_matches_request(snr):
    rng = np.random.default_rng(7)
    counts = noise.scale_to_snr(np.full(200_000, 3.7), 3.7, snr)
    noisy, sigma = noise.add_photon_noise(counts, rng)
    # DER_SNR estimate (Stoehr et al. 2008) and the known sigma both give the request.
    assert der_snr(noisy) == pytest.approx(snr, rel=0.03)
    assert np.median(counts / sigma) == pytest.approx(snr, rel=1e-9)


def test_same_generator_start_same_noise():
    a = noise.add_photon_noise(np.full(100, 1e4), np.random.default_rng(3))[0]
    b = noise.add_photon_noise(np.full(100, 1e4), np.random.default_rng(3))[0]
    c = noise.add_photon_noise(np.full(100, 1e4), np.random.default_rng(4))[0]
    assert np.array_equal(a, b) and not np.array_equal(a, c)
