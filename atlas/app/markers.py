"""Line markers for one strip: which lines to draw, where, and which to label.

Plain pandas/numpy (no panel, no bokeh), so it is tested on its own.  Positions use
:class:`atlas.app.frames.Frame`: stellar lines move with the star's radial velocity,
telluric lines stay in the observer's frame.
"""

from __future__ import annotations

import re

import numpy as np
import pandas as pd

from atlas.app.frames import Frame
from atlas.lines import telluric_flags

COLUMNS = ("x", "species", "air_A", "vacuum_A", "strength", "telluric", "label", "ew")


def _empty() -> dict:
    return {c: [] for c in COLUMNS}


def place(lines: pd.DataFrame | None, frame: Frame) -> pd.DataFrame | None:
    """The line list with ``x_A``: where each line appears in the displayed frame (Å)."""
    if lines is None or len(lines) == 0:
        return None
    tell = telluric_flags(lines["telluric"])
    out = lines.copy()
    out["telluric"] = tell
    out["x_A"] = frame.rest_vac_to_display_A(lines["vacuum_A"].to_numpy(dtype=float), tell)
    return out.sort_values("x_A", kind="stable").reset_index(drop=True)


def visible(placed: pd.DataFrame | None, lo_A: float, hi_A: float, species=(), strength=4,
            medium="air", width_px=1000, label_px=74, ew=None) -> dict:
    """Markers inside [lo_A, hi_A] (displayed Å) as columns for a plot source.

    ``species`` filters by name (empty = all), ``strength`` keeps classes up to it
    (1 = strongest).  Every marker gets a line; labels are thinned so at most one label
    falls in each ``label_px``-wide bin: the strongest (then the first) in the bin.
    ``ew`` optionally maps (species, round(vacuum_A, 1)) to a measured equivalent width.
    """
    if placed is None:
        return _empty()
    x = placed["x_A"].to_numpy()
    i0, i1 = np.searchsorted(x, lo_A), np.searchsorted(x, hi_A, side="right")
    sel = placed.iloc[i0:i1]
    sel = sel[sel["strength"].to_numpy() <= strength]
    if species:
        sel = sel[sel["species"].isin(list(species))]
    if len(sel) == 0:
        return _empty()
    xs = sel["x_A"].to_numpy()
    n_bins = max(1, int(width_px // label_px))
    b = np.clip(((xs - lo_A) / (hi_A - lo_A) * n_bins).astype(int), 0, n_bins - 1)
    # within each bin keep the strongest (lowest class), first on ties
    order = np.lexsort((np.arange(len(xs)), sel["strength"].to_numpy(), b))
    keep = np.zeros(len(xs), bool)
    seen = set()
    for k in order:
        if b[k] not in seen:
            seen.add(b[k])
            keep[k] = True
    rest = sel["air_A"].to_numpy() if medium == "air" else sel["vacuum_A"].to_numpy()
    labels = [f"{s} {w:.2f}" if kp else "" for s, w, kp in zip(sel["species"], rest, keep, strict=True)]
    ews = []
    for s, v in zip(sel["species"], sel["vacuum_A"], strict=True):
        val = None if ew is None else ew.get((s, round(float(v), 1)))
        ews.append("not measured" if val is None else f"{val:.1f} mÅ")
    return {
        "x": xs,
        "species": sel["species"].tolist(),
        "air_A": sel["air_A"].to_numpy(dtype=float),
        "vacuum_A": sel["vacuum_A"].to_numpy(dtype=float),
        "strength": sel["strength"].to_numpy(dtype=int),
        "telluric": sel["telluric"].to_numpy(dtype=bool),
        "label": labels,
        "ew": ews,
    }


_LINE = re.compile(
    r"^\s*(?:(?P<sp>[A-Za-z][A-Za-z0-9]{0,7}(?:\s+[IVX]{1,4})?)\s*)?"
    r"(?P<w>\d+(?:\.\d*)?)?\s*(?P<u>nm|a|å|angstrom)?\s*$",
    re.IGNORECASE,
)


def parse_target(text: str):
    """Split a go-to request like ``Na I 5890``, ``6563``, ``656.3 nm`` or ``H I``.

    Returns (species or None, wavelength or None, unit or None); raises ValueError when
    the text is neither.
    """
    m = _LINE.match(text or "")
    if not m or not (m.group("sp") or m.group("w")):
        raise ValueError(f"{(text or '')[:40]!r} is not a wavelength or a line like 'Na I 5890'")
    sp = m.group("sp")
    if sp:
        parts = sp.split()
        sp = parts[0][0].upper() + parts[0][1:] + (" " + parts[1].upper() if len(parts) > 1 else "")
    w = float(m.group("w")) if m.group("w") else None
    u = m.group("u")
    u = None if u is None else ("nm" if u.lower() == "nm" else "A")
    return sp, w, u


def find_line(lines: pd.DataFrame | None, species: str, wave_A: float | None, medium="air"):
    """The line-list row of ``species`` nearest ``wave_A`` (Å, displayed medium), or the
    strongest line of that species when no wavelength is given; None if there is none."""
    if lines is None:
        return None
    sel = lines[lines["species"].str.lower() == species.lower()]
    if len(sel) == 0:
        return None
    col = "air_A" if medium == "air" else "vacuum_A"
    if wave_A is None:
        return sel.sort_values(["strength", col], kind="stable").iloc[0]
    d = np.abs(sel[col].to_numpy(dtype=float) - wave_A)
    if d.min() > 5.0:
        return None
    return sel.iloc[int(np.argmin(d))]


_MARK = re.compile(
    r"^\s*(?P<a>\d+(?:\.\d*)?)\s*(?:-|–|—|\.\.|to)\s*(?P<b>\d+(?:\.\d*)?)\s*"
    r"(?P<u>nm|Å|A|angstrom)?(?:\s+(?P<note>.*?))?\s*$",
    re.IGNORECASE | re.DOTALL,
)


def parse_mark(text: str, unit: str = "A") -> tuple[float, float, str]:
    """A typed mark like ``6550-6575 Hα wing`` or ``655.0–657.5 nm core``: (lo_A, hi_A, note).

    Numbers are in the axis unit (``unit``) unless ``nm`` or ``Å`` follows them; the rest
    is the note, kept as plain text.  Raises ValueError for anything else.
    """
    m = _MARK.match(text or "")
    if not m:
        raise ValueError(f"{(text or '')[:40]!r} is not a range like '6550-6575 note'")
    a, b = float(m.group("a")), float(m.group("b"))
    u = (m.group("u") or "").lower()
    k = 10.0 if u == "nm" or (u == "" and unit == "nm") else 1.0
    a, b = sorted((a * k, b * k))
    if not b > a:
        raise ValueError("a mark needs two different ends")
    return a, b, (m.group("note") or "").strip()
