"""Relativistic Doppler shifts of wavelengths."""

from __future__ import annotations

import astropy.units as u
import numpy as np
from astropy.coordinates import SpectralCoord
from hypothesis import given, settings
from hypothesis import strategies as st

from atlas.physics import doppler

C_KMS = 299792.458  # speed of light, exact (SI definition of the metre)


@settings(max_examples=60, deadline=None)
@given(
    wave=st.floats(1000.0, 30000.0),
    rv=st.floats(-3000.0, 3000.0),
)
def test_shift_then_unshift_returns_the_wavelength(wave, rv):
    # common practice: the inverse shift undoes the shift.
    back = doppler.unshift_A(doppler.shift_A(np.array([wave]), rv), rv)
    assert abs(back[0] - wave) < 1e-9 * wave


@settings(max_examples=60, deadline=None)
@given(wave=st.floats(3000.0, 25000.0), rv=st.floats(-20000.0, 20000.0))
def test_velocity_of_a_shifted_line_is_the_velocity_that_shifted_it(wave, rv):
    # common practice: velocity_kms inverts shift_A.
    shifted = doppler.shift_A(wave, rv)
    assert abs(doppler.velocity_kms(shifted, wave) - rv) < 1e-6


def test_shift_matches_astropy_spectralcoord_relativistic_shift():
    # Reference: astropy SpectralCoord.with_radial_velocity_shift (relativistic).
    wave = np.array([3933.663, 5889.951, 6562.79, 8542.09])
    for rv in (-250.0, -12.3, 0.0, 47.0, 3000.0):
        ref = SpectralCoord(wave * u.AA).with_radial_velocity_shift(rv * u.km / u.s)
        ours = doppler.shift_A(wave, rv)
        np.testing.assert_allclose(ours, ref.to_value(u.AA), rtol=1e-12)


def test_shift_is_the_relativistic_formula_not_the_classical_one():
    # Reference: relativistic longitudinal Doppler factor sqrt((1+b)/(1-b)) (Einstein 1905);
    # at 3000 km/s it differs from 1 + v/c by about 5e-5, i.e. 0.3 Å at 6563 Å.
    b = 3000.0 / C_KMS
    rel = 6562.79 * np.sqrt((1 + b) / (1 - b))
    classical = 6562.79 * (1 + b)
    ours = doppler.shift_A(6562.79, 3000.0)
    assert abs(ours - rel) < 1e-9
    assert abs(ours - classical) > 0.3


def test_receding_source_is_redshifted():
    # common practice: positive radial velocity = receding = longer wavelength.
    assert doppler.shift_A(5000.0, 10.0) > 5000.0
    assert doppler.velocity_kms(5000.1, 5000.0) > 0


def test_arrays_keep_their_shape_and_quantity_versions_agree():
    wave = np.linspace(4000.0, 7000.0, 12).reshape(3, 4)
    out = doppler.shift_A(wave, 25.0)
    assert out.shape == (3, 4)
    q = doppler.shift(wave * u.AA, 25.0 * u.km / u.s)
    np.testing.assert_allclose(q.to_value(u.AA), out, rtol=1e-15)
    v = doppler.velocity(q, wave * u.AA)
    np.testing.assert_allclose(v.to_value(u.km / u.s), 25.0, atol=1e-9)
