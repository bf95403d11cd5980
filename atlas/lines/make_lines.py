"""Write ``data/lines.csv`` from the computed hydrogen-like lines and the hand-typed catalogue.

Run ``python -m atlas.lines.make_lines`` (optionally with an output path) after
changing ``hydrogen.py`` or ``catalogue.py``; the CSV it writes is the shipped
artefact, and a test checks that the shipped file matches what this produces.
"""

from __future__ import annotations

import sys
from pathlib import Path

import pandas as pd

from atlas.lines import COLUMNS, DATA_PATH, catalogue, hydrogen
from atlas.physics.airvac import air_to_vacuum_A, vacuum_to_air_A

#: Hydrogen-like series written: (Z, lower n, highest upper n).
SERIES = (
    (1, 2, 40),  # Balmer, down to about 3656 Å (vacuum)
    (1, 3, 40),  # Paschen, down to about 8252 Å (vacuum)
    (2, 3, 5),  # He II 4686 and 3203
    (2, 4, 20),  # He II Pickering series 4-n
)

HYDROGEN_SOURCE = (
    "computed: Dirac levels with reduced mass (CODATA 2018), strength-weighted mean of "
    "fine-structure components, hydrogenic gf; air by Morton (2000)"
)


def _hydrogen_strength(z: int, n_low: int, n_up: int) -> int:
    if z == 2:
        return 2 if (n_low, n_up) == (3, 4) else 3
    if n_low == 2:
        return 1 if n_up <= 6 else 2 if n_up <= 12 else 3 if n_up <= 22 else 4
    return 2 if n_up <= 12 else 3 if n_up <= 20 else 4


def _fmt(x, digits):
    return "" if x is None else f"{x:.{digits}f}"


def rows() -> list[dict]:
    """Every row of the line list, as dicts of CSV text."""
    out = []
    for z, n_low, n_max in SERIES:
        for n_up in range(n_low + 1, n_max + 1):
            ln = hydrogen.line(n_low, n_up, z)
            out.append(
                {
                    "species": ln.species,
                    "air_A": _fmt(vacuum_to_air_A(ln.vacuum_A), 3),
                    "vacuum_A": _fmt(ln.vacuum_A, 3),
                    "lower_eV": _fmt(ln.lower_eV, 3),
                    "loggf": _fmt(ln.loggf, 3),
                    "strength": str(_hydrogen_strength(z, n_low, n_up)),
                    "kind": "atomic",
                    "telluric": "false",
                    "source": HYDROGEN_SOURCE,
                }
            )
    for species, air, lower, loggf, strength in catalogue.ATOMIC:
        out.append(
            {
                "species": species,
                "air_A": _fmt(air, 3),
                "vacuum_A": _fmt(air_to_vacuum_A(air), 3),
                "lower_eV": _fmt(lower, 3),
                "loggf": _fmt(loggf, 3),
                "strength": str(strength),
                "kind": "atomic",
                "telluric": "false",
                "source": catalogue.ATOMIC_SOURCE
                if loggf is not None
                else catalogue.ATOMIC_SOURCE_NO_GF,
            }
        )
    for species, air, strength in catalogue.BAND_HEADS:
        out.append(
            {
                "species": species,
                "air_A": _fmt(air, 1),
                "vacuum_A": _fmt(air_to_vacuum_A(air), 1),
                "lower_eV": "",
                "loggf": "",
                "strength": str(strength),
                "kind": "band_head",
                "telluric": "false",
                "source": catalogue.BAND_SOURCE,
            }
        )
    for species, start, end, strength in catalogue.TELLURIC_BANDS:
        for edge, air in (("start", start), ("end", end)):
            out.append(
                {
                    "species": species,
                    "air_A": _fmt(air, 1),
                    "vacuum_A": _fmt(air_to_vacuum_A(air), 1),
                    "lower_eV": "",
                    "loggf": "",
                    "strength": str(strength),
                    "kind": "telluric",
                    "telluric": "true",
                    "source": f"{catalogue.TELLURIC_SOURCE}: band {edge}",
                }
            )
    out.sort(key=lambda r: (float(r["vacuum_A"]), r["species"]))
    return out


def csv_text() -> str:
    """The line list as CSV text (what ``data/lines.csv`` holds)."""
    return pd.DataFrame(rows(), columns=list(COLUMNS)).to_csv(index=False, lineterminator="\n")


def main(argv=None) -> int:
    argv = sys.argv[1:] if argv is None else argv
    path = Path(argv[0]) if argv else DATA_PATH
    path.parent.mkdir(parents=True, exist_ok=True)
    tmp = path.with_suffix(".tmp")
    tmp.write_text(csv_text(), encoding="utf-8")
    tmp.replace(path)
    print(f"wrote {path}")
    return 0


if __name__ == "__main__":
    sys.exit(main())
