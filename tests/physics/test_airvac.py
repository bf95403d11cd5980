"""Air <-> vacuum conversion: Morton (2000) / IAU and Ciddor (1996)."""

from __future__ import annotations

import airvacuumvald
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from atlas.errors import InputError
from atlas.physics import airvac

GRID = np.linspace(3000.0, 25000.0, 2001)


def test_vacuum_to_air_matches_airvacuumvald_morton_formula():
    # Reference: PyPI airvacuumvald.vacuum_to_air (the Morton 2000 formula).
    np.testing.assert_allclose(
        airvac.vacuum_to_air_A(GRID), airvacuumvald.vacuum_to_air(GRID), atol=1e-3, rtol=0
    )


def test_air_to_vacuum_matches_airvacuumvald_inverse_formula():
    # Reference: PyPI airvacuumvald.air_to_vacuum (N. Piskunov's fitted inverse of Morton 2000).
    np.testing.assert_allclose(
        airvac.air_to_vacuum_A(GRID), airvacuumvald.air_to_vacuum(GRID), atol=1e-3, rtol=0
    )


@pytest.mark.parametrize(
    ("air", "vacuum"),
    [
        (5889.950954, 5891.583264),  # Na I D2, NIST ASD (from memory)
        (5895.924237, 5897.558147),  # Na I D1, NIST ASD (from memory)
        (3933.663, 3934.777),  # Ca II K, NIST ASD (from memory)
    ],
)
def test_morton_conversion_reproduces_tabulated_air_and_vacuum_pairs(air, vacuum):
    # Reference: NIST ASD air/vacuum pairs (from memory); NIST uses a slightly different
    # dispersion formula, so agreement to 2e-3 Å is what is expected.
    assert abs(airvac.air_to_vacuum_A(air) - vacuum) < 2e-3
    assert abs(airvac.vacuum_to_air_A(vacuum) - air) < 2e-3


@settings(max_examples=200, deadline=None)
@given(w=st.floats(3000.0, 25000.0), method=st.sampled_from(["morton", "ciddor"]))
def test_round_trip_is_better_than_1e_4_angstrom(w, method):
    # Requirement (common practice for line lists): air->vacuum inverts vacuum->air.
    there = airvac.vacuum_to_air_A(w, method)
    assert abs(airvac.air_to_vacuum_A(there, method) - w) < 1e-4
    back = airvac.air_to_vacuum_A(w, method)
    assert abs(airvac.vacuum_to_air_A(back, method) - w) < 1e-4


def test_round_trip_on_a_large_array():
    w = np.linspace(3000.0, 25000.0, 200_001)
    err = np.abs(airvac.air_to_vacuum_A(airvac.vacuum_to_air_A(w)) - w)
    assert err.max() < 1e-4


def test_ciddor_in_standard_air_agrees_with_morton():
    # Reference: both describe standard dry air (15 °C, 101325 Pa, 450 ppm CO2):
    # Birch & Downs (1994) via Morton (2000) and Ciddor (1996); they agree to ~1e-8 in n.
    diff = airvac.vacuum_to_air_A(GRID, "ciddor") - airvac.vacuum_to_air_A(GRID, "morton")
    assert np.abs(diff).max() < 1e-3


def test_ciddor_index_at_633_nm_20_c():
    # Reference: NIST Engineering Metrology Toolbox, Ciddor calculator, 633 nm vacuum,
    # 20 °C, 101.325 kPa, dry, 450 ppm CO2: n = 1.000271800 (from memory).
    n = 1.0 + airvac.refractivity_ciddor(6330.0, temperature_c=20.0, pressure_pa=101325.0)
    assert abs(n - 1.000271800) < 2e-9


def test_ciddor_humidity_and_temperature_lower_the_index():
    # Reference: Ciddor (1996), sec. 2: water vapour is less refractive than the dry air it
    # displaces, and n - 1 scales with density (lower at higher temperature).
    base = airvac.refractivity_ciddor(5000.0)
    assert airvac.refractivity_ciddor(5000.0, humidity=0.8, temperature_c=15.0) < base
    assert airvac.refractivity_ciddor(5000.0, temperature_c=30.0) < base
    half = airvac.refractivity_ciddor(5000.0, pressure_pa=101325.0 / 2)
    assert abs(half / base - 0.5) < 1e-3  # ideal gas, small compressibility correction


def test_below_2000_angstrom_vacuum_is_kept():
    # common practice: no air wavelengths are quoted below 2000 Å.
    w = np.array([1215.67, 1548.2, 1999.9])
    np.testing.assert_array_equal(airvac.vacuum_to_air_A(w), w)
    np.testing.assert_array_equal(airvac.air_to_vacuum_A(w), w)


def test_air_is_shorter_than_vacuum_by_about_a_part_in_3600():
    # Reference: n - 1 of standard air is about 2.8e-4 in the optical (Morton 2000).
    ratio = airvac.vacuum_to_air_A(5000.0) / 5000.0
    assert 1 - 2.9e-4 < ratio < 1 - 2.7e-4


def test_unknown_method_is_an_input_error():
    with pytest.raises(InputError, match="method"):
        airvac.air_to_vacuum_A(5000.0, method="guess")
