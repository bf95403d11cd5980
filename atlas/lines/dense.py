"""The dense atomic line list shipped in ``data/ges_lines.csv.gz``.

``load_dense_lines()`` reads the table derived from the Gaia-ESO line list
(Heiter et al. 2021, A&A 645, A106; 4200-9200 Å air, neutral and singly ionised
atoms) by ``python -m atlas.lines.derive_ges``.  Nothing is downloaded at run time.
``load_merged_lines()`` adds, from ``load_lines()``, the computed H I / He II
series, the curated atomic lines outside the GES range, the molecular heads and
the telluric bands.  ``load_lines()`` itself is unchanged.
"""

from __future__ import annotations

import functools
from pathlib import Path

import numpy as np
import pandas as pd

from atlas.errors import InputError
from atlas.lines import COLUMNS, load_lines, validate

DENSE_PATH = Path(__file__).with_name("data") / "ges_lines.csv.gz"
EXTRA_COLUMNS = ("gf_source", "g_upper", "lower_level", "upper_level")
#: Air wavelength range covered by the Gaia-ESO list (Heiter et al. 2021), Å.
GES_AIR_RANGE_A = (4200.0, 9200.0)
#: A curated line counts as present in the dense list when a line of its species lies
#: this close (vacuum Å); the curated wavelengths agree with GES to 0.02 Å.
SAME_LINE_A = 0.05


@functools.lru_cache(maxsize=2)
def _read(path: str, mtime: float) -> pd.DataFrame:
    try:
        raw = pd.read_csv(path, dtype=str, keep_default_na=False, compression="gzip")
    except FileNotFoundError:
        raise InputError(path, "no such file") from None
    except (OSError, pd.errors.ParserError, pd.errors.EmptyDataError, UnicodeDecodeError) as exc:
        raise InputError(path, f"not a readable gzip CSV line list ({exc})") from None
    missing = [c for c in EXTRA_COLUMNS if c not in raw.columns]
    if missing:
        raise InputError(path, f"missing column {', '.join(missing)}")
    typed = validate(raw[list(COLUMNS)], path)
    order = pd.to_numeric(raw["vacuum_A"]).to_numpy().argsort(kind="stable")
    extra = raw[list(EXTRA_COLUMNS)].iloc[order].reset_index(drop=True)
    for col in EXTRA_COLUMNS:
        typed[col] = extra[col]
    typed["g_upper"] = pd.to_numeric(typed["g_upper"], errors="coerce")
    return typed


def load_dense_lines(path=None) -> pd.DataFrame:
    """The shipped GES table: columns of ``load_lines()`` plus ``EXTRA_COLUMNS``
    (``g_upper`` float, level designations as text, lower level first), sorted by
    vacuum Å; cached per file and modification time."""
    p = str(path) if path is not None else str(DENSE_PATH)
    if not Path(p).is_file():
        raise InputError(p, "no such file")
    return _read(p, Path(p).stat().st_mtime).copy()


def _absent(cur: pd.DataFrame, dense: pd.DataFrame) -> np.ndarray:
    """True for each row of ``cur`` with no line of its species in ``dense`` within SAME_LINE_A."""
    out = np.ones(len(cur), dtype=bool)
    waves = {sp: g["vacuum_A"].to_numpy() for sp, g in dense.groupby("species", sort=False)}
    for i, (sp, w) in enumerate(zip(cur["species"], cur["vacuum_A"], strict=True)):
        ref = waves.get(sp)
        if ref is not None and ref.size:
            j = np.searchsorted(ref, w)
            near = ref[max(j - 1, 0):j + 1]
            out[i] = not (np.abs(near - w) < SAME_LINE_A).any()
    return out


def load_merged_lines() -> pd.DataFrame:
    """Dense GES atoms plus, from ``load_lines()``: H I / He II (all), other atomic
    lines outside 4200-9200 Å (air), the curated atomic lines inside it that the GES
    list lacks (He I, C II, Si III, ... of hot stars: no GES line of the species within
    ``SAME_LINE_A``), band heads and telluric bands; sorted by vacuum Å.
    Rows from ``load_lines()`` have empty ``gf_source`` and level columns, NaN ``g_upper``."""
    dense = load_dense_lines()
    cur = load_lines()
    air = cur["air_A"].to_numpy()
    hydrogenic = cur["species"].isin(["H I", "He II"]).to_numpy()
    outside = (air < GES_AIR_RANGE_A[0]) | (air > GES_AIR_RANGE_A[1])
    keep = (cur["kind"] != "atomic").to_numpy() | hydrogenic | outside | _absent(cur, dense)
    extra = cur.loc[keep].copy()
    for col in EXTRA_COLUMNS:
        extra[col] = np.nan if col == "g_upper" else ""
    out = pd.concat([dense, extra], ignore_index=True)
    return out.sort_values("vacuum_A", kind="stable").reset_index(drop=True)
