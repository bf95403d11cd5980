"""Colour temperature and spectral class."""

from __future__ import annotations

import math

import numpy as np
import pytest

from atlas.measure.classify import (
    class_name,
    class_number,
    classify,
    colour_temperature,
    is_calibrated,
)
from atlas.spectrum import make_spectrum

SUN_TEFF_K = 5772.0  # IAU 2015 Resolution B3, nominal solar effective temperature


def test_planck_fit_returns_nominal_solar_teff_within_its_error(synth):
    # A noisy Planck curve at 5772 K (IAU 2015 Resolution B3; Planck 1901) must give back
    # 5772 K within 3 times the reported error, and the error must be a sensible size.
    wave = np.linspace(3800.0, 9000.0, 100_000)
    model = synth.planck_lambda(wave, SUN_TEFF_K)
    model /= model.max()
    sigma = 0.02 * model
    flux = model + np.random.default_rng(4).normal(size=wave.size) * sigma
    teff, err = colour_temperature(wave, flux, sigma)
    assert abs(teff - SUN_TEFF_K) < 3 * err
    assert 0 < err < 100


def test_calibrated_flux_units_are_recognised():
    # astropy's physical types of flux densities (astropy.units documentation)
    w = np.linspace(5000, 5010, 10)
    assert is_calibrated(make_spectrum(w, np.ones(10), flux_unit="erg / (s cm2 Angstrom)"))
    assert is_calibrated(make_spectrum(w, np.ones(10), flux_unit="Jy"))
    assert not is_calibrated(make_spectrum(w, np.ones(10), flux_unit="adu"))
    assert not is_calibrated(make_spectrum(w, np.ones(10)))


def test_class_numbers_round_trip():
    # MK letter sequence O B A F G K M (Morgan, Keenan & Kellman 1943)
    assert class_number("G2") == 42 and class_name(42.4) == "G2" and class_name(5.6) == "O6"


@pytest.mark.slow
@pytest.mark.parametrize("name", ["B5", "A0", "F5", "G5", "K5", "M3"])
def test_template_class_recovered_with_noise_and_velocity(name):
    # Class templates (atlas.synth.templates, Teff per class from Pecaut & Mamajek 2013)
    # with noise (S/N 50) and a 37 km/s shift must be classified within one subclass.
    from atlas.synth.templates import template_grid

    wave = np.exp(np.linspace(math.log(4500.0), math.log(6700.0), 30_000))
    flux = template_grid(wave, R=30000, classes=[name])["flux"].values[0]
    rv = 37.0
    fac = math.sqrt((1 + rv / 299792.458) / (1 - rv / 299792.458))
    noisy = 3.0 * (flux + np.random.default_rng(len(name)).normal(0, 0.02, wave.size))
    res = classify(wave * fac, noisy, np.full(wave.size, 0.06), rv_obs_kms=rv,
                   line_fwhm_kms=299792.458 / 30000)
    assert abs(class_number(res.spectral_class) - class_number(name)) <= 1, res
    assert res.class_confidence > 0.5
