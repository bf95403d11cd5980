"""Predicted line depths per star (atlas.lines.predict) on the dense Gaia-ESO list."""

from __future__ import annotations

import numpy as np
import pytest

from atlas.errors import InputError
from atlas.lines.dense import load_merged_lines
from atlas.lines.predict import DEPTH_THRESHOLD, logg_of_class, predict_depths


@pytest.fixture(scope="module")
def merged():
    return load_merged_lines()


@pytest.fixture(scope="module")
def g2_dwarf(merged):
    # Sun-like G2 V: Teff 5772 K, log g 4.44 (IAU 2015 Resolution B3 nominal values)
    return predict_depths(merged, 5772.0, 4.44)


def depth_of(pred, species, air_A, tol=0.02):
    row = pred[(pred["species"] == species) & (np.abs(pred["air_A"] - air_A) < tol)]
    assert len(row) == 1, f"{species} {air_A} not predicted (or not unique)"
    return float(row["predicted_depth"].iloc[0])


def test_prediction_keeps_only_lines_deeper_than_threshold_sorted_with_depth_column(merged, g2_dwarf):
    assert DEPTH_THRESHOLD == 0.01
    d = g2_dwarf["predicted_depth"].to_numpy()
    assert g2_dwarf["predicted_depth"].dtype == np.float64
    assert (d > DEPTH_THRESHOLD).all() and (d < 1.0).all()
    assert np.all(np.diff(g2_dwarf["vacuum_A"].to_numpy()) >= 0)
    assert list(g2_dwarf.index) == list(range(len(g2_dwarf)))
    assert set(merged.columns) < set(g2_dwarf.columns)
    assert 1000 < len(g2_dwarf) < len(merged)


def test_a_higher_threshold_keeps_a_subset(merged, g2_dwarf):
    deep = predict_depths(merged, 5772.0, 4.44, threshold=0.2)
    assert 0 < len(deep) < len(g2_dwarf)
    assert (deep["predicted_depth"] > 0.2).all()
    assert set(deep["vacuum_A"]) <= set(g2_dwarf["vacuum_A"])


def test_broader_lines_are_shallower(merged):
    sharp = predict_depths(merged, 5772.0, 4.44, line_fwhm_kms=3.0, threshold=0.0)
    broad = predict_depths(merged, 5772.0, 4.44, line_fwhm_kms=30.0, threshold=0.0)
    # Conservation of equivalent width under convolution (Gray 2005, ch. 13): same
    # lines, wider kernel, shallower centres.
    assert len(sharp) == len(broad)
    assert (broad["predicted_depth"].to_numpy() <= sharp["predicted_depth"].to_numpy() + 1e-12).all()
    assert broad["predicted_depth"].median() < sharp["predicted_depth"].median()


def test_species_without_atomic_data_are_skipped_and_named_in_notes(merged):
    # Tc has no solar abundance (no stable isotope) and Fe V is beyond the stages followed
    rows = merged[merged["species"] == "Fe I"].head(40).copy()
    rows.iloc[:5, rows.columns.get_loc("species")] = "Tc I"
    rows.iloc[5:8, rows.columns.get_loc("species")] = "Fe V"
    pred = predict_depths(rows, 5772.0, 4.44, threshold=0.0)
    assert pred.attrs["notes"] == ["no atomic data for Fe V: its 3 lines skipped",
                                   "no atomic data for Tc I: its 5 lines skipped"]
    assert set(pred["species"]) == {"Fe I"}
    assert len(pred) == 32


@pytest.mark.parametrize(
    "kwargs, name",
    [({"teff_k": float("nan")}, "teff_k"), ({"teff_k": 500.0}, "teff_k"), ({"logg": 9.0}, "logg"),
     ({"line_fwhm_kms": -1.0}, "line_fwhm_kms"), ({"threshold": 1.0}, "threshold"), ({"teff_k": "hot"}, "teff_k")],
)
def test_bad_parameters_raise_one_input_error_naming_them(merged, kwargs, name):
    args = {"teff_k": 5772.0} | kwargs
    with pytest.raises(InputError, match=name):
        predict_depths(merged.head(50), **args)


@pytest.mark.parametrize(
    "text, logg",
    [("G2 V", 4.5), ("K0 III", 2.5), ("A0 V", 4.5), ("K0III", 2.5), ("O9.5 Ia+", 0.5), ("K3 IV-V", 3.8), ("B5V", 4.5), ("M2 Iab", 1.0), ("A0 Ia", 0.8), ("F5 II", 1.8)],
)
def test_logg_of_class_reads_the_luminosity_class(text, logg):
    # Typical log g per luminosity class (Gray 2005, appendix B; from memory)
    assert logg_of_class(text) == logg


@pytest.mark.parametrize("text", ["G2", "K", "", None, "hot star", "A0", "K0", "B0.5"])
def test_logg_of_class_is_none_without_a_luminosity_class(text):
    assert logg_of_class(text) is None


def test_g2_dwarf_fe_5269_is_deeper_than_fe_5250(g2_dwarf):
    # Solar spectrum: Fe I 5269.54 (a multiplet-15 line, log gf -1.32, 0.86 eV) is one of
    # the strongest Fe I lines, far deeper than Fe I 5250.21 (log gf -4.9, 0.12 eV)
    # (Moore, Minnaert & Houtgast 1966, solar line table; from memory, common practice).
    assert depth_of(g2_dwarf, "Fe I", 5269.537) > depth_of(g2_dwarf, "Fe I", 5250.209) + 0.1


@pytest.mark.parametrize("species, air_A", [("Mg I", 5167.32), ("Mg I", 5172.68), ("Mg I", 5183.60),
                                             ("Na I", 5889.95), ("Na I", 5895.92)])
def test_g2_dwarf_mg_b_and_na_d_are_among_the_deepest_lines(g2_dwarf, species, air_A):
    # Mg b and Na D are among the strongest lines of the solar spectrum (Moore et al.
    # 1966; common practice): here each is deeper than 98 % of the lines predicted.
    d = depth_of(g2_dwarf, species, air_A)
    assert (g2_dwarf["predicted_depth"].to_numpy() < d).mean() > 0.98


def test_a0_dwarf_mg_ii_4481_is_deeper_than_every_fe_i_line_of_the_gaia_eso_range(merged):
    # In an A0 V star Mg II 4481 is the strongest metal line of the blue-violet after
    # Ca II K, and Fe I lines are weak (Gray & Corbally 2009, Stellar Spectral
    # Classification, ch. 5; from memory).  Teff of A0 V: 9700 K (Pecaut & Mamajek 2013).
    # Checked on the Gaia-ESO range (4200-9200 Å air): the one-layer model's deepest
    # possible depth grows to the blue, so curated Fe I resonance lines near 3720-3760 Å
    # come out as deep as Mg II 4481 there, a known limit of this model.
    a0 = predict_depths(merged, 9700.0, 4.2)
    mg = a0[(a0["species"] == "Mg II") & (np.abs(a0["air_A"] - 4481.13) < 0.05)]["predicted_depth"].max()
    fe = a0[(a0["species"] == "Fe I") & (a0["air_A"] > 4200.0)]["predicted_depth"]
    assert len(fe) > 100
    assert mg > fe.max()


def test_b5_dwarf_shows_few_lines_mostly_h_he_and_light_ions(merged):
    # B stars show H I, He I and a few lines of light ions (Si II, Mg II, C II, O II), few
    # Fe lines (Gray & Corbally 2009, ch. 4; common practice).  Teff of B5 V: 15700 K
    # (Pecaut & Mamajek 2013).
    b5 = predict_depths(merged, 15700.0, 4.2, threshold=0.05)
    g2 = predict_depths(merged, 5772.0, 4.44, threshold=0.05)
    assert len(b5) < len(g2) / 10
    top = b5.nlargest(20, "predicted_depth")["species"]
    assert top.str.split().str[0].isin(["H", "He", "Mg", "Si", "C", "O", "Ca"]).all()
