"""Plain text spectra as observers have them: no header, odd separators, comments, D exponents.

Expected values are the numbers written in each test; the unit, where the file
names none, follows the ranges 2,000-30,000 Å, 200-3,000 nm, 0.2-30 µm (common
practice); 1 nm = 10 Å and 1 µm = 10,000 Å (SI).  Fortran ``D`` exponents as in
the Fortran standard's list-directed/``D`` edit descriptor output (common practice).
"""

from __future__ import annotations

import numpy as np
import pytest

import atlas.io
from atlas.errors import InputError

WAVE_A = np.array([6560.0, 6560.5, 6561.0, 6561.5, 6562.0, 6562.5])
FLUX = np.array([1.0, 0.97, 0.62, 0.55, 0.9, 1.01])
ERR = np.array([0.01, 0.01, 0.02, 0.02, 0.01, 0.01])


@pytest.mark.parametrize("sep", [" ", "\t", ",", "   "])
def test_two_and_three_columns_without_header(write_text, sep):
    two = write_text(
        [sep.join((str(float(w)), str(float(f)))) for w, f in zip(WAVE_A, FLUX, strict=True)],
        name="two.txt",
    )
    assert atlas.io.detect(two) == "text"
    ds = atlas.io.read(two)
    np.testing.assert_allclose(ds["wavelength"].values, WAVE_A)
    np.testing.assert_allclose(ds["flux"].values, FLUX)
    assert "inferred as Å" in ds.attrs["wave_unit_inferred"]
    assert "uncertainty" not in ds
    rows = [sep.join(str(float(x)) for x in r) for r in zip(WAVE_A / 10, FLUX, ERR, strict=True)]
    ds = atlas.io.read(write_text(rows, name="three.dat"))
    np.testing.assert_allclose(ds["wavelength"].values, WAVE_A, rtol=1e-12)  # nm -> Å
    np.testing.assert_allclose(ds["uncertainty"].values, ERR)


def test_comments_anywhere_fortran_exponents_and_trailing_blank_lines(write_text):
    lines = ["! written by a reduction script", "; second comment"]
    for k, (w, f) in enumerate(zip(WAVE_A / 1e4, FLUX, strict=True)):
        lines.append(f"  {w:.5f}D+00   {f * 10:.4f}d-01")
        if k == 2:
            lines[-1] += "   # a comment after the numbers"
            lines += ["# a comment in the middle", "", "! and another"]
    path = write_text([*lines, "", "", "   "], name="spec.asc")
    ds = atlas.io.read(path)
    np.testing.assert_allclose(ds["wavelength"].values, WAVE_A, rtol=1e-9)  # µm -> Å
    np.testing.assert_allclose(ds["flux"].values, FLUX, rtol=1e-12)


@pytest.mark.parametrize(
    "header",
    ["lambda flux sigma", "WAVE\tFLUX\tERR", "wl,Flux,Err", "Lambda  Flux  Sigma", "wave;flux;err"],
)
def test_header_words_case_insensitive(write_text, header):
    sep = "\t" if "\t" in header else "," if "," in header else ";" if ";" in header else " "
    rows = [sep.join(str(float(x)) for x in r) for r in zip(WAVE_A, FLUX, ERR, strict=True)]
    ds = atlas.io.read(write_text([header, *rows], name="h.txt"))
    np.testing.assert_allclose(ds["wavelength"].values, WAVE_A)
    np.testing.assert_allclose(ds["uncertainty"].values, ERR)


def test_ambiguous_range_needs_wave_unit(write_text):
    rows = [f"{w} 1.0" for w in (2100.0, 2100.5, 2101.0)]
    path = write_text(rows, name="ir.txt")
    with pytest.raises(InputError, match="fits both Å and nm"):
        atlas.io.read(path)
    ds = atlas.io.read(path, wave_unit="nm")
    np.testing.assert_allclose(ds["wavelength"].values, [21000.0, 21005.0, 21010.0])


def test_values_in_no_usual_range_are_refused(write_text):
    with pytest.raises(InputError, match="fits no usual unit"):
        atlas.io.read(write_text(["40 1.0", "41 1.1", "42 0.9"], name="px.txt"))
