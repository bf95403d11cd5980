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


def test_species_without_atomic_data_are_named_in_notes(merged, g2_dwarf):
    notes = g2_dwarf.attrs["notes"]
    assert any(n.startswith("no atomic data for ") for n in notes)
    named = {n.split(" for ")[1].split(":")[0] for n in notes}
    assert named.isdisjoint(set(g2_dwarf["species"]))


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
    [("G2 V", 4.5), ("K0 III", 2.5), ("K3 IV-V", 3.8), ("B5V", 4.5), ("M2 Iab", 1.0), ("A0 Ia", 0.8), ("F5 II", 1.8)],
)
def test_logg_of_class_reads_the_luminosity_class(text, logg):
    # Typical log g per luminosity class (Gray 2005, appendix B; from memory)
    assert logg_of_class(text) == logg


@pytest.mark.parametrize("text", ["G2", "K", "", None, "hot star"])
def test_logg_of_class_is_none_without_a_luminosity_class(text):
    assert logg_of_class(text) is None
