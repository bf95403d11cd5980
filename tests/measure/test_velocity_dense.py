"""A cool star at the density of real stars: its velocity is re-measured against its class.

The spectrum is synthesised by ``atlas.synth`` from the shipped Gaia-ESO list (Heiter et
al. 2021) at a velocity we choose, so the check is that the pipeline recovers the
velocity put in (the Doppler law of ``atlas.synth``, relativistic as in
``atlas.physics.doppler``).  On such spectra the curated-list mask and the hot-star
template fit were 0.3 km/s off (DEVELOPERS.md, "Radial velocity").
"""

from __future__ import annotations

import math

import numpy as np

from atlas.lines.dense import load_merged_lines
from atlas.measure.pipeline import measure_run
from atlas.measure.velocity import neighbour_classes, template_step_kms
from atlas.synth.model import Star, synthesize

RV_KMS = 23.4


def test_a_dense_g_dwarf_gets_its_velocity_from_the_templates_of_its_class():
    lines = load_merged_lines()
    lines = lines[(lines.vacuum_A > 5090.0) & (lines.vacuum_A < 5410.0)]
    n = 30_000
    wave = np.exp(np.linspace(math.log(5100.0), math.log(5400.0), n))
    clean = synthesize(wave, Star(teff_k=5800.0, logg=4.44, rv_kms=RV_KMS, vsini_kms=2.0),
                       resolving_power=50000.0, lines=lines).normalised
    sigma = np.sqrt(np.clip(clean, 1e-6, None)) / 100.0
    flux = clean + np.random.default_rng(7).normal(size=n) * sigma
    seq = {"wavelength": wave, "flux": flux, "mask": np.zeros(n, bool), "continuum": np.ones(n),
           "uncertainty": sigma}
    m = measure_run(seq, {"resolving_power": 50000.0}, with_features=False)
    assert m.spectral_class.spectral_class[0] == "G"
    assert m.rv.method.startswith("template G")
    assert any("re-measured against the" in n for n in m.notes)
    assert abs(m.rv.rv_obs_kms - RV_KMS) < 0.05
    assert abs(m.rv.rv_obs_kms - RV_KMS) < 3 * m.rv.rv_err_kms


def test_neighbour_classes_bracket_the_temperature():
    # class temperatures: Pecaut & Mamajek (2013), as typed in atlas.synth.templates (from memory)
    assert set(neighbour_classes(5800.0)) == {"G0", "G5"}
    assert neighbour_classes(2500.0) == ("M5",)
    assert neighbour_classes(50000.0) == ("O5",)
    assert template_step_kms(7.0) == 0.7 and template_step_kms(100.0) == 2.5 and template_step_kms(1.0) == 0.5
