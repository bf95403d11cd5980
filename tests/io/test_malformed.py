"""The malformed corpus: ``striae inspect`` refuses each file with one line naming it and the problem."""

from __future__ import annotations

import importlib.util
from pathlib import Path
from types import SimpleNamespace

import pytest

from atlas import cli
from tests.conftest import assert_one_line_error

DATA = Path(__file__).resolve().parents[1] / "data"
MALFORMED = DATA / "malformed"

EXPECTED = {
    "not_spectrum.png": "not a spectrum file",
    "random_notes.txt": "not a spectrum file",
    "empty.fits": "empty file",
    "truncated.fits": "truncated FITS file",
    "corrupt_header.fits": "corrupt FITS file",
    "no_spectral_axis.fits": "no spectral axis",
    "no_wavelength_column.csv": "no spectral axis",
    "shuffled.csv": "not monotonic (shuffled)",
    "repeated.csv": "repeated wavelengths",
    "all_nan.csv": "flux is NaN (or infinite) everywhere",
    "length_mismatch.fits": "length mismatch",
    "length_mismatch.csv": "length mismatch",
    "unknown_unit.fits": "unknown unit 'bananas'",
    "unknown_unit.csv": "unknown unit 'bogus'",
    "nonfinite_wavelength.csv": "non-finite wavelengths",
    "bad_dc_flag.fits": "DC-FLAG is -1",
    "wat2_unknown_dispersion.fits": "dispersion type 7 is not 0, 1 or 2",
    "wat2_unsupported_function.fits": "dispersion function type 5 is not supported",
    "wat2_missing_coefficients.fits": "Chebyshev term needs 4 coefficients",
    "wat2_missing_order.fits": "spec2 missing in WAT2",
    "corrupt.fits.gz": "corrupt gzip file",
    "ambiguous_unit.txt": "fits both Å and nm; give --wave-unit",
    "four_columns_no_header.txt": "no header line and 4 columns",
    "all_flagged_bad.fits": "every sample is flagged bad",
}


def _generator():
    spec = importlib.util.spec_from_file_location("make_malformed", DATA / "make_malformed.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod


def test_the_generator_makes_exactly_the_committed_corpus():
    made = _generator().files()
    assert set(made) == set(EXPECTED)
    assert {p.name for p in MALFORMED.iterdir()} == set(EXPECTED)
    for name, data in made.items():
        assert (MALFORMED / name).read_bytes() == data, name


@pytest.mark.parametrize("name", sorted(EXPECTED))
def test_inspect_refuses_with_one_line(capsys, name):
    """The command's entry point in this process (one subprocess each would cost ~2 s)."""
    path = MALFORMED / name
    code = cli.main(["inspect", str(path)])
    out = capsys.readouterr()
    proc = SimpleNamespace(returncode=code, stdout=out.out, stderr=out.err)
    assert_one_line_error(proc, str(path), EXPECTED[name])
    assert proc.stdout == ""


@pytest.mark.parametrize("name", ["not_spectrum.png", "truncated.fits", "length_mismatch.csv"])
def test_the_real_command_refuses_with_one_line(run_striae, name):
    """The same through a real ``python -m atlas`` process, for a few of the files."""
    path = MALFORMED / name
    proc = run_striae("inspect", path)
    assert_one_line_error(proc, str(path), EXPECTED[name])
    assert proc.stdout == ""


def test_several_files_report_the_good_ones_and_exit_2(run_striae, tmp_path):
    good = tmp_path / "good.csv"
    good.write_text("wavelength_A,flux\n5000.0,1.0\n5000.1,1.1\n5000.2,0.9\n")
    bad = MALFORMED / "shuffled.csv"
    proc = run_striae("inspect", bad, good)
    assert proc.returncode == 2
    err = [ln for ln in proc.stderr.splitlines() if ln.strip()]
    assert (
        len(err) == 1 and err[0].startswith(f"striae: {bad}: ") and "Traceback" not in proc.stderr
    )
    assert "good.csv" in proc.stdout
