"""`striae lines` (in process through atlas.cli.main, plus one real subprocess run)."""

from __future__ import annotations

import io

import pandas as pd

from atlas import cli
from atlas.lines import COLUMNS
from tests.conftest import assert_one_line_error


def _run(capsys, *args):
    code = cli.main(["lines", *map(str, args)])
    out = capsys.readouterr()
    return code, out.out, out.err


def _one_line_error(code, err, *fragments):
    lines = [ln for ln in err.splitlines() if ln.strip()]
    assert code == 2 and len(lines) == 1 and lines[0].startswith("striae: "), err
    for frag in fragments:
        assert frag in lines[0]


def test_csv_output_parses_with_every_column(capsys):
    code, out, err = _run(capsys, "--csv")
    assert code == 0, err
    df = pd.read_csv(io.StringIO(out))
    assert tuple(df.columns) == COLUMNS
    assert len(df) > 300


def test_range_6500_6600_includes_h_alpha(capsys):
    # Reference: H-alpha at 6562.79 Å in air (NIST ASD).
    code, out, err = _run(capsys, "--range", "6500:6600", "--csv")
    assert code == 0, err
    df = pd.read_csv(io.StringIO(out))
    h = df[df["species"] == "H I"]
    assert len(h) == 1 and abs(h["air_A"].iloc[0] - 6562.79) < 0.03
    assert df["air_A"].between(6500, 6600).all()


def test_open_ended_range_and_vacuum_selection(capsys):
    code, out, _ = _run(capsys, "--range=:3700", "--vacuum", "--csv")
    assert code == 0
    df = pd.read_csv(io.StringIO(out))
    assert len(df) > 0 and (df["vacuum_A"] <= 3700).all()


def test_table_output_vacuum_and_species(capsys):
    code, out, _ = _run(capsys, "--species", "Ca II", "--vacuum")
    assert code == 0
    assert "3934.77" in out and "Ca II" in out and "Fe I" not in out
    assert "5 lines" in out


def test_bad_range_is_a_one_line_error(capsys):
    for bad in ("65x0:6600", "6600:6500", "6500", "--range=-1:5", "nan:5"):
        arg = [bad] if bad.startswith("--") else ["--range", bad]
        code, _, err = _run(capsys, *arg)
        _one_line_error(code, err, "--range")


def test_missing_or_bad_list_file_is_a_one_line_error(capsys, tmp_path):
    missing = tmp_path / "none.csv"
    code, _, err = _run(capsys, "--list", missing)
    _one_line_error(code, err, str(missing), "no such file")
    bad = tmp_path / "bad.csv"
    bad.write_text("species,air_A\nFe I,5000\n")
    code, _, err = _run(capsys, "--list", bad)
    _one_line_error(code, err, str(bad), "missing column vacuum_A")


def test_bad_range_in_a_real_process_is_one_line_and_exit_2(run_striae):
    assert_one_line_error(run_striae("lines", "--range", "b:a"), "--range")


def test_unknown_species_is_a_one_line_error(capsys):
    code, _, err = _run(capsys, "--species", "FeI")
    _one_line_error(code, err, "--species", "FeI")
