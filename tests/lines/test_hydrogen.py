"""Computed hydrogen and He II lines against published values."""

from __future__ import annotations

import math

import pytest

from atlas.lines import hydrogen
from atlas.physics.airvac import vacuum_to_air_A


def _air(n_low, n_up, z=1):
    return vacuum_to_air_A(hydrogen.line(n_low, n_up, z).vacuum_A)


def test_h_alpha_matches_nist_asd():
    # Reference: NIST ASD, H I H-alpha, air: 6562.79 Å observed, 6562.819 Å Ritz;
    # we allow 0.03 Å for the different weighting of fine-structure components and
    # vacuum conventions.
    air = _air(2, 3)
    assert abs(air - 6562.79) < 0.03
    assert abs(air - 6562.819) < 0.03
    # vacuum: 6564.61 Å (NIST ASD, from memory)
    assert abs(hydrogen.line(2, 3).vacuum_A - 6564.61) < 0.01


@pytest.mark.parametrize(
    ("n_up", "air_ref"),
    [
        (4, 4861.33),  # H-beta (from memory)
        (5, 4340.47),  # H-gamma (from memory)
        (6, 4101.74),  # H-delta (from memory)
        (7, 3970.07),  # H-epsilon (from memory)
    ],
)
def test_balmer_beta_to_epsilon_air_wavelengths(n_up, air_ref):
    # Reference: commonly tabulated air wavelengths (from memory; NIST ASD lists the same
    # to 0.01-0.02 Å).
    assert abs(_air(2, n_up) - air_ref) < 0.03


def test_lyman_alpha_and_paschen_alpha():
    # Reference: Lyman-alpha 1215.67 Å vacuum; Paschen-alpha 18751.0 Å air (from memory).
    assert abs(hydrogen.line(1, 2).vacuum_A - 1215.67) < 0.01
    assert abs(_air(3, 4) - 18751.0) < 0.1


def test_fine_structure_matters_at_the_tenth_of_an_angstrom_level():
    # Bohr/Rydberg alone (no fine structure) puts H-alpha ~0.09 Å too red: this is why
    # the components are computed.  Reference: Bethe & Salpeter (1957), Dirac levels.
    r = hydrogen.rydberg_per_m(1)
    bohr_A = 1e10 / (r * (1 / 4 - 1 / 9))
    assert 0.05 < bohr_A - hydrogen.line(2, 3).vacuum_A < 0.15


def test_he_ii_4686_matches_nist_asd():
    # Reference: He II 3-4, 4685.70 Å air (NIST ASD, from memory); Pickering 4-7 at
    # 5411.52 Å air (from memory).
    assert abs(_air(3, 4, 2) - 4685.70) < 0.03
    assert abs(_air(4, 7, 2) - 5411.52) < 0.03


@pytest.mark.parametrize(
    ("n_low", "n_up", "z", "g_low", "f_ref"),
    [
        (1, 2, 1, 2, 0.4164),  # Lyman-alpha
        (2, 3, 1, 8, 0.6407),  # H-alpha
        (2, 4, 1, 8, 0.1193),  # H-beta
        (2, 5, 1, 8, 0.04467),  # H-gamma
        (3, 4, 1, 18, 0.8421),  # Paschen-alpha
    ],
)
def test_oscillator_strengths_match_wiese_and_fuhr(n_low, n_up, z, g_low, f_ref):
    # Reference: Wiese & Fuhr (2009), J. Phys. Chem. Ref. Data 38, 565, hydrogen f-values
    # (from memory).
    loggf = hydrogen.line(n_low, n_up, z).loggf
    assert abs(loggf - math.log10(g_low * f_ref)) < 0.003


@pytest.mark.parametrize(
    ("n1", "l1", "n2", "l2", "ref"),
    [
        (1, 0, 2, 1, 2**7 * math.sqrt(6) / 3**5),  # exact, Bethe & Salpeter (1957) eq. 63.2
        (2, 0, 3, 1, 3.065),  # Bethe & Salpeter (1957) table 13 (from memory)
        (2, 1, 3, 2, 4.748),  # idem
        (2, 1, 3, 0, 0.938),  # idem
    ],
)
def test_radial_integrals(n1, l1, n2, l2, ref):
    assert abs(abs(hydrogen.radial_integral(n1, l1, n2, l2)) - ref) < 1e-3


def test_lower_level_energy_of_balmer_lines():
    # Reference: H I n=2 at 10.1988 eV above the ground state (NIST ASD, from memory).
    assert abs(hydrogen.line(2, 3).lower_eV - 10.1988) < 1e-3


def test_six_j_symbols():
    # Reference: Edmonds (1957), {1 1 1; 1 1 1} = 1/6, and the orthogonality sum
    # sum_j' (2j'+1) {l j 1/2; j' l' 1}^2 = 1/(2l+1) (eq. 6.2.9).
    assert hydrogen.wigner_6j(1, 1, 1, 1, 1, 1) == pytest.approx(1 / 6, abs=1e-14)
    for l1, l2 in [(0, 1), (1, 2), (2, 1), (3, 2)]:
        for j1 in (l1 - 0.5, l1 + 0.5):
            if j1 < 0:
                continue
            total = sum(
                (2 * j2 + 1) * hydrogen.wigner_6j(l1, j1, 0.5, j2, l2, 1) ** 2
                for j2 in (l2 - 0.5, l2 + 0.5)
                if j2 >= 0
            )
            assert total == pytest.approx(1 / (2 * l1 + 1), abs=1e-12)
