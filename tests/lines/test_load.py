"""The shipped line list and user line lists."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from atlas.errors import InputError
from atlas.lines import COLUMNS, DATA_PATH, load_lines, make_lines, select
from atlas.physics.airvac import air_to_vacuum_A


@pytest.fixture(scope="module")
def lines():
    return load_lines()


def test_columns_and_types(lines):
    assert tuple(lines.columns) == COLUMNS
    assert lines["telluric"].dtype == bool
    assert set(lines["kind"]) == {"atomic", "band_head", "telluric"}
    assert set(lines["strength"]) <= {1, 2, 3, 4}
    assert np.all(np.diff(lines["vacuum_A"]) >= 0)


def test_shipped_csv_is_what_the_generator_writes():
    # The CSV is generated (python -m atlas.lines.make_lines); it must not drift.
    assert DATA_PATH.read_text(encoding="utf-8") == make_lines.csv_text()


def test_coverage_and_counts(lines):
    atomic = lines[lines["kind"] == "atomic"]
    assert atomic["air_A"].min() < 3600 and atomic["air_A"].max() > 9900
    metals = atomic[~atomic["species"].isin(["H I", "He I", "He II"])]
    with_data = metals.dropna(subset=["lower_eV", "loggf"])
    assert len(with_data) > 150
    assert (lines["species"] == "Fe I").sum() > 60 and (lines["species"] == "Fe II").sum() > 15


@pytest.mark.parametrize(
    ("species", "air"),
    [
        ("Ca II", 3933.66),  # K
        ("Ca II", 3968.47),  # H
        ("Ca II", 8542.09),
        ("Na I", 5889.95),
        ("Na I", 5895.92),
        ("Mg I", 5183.60),
        ("Ca I", 4226.73),
        ("He I", 5875.62),
        ("He II", 4685.70),
        ("Sr II", 4077.71),
        ("Ba II", 4554.03),
        ("Si II", 6347.11),
        ("O I", 7771.94),
        ("Mg II", 4481.13),
    ],
)
def test_well_known_lines_are_present(lines, species, air):
    # Reference: NIST ASD air wavelengths (from memory).
    rows = lines[lines["species"] == species]
    assert np.min(np.abs(rows["air_A"] - air)) < 0.02


def test_air_and_vacuum_columns_agree_with_the_iau_conversion(lines):
    # Reference: Morton (2000) air->vacuum; rows are rounded to 0.001 Å (0.1 Å for bands).
    atomic = lines[lines["kind"] == "atomic"]
    diff = np.abs(air_to_vacuum_A(atomic["air_A"].to_numpy()) - atomic["vacuum_A"].to_numpy())
    assert diff.max() < 1.5e-3


def test_band_heads_and_telluric_bands(lines):
    bands = lines[lines["kind"] == "band_head"]
    assert {"TiO", "CH", "CN", "CaH", "MgH"} <= set(bands["species"])
    tel = lines[lines["kind"] == "telluric"]
    assert tel["telluric"].all() and not lines.loc[lines["kind"] != "telluric", "telluric"].any()
    a_band = tel[(tel["species"] == "O2") & tel["air_A"].between(7590, 7625)]
    b_band = tel[(tel["species"] == "O2") & tel["air_A"].between(6860, 6890)]
    # common practice: O2 A band about 7594-7621 Å, B band about 6867-6884 Å (air)
    assert len(a_band) == 2 and len(b_band) == 2


def test_source_column_is_never_empty_and_says_how_hydrogen_was_made(lines):
    assert (lines["source"].str.len() > 0).all()
    h = lines[lines["species"] == "H I"]
    assert h["source"].str.startswith("computed").all()


def test_select_by_species_and_range(lines):
    fe = select(lines, species="Fe", lo_A=5000, hi_A=5500, medium="air")
    assert set(fe["species"]) == {"Fe I", "Fe II"}
    assert fe["air_A"].between(5000, 5500).all()
    only = select(lines, species="fe ii")
    assert set(only["species"]) == {"Fe II"}


def _write(tmp_path, df, name="mine.csv"):
    p = tmp_path / name
    df.to_csv(p, index=False)
    return p


def _good():
    return pd.DataFrame(
        {
            "species": ["Fe I", "X"],
            "air_A": ["5000.000", ""],
            "vacuum_A": ["", "6000.0"],
            "lower_eV": ["1.0", ""],
            "loggf": ["-1.0", ""],
            "strength": ["2", "4"],
            "kind": ["atomic", "band_head"],
            "telluric": ["false", "FALSE"],
            "source": ["mine", ""],
        }
    )


def test_user_csv_loads_and_fills_the_missing_medium(tmp_path):
    df = load_lines(_write(tmp_path, _good()))
    assert df.loc[0, "vacuum_A"] == pytest.approx(air_to_vacuum_A(5000.0))
    assert np.isnan(df.loc[1, "loggf"]) and df.loc[1, "air_A"] < 6000.0


@pytest.mark.parametrize(
    ("change", "fragment"),
    [
        (lambda d: d.drop(columns=["loggf"]), "missing column loggf"),
        (lambda d: d.assign(air_A=["abc", ""]), "column air_A, row 2"),
        (lambda d: d.assign(strength=["5", "1"]), "column strength"),
        (lambda d: d.assign(kind=["atom", "atomic"]), "column kind"),
        (lambda d: d.assign(telluric=["yes", "false"]), "column telluric"),
        (lambda d: d.assign(vacuum_A=["", ""], air_A=["5000", ""]), "both empty"),
        (lambda d: d.assign(air_A=["-5", ""]), "must be positive"),
        (lambda d: d.assign(species=["", "X"]), "column species"),
    ],
)
def test_bad_user_csv_names_the_file_and_column(tmp_path, change, fragment):
    p = _write(tmp_path, change(_good()))
    with pytest.raises(InputError) as exc:
        load_lines(p)
    assert exc.value.where == str(p)
    assert fragment in exc.value.reason and "\n" not in exc.value.message


def test_missing_and_unreadable_files(tmp_path):
    with pytest.raises(InputError, match="no such file"):
        load_lines(tmp_path / "nope.csv")
    empty = tmp_path / "empty.csv"
    empty.write_text("")
    with pytest.raises(InputError) as exc:
        load_lines(empty)
    assert exc.value.where == str(empty)


def test_spreadsheet_style_csv_with_bom_and_spaces_loads(tmp_path):
    p = tmp_path / "excel.csv"
    text = _good().to_csv(index=False).replace("species,air_A", "species, air_A")
    p.write_bytes(b"\xef\xbb\xbf" + text.encode("utf-8"))
    df = load_lines(p)
    assert list(df["species"]) == ["Fe I", "X"]
