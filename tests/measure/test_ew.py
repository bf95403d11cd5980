"""Equivalent widths against closed forms, and their uncertainty against Monte Carlo."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.special import voigt_profile

from atlas.errors import InputError
from atlas.measure.ew import equivalent_width

WAVE = np.linspace(6540.0, 6560.0, 40001)  # 0.0005 Å steps


def test_gaussian_line_ew_matches_closed_form():
    # EW of a Gaussian of central depth d and width sigma is d * sigma * sqrt(2 pi)
    # (closed form of the Gaussian integral; common practice).
    d, sigma, c0 = 0.4, 0.08, 6550.0
    flux = 1.0 - d * np.exp(-0.5 * ((WAVE - c0) / sigma) ** 2)
    res = equivalent_width(WAVE, flux, c0 - 2.0, c0 + 2.0, continuum=1.0)
    expected = d * sigma * math.sqrt(2 * math.pi) * 1000.0
    assert res.ew_mA == pytest.approx(expected, rel=0.01)
    assert res.depth == pytest.approx(d, rel=0.01)


def test_voigt_line_ew_matches_closed_form():
    # A Voigt profile has unit area (scipy.special.voigt_profile is normalised), so a line
    # 1 - A * V(x) has EW = A; the Lorentz wings beyond +-6 Å hold about
    # (2/pi) * gamma / 6 Å = 0.2 % of it (closed form of the Lorentzian integral).
    area, sigma, gamma, c0 = 0.05, 0.04, 0.02, 6550.0
    flux = 1.0 - area * voigt_profile(WAVE - c0, sigma, gamma)
    res = equivalent_width(WAVE, flux, c0 - 6.0, c0 + 6.0, continuum=1.0)
    assert res.ew_mA == pytest.approx(area * 1000.0, rel=0.01)


def test_fitted_flank_continuum_recovers_sloped_continuum():
    # Linear continuum under a Gaussian line: EW unchanged by the slope (definition of EW).
    d, sigma, c0 = 0.3, 0.1, 6550.0
    cont = 2.0 + 0.01 * (WAVE - c0)
    flux = cont * (1.0 - d * np.exp(-0.5 * ((WAVE - c0) / sigma) ** 2))
    res = equivalent_width(WAVE, flux, c0 - 1.0, c0 + 1.0, flank_A=1.5)
    assert res.continuum == "linear fit to flanks"
    assert res.ew_mA == pytest.approx(d * sigma * math.sqrt(2 * math.pi) * 1000.0, rel=0.01)


def test_ew_error_matches_monte_carlo_scatter():
    # The propagated error should describe the scatter of EWs over noise realisations
    # (error propagation, common practice); checked to 20 % over 300 realisations.
    rng = np.random.default_rng(7)
    wave = np.linspace(6545.0, 6555.0, 2001)
    d, sigma, c0, noise = 0.5, 0.1, 6550.0, 0.02
    model = 1.0 - d * np.exp(-0.5 * ((wave - c0) / sigma) ** 2)
    ews, errs = [], []
    for _ in range(300):
        flux = model + rng.normal(0, noise, wave.size)
        res = equivalent_width(wave, flux, c0 - 0.6, c0 + 0.6,
                               uncertainty=np.full(wave.size, noise), flank_A=1.0)
        ews.append(res.ew_mA)
        errs.append(res.ew_err_mA)
    assert np.std(ews) == pytest.approx(np.mean(errs), rel=0.2)
    # and Cayrel's (1988) estimate is of the same order (it ignores the continuum error)
    assert 0.3 < res.cayrel_err_mA / np.mean(errs) < 3


def test_bad_range_is_an_input_error():
    with pytest.raises(InputError, match="--ew"):
        equivalent_width(WAVE, np.ones_like(WAVE), 6555.0, 6550.0)
    with pytest.raises(InputError, match="not inside"):
        equivalent_width(WAVE, np.ones_like(WAVE), 7000.0, 7001.0)
