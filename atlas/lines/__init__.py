"""The line list: known stellar, molecular and telluric features with their wavelengths.

``load_lines(path=None)`` returns a pandas DataFrame with the columns of
``data/lines.csv`` (see ``COLUMNS``), sorted by vacuum wavelength.  A user CSV with
the same columns may replace the shipped one; it is validated and any problem is
raised as ``InputError`` naming the file, the column and the row.
"""

from __future__ import annotations

import functools
import os
from pathlib import Path

import numpy as np
import pandas as pd

from atlas.errors import InputError

DATA_PATH = Path(__file__).with_name("data") / "lines.csv"

#: Columns of the line list, in file order.
COLUMNS = (
    "species",
    "air_A",
    "vacuum_A",
    "lower_eV",
    "loggf",
    "strength",
    "kind",
    "telluric",
    "source",
)
KINDS = ("atomic", "band_head", "telluric")
_TRUE = {"true": True, "false": False, "1": True, "0": False}


def _number(where, col, raw: pd.Series, *, allow_empty: bool) -> np.ndarray:
    text = raw.fillna("").astype(str).str.strip()
    out = pd.to_numeric(text.where(text != ""), errors="coerce").to_numpy(dtype=np.float64)
    bad = (text != "") & ~np.isfinite(out)
    if not allow_empty:
        bad |= text == ""
    if bad.any():
        i = int(np.flatnonzero(bad.to_numpy())[0])
        val = text.iloc[i]
        why = "is empty" if val == "" else f"{val!r} is not a number"
        raise InputError(where, f"column {col}, row {i + 2}: {why}")
    return out


def telluric_flags(column: pd.Series, where="lines") -> np.ndarray:
    """The ``telluric`` column as booleans (``true``/``false``, ``1``/``0``, any case);
    the one place it is parsed.  InputError naming the row for anything else."""
    if column.dtype == bool:
        return column.to_numpy()
    tel = column.fillna("").astype(str).str.strip().str.lower()
    bad = ~tel.isin(list(_TRUE))
    if bad.any():
        i = int(np.flatnonzero(bad.to_numpy())[0])
        raise InputError(
            where, f"column telluric, row {i + 2}: {tel.iloc[i]!r} is not true or false"
        )
    return tel.map(_TRUE).astype(bool).to_numpy()


def validate(df: pd.DataFrame, where="lines") -> pd.DataFrame:
    """Check and type a raw line-list table (all cells text); returns the typed, sorted table.

    An empty ``air_A`` or ``vacuum_A`` is filled from the other with the IAU
    (Morton 2000) conversion; both empty is an error.
    """
    from atlas.physics.airvac import air_to_vacuum_A, vacuum_to_air_A

    missing = [c for c in COLUMNS if c not in df.columns]
    if missing:
        raise InputError(where, f"missing column {', '.join(missing)} (need {', '.join(COLUMNS)})")
    out = pd.DataFrame(index=df.index)
    species = df["species"].fillna("").astype(str).str.strip()
    if (species == "").any():
        i = int(np.flatnonzero((species == "").to_numpy())[0])
        raise InputError(where, f"column species, row {i + 2}: is empty")
    out["species"] = species
    air = _number(where, "air_A", df["air_A"], allow_empty=True)
    vac = _number(where, "vacuum_A", df["vacuum_A"], allow_empty=True)
    both = np.isnan(air) & np.isnan(vac)
    if both.any():
        i = int(np.flatnonzero(both)[0])
        raise InputError(where, f"columns air_A and vacuum_A, row {i + 2}: both empty")
    for col, arr in (("air_A", air), ("vacuum_A", vac)):
        nonpos = np.isfinite(arr) & (arr <= 0)
        if nonpos.any():
            i = int(np.flatnonzero(nonpos)[0])
            raise InputError(where, f"column {col}, row {i + 2}: wavelength must be positive")
    air = np.where(np.isnan(air), vacuum_to_air_A(np.nan_to_num(vac, nan=5000.0)), air)
    vac = np.where(np.isnan(vac), air_to_vacuum_A(np.nan_to_num(air, nan=5000.0)), vac)
    out["air_A"] = air
    out["vacuum_A"] = vac
    out["lower_eV"] = _number(where, "lower_eV", df["lower_eV"], allow_empty=True)
    out["loggf"] = _number(where, "loggf", df["loggf"], allow_empty=True)
    strength = _number(where, "strength", df["strength"], allow_empty=False)
    bad = ~np.isin(strength, (1, 2, 3, 4))
    if bad.any():
        i = int(np.flatnonzero(bad)[0])
        raise InputError(where, f"column strength, row {i + 2}: must be 1, 2, 3 or 4")
    out["strength"] = strength.astype(np.int64)
    kind = df["kind"].fillna("").astype(str).str.strip()
    bad = ~kind.isin(KINDS)
    if bad.any():
        i = int(np.flatnonzero(bad.to_numpy())[0])
        raise InputError(
            where, f"column kind, row {i + 2}: {kind.iloc[i]!r} is not one of {', '.join(KINDS)}"
        )
    out["kind"] = kind
    out["telluric"] = telluric_flags(df["telluric"], where)
    out["source"] = df["source"].fillna("").astype(str)
    out = out.sort_values("vacuum_A", kind="stable").reset_index(drop=True)
    return out


@functools.lru_cache(maxsize=8)
def _load_cached(path: str, mtime: float) -> pd.DataFrame:
    try:
        raw = pd.read_csv(
            path, dtype=str, keep_default_na=False, skipinitialspace=True, encoding="utf-8-sig"
        )
    except FileNotFoundError:
        raise InputError(path, "no such file") from None
    except (pd.errors.ParserError, pd.errors.EmptyDataError, UnicodeDecodeError) as exc:
        reason = str(exc).splitlines()[0] if str(exc) else type(exc).__name__
        raise InputError(path, f"not a readable CSV line list ({reason})") from None
    raw.columns = [str(c).strip() for c in raw.columns]
    return validate(raw, path)


def load_lines(path: str | os.PathLike | None = None) -> pd.DataFrame:
    """The line list as a DataFrame (columns ``COLUMNS``, sorted by vacuum Å).

    ``path=None`` loads the shipped ``data/lines.csv``.  Wavelengths are in Å
    (``air_A`` standard air, ``vacuum_A`` vacuum); ``lower_eV`` (eV) and ``loggf``
    are NaN when unknown; ``telluric`` is bool.  Raises ``InputError`` for a missing
    or malformed file.
    """
    p = os.fspath(path) if path is not None else str(DATA_PATH)
    if not os.path.isfile(p):
        raise InputError(p, "no such file" if not os.path.exists(p) else "not a file")
    return _load_cached(p, os.path.getmtime(p)).copy()


def select(
    lines: pd.DataFrame,
    *,
    species: str | None = None,
    lo_A: float | None = None,
    hi_A: float | None = None,
    medium: str = "vacuum",
) -> pd.DataFrame:
    """Rows whose species matches (case-insensitive, comma-separated names or element
    prefixes such as ``Fe``) and whose wavelength in ``medium`` lies within lo_A..hi_A (Å)."""
    col = "air_A" if medium == "air" else "vacuum_A"
    keep = np.ones(len(lines), dtype=bool)
    if species:
        wanted = [s.strip().lower() for s in species.split(",") if s.strip()]
        names = lines["species"].str.lower()
        elements = names.str.split().str[0]
        keep &= (names.isin(wanted) | elements.isin(wanted)).to_numpy()
    if lo_A is not None:
        keep &= lines[col].to_numpy() >= lo_A
    if hi_A is not None:
        keep &= lines[col].to_numpy() <= hi_A
    return lines.loc[keep].reset_index(drop=True)
