"""measure_spectrum on a model star: every number at once, consistent with the truth."""

from __future__ import annotations

import math

import numpy as np
import pytest

from atlas.measure.classify import class_number
from atlas.measure.report import measure_spectrum
from atlas.spectrum import make_spectrum


@pytest.mark.slow
def test_model_g_star_measured_consistently():
    # A 5800 K dwarf of atlas.synth: class within 2 subclasses of G2 (5800 K lies between
    # G1 and G3 in Pecaut & Mamajek 2013, typed from memory); v sin i 25 km/s back within
    # 35 % (the estimate is rough: Gaussian quadrature and the eps = 0.6 rotation profile
    # of Gray 2005, ch. 18); the RV within 3 sigma of the injected 61.3 km/s.
    from atlas.synth.model import Star, synthesize

    wave = np.exp(np.linspace(math.log(4800.0), math.log(6600.0), 60_000))
    s = synthesize(wave, Star(teff_k=5800.0, vsini_kms=25.0, rv_kms=61.3), resolving_power=50000)
    flux = s.normalised * s.continuum
    sigma = np.sqrt(flux * np.median(flux)) / 100
    noisy = flux + np.random.default_rng(5).normal(size=wave.size) * sigma
    ds = make_spectrum(wave, noisy, sigma, medium="vacuum", resolving_power=50000.0)
    out = measure_spectrum(ds)
    assert abs(out["rv_obs_kms"] - 61.3) < 3 * out["rv_err_kms"]
    assert abs(class_number(out["spectral_class"]) - class_number("G2")) <= 2, out["spectral_class"]
    assert out["vsini_rough_kms"] == pytest.approx(25.0, rel=0.35)
    assert out["teff_method"].startswith("from the class")
    assert len(out["lines"]) > 30
    assert all(r["species"] for r in out["lines"])
