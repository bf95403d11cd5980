"""Synthetic stars at the density of the dense line list: many lines in F-K, few in B."""

from __future__ import annotations

import numpy as np
import pytest
from scipy.signal import find_peaks

from atlas.physics.airvac import air_to_vacuum_A
from atlas.synth.model import Star, synthesize


def minima(lo_A, hi_A, star):
    """Vacuum wavelengths and depths of the absorption minima deeper than 1 % (noise free)."""
    w = np.exp(np.arange(np.log(lo_A), np.log(hi_A), 0.5 / 299792.458))
    flux = synthesize(w, star, resolving_power=75000.0).normalised
    pk, _ = find_peaks(1.0 - flux, height=0.01, prominence=0.005)
    return w[pk], 1.0 - flux[pk]


@pytest.fixture(scope="module")
def g2_blue():
    # Sun-like G2 V (IAU 2015 nominal Teff 5772 K, log g 4.44), slow rotator
    return minima(4400.0, 4500.0, Star(5772.0, 4.44, vsini_kms=2.0))


def test_g2_dwarf_shows_about_a_hundred_lines_around_mg_b():
    # The solar spectrum has about a hundred lines in the 40 Å around Mg b
    # (Moore, Minnaert & Houtgast 1966, solar line table; from memory).
    w, _ = minima(5160.0, 5200.0, Star(5772.0, 4.44, vsini_kms=2.0))
    assert len(w) >= 60


def test_b5_dwarf_shows_few_lines_the_deepest_he_i_4471_and_mg_ii_4481(g2_blue):
    # Mid-B dwarfs: He I 4471 and Mg II 4481 are the strongest lines of 4400-4500 Å and
    # metal lines are few (Gray & Corbally 2009, Stellar Spectral Classification, ch. 4;
    # common practice).  Teff of B5 V: 15700 K (Pecaut & Mamajek 2013).
    w, d = minima(4400.0, 4500.0, Star(15700.0, 4.2, vsini_kms=2.0))
    top = np.sort(w[np.argsort(-d)[:3]])
    he, mg = air_to_vacuum_A(4471.48), air_to_vacuum_A(4481.13)
    assert np.min(np.abs(top - he)) < 0.3
    assert np.min(np.abs(top - mg)) < 0.3
    assert len(w) < len(g2_blue[0]) / 5
