"""Plain data handed from the export's data gathering to its two renderers (PDF, HTML).

Everything here is already in display coordinates: wavelengths in the chosen unit
(Å or nm), medium and frame, fluxes as they are drawn.  The renderers never open an
atlas, so they can be tested on plain arrays.
"""

from __future__ import annotations

import bisect
from dataclasses import dataclass, field

import numpy as np


@dataclass(frozen=True)
class StripData:
    """One strip to draw: a polyline in display units and the x range of its axis.

    ``x`` is non-decreasing; when ``decimated`` the points sweep the min/max envelope
    of each bin (two points per bin), else they are the real samples.  Masked samples
    are NaN in ``y`` (the line breaks there).
    """

    index: int
    x: np.ndarray
    y: np.ndarray
    xlim: tuple[float, float]
    decimated: bool = False


@dataclass(frozen=True)
class LineMarker:
    """A line-list entry placed in display units; ``strength`` 1 = strongest .. 4 = weak."""

    x: float
    label: str
    species: str
    telluric: bool
    strength: int


@dataclass(frozen=True)
class MarkBand:
    """A marked range (display units) with a short note written by the user (plain text)."""

    x0: float
    x1: float
    note: str


@dataclass(frozen=True)
class PageText:
    """The words around the strips: title, header lines, axis words and footer."""

    title: str
    header: tuple[str, ...]
    x_label: str
    y_label: str
    footer: str
    notes: tuple[str, ...] = field(default_factory=tuple)


def thin_labels(x, priority, min_sep) -> np.ndarray:
    """Indices of labels to keep so no two kept labels lie closer than ``min_sep`` in x.

    Labels are taken greedily in order of ``priority`` (smaller = more important, ties
    by position), each kept only if it keeps its distance from every label already
    kept.  Returns the kept indices sorted by x.
    """
    x = np.asarray(x, dtype=np.float64)
    priority = np.asarray(priority, dtype=np.float64)
    if x.size == 0:
        return np.zeros(0, dtype=np.intp)
    order = np.lexsort((x, priority))
    kept_x: list[float] = []
    kept_i: list[int] = []
    for i in order:
        xi = x[i]
        if not np.isfinite(xi):
            continue
        j = bisect.bisect_left(kept_x, xi)
        if j > 0 and xi - kept_x[j - 1] < min_sep:
            continue
        if j < len(kept_x) and kept_x[j] - xi < min_sep:
            continue
        kept_x.insert(j, xi)
        kept_i.insert(j, int(i))
    return np.asarray(kept_i, dtype=np.intp)


def markers_in(markers: list[LineMarker], lo: float, hi: float) -> list[LineMarker]:
    """The markers with ``lo <= x <= hi`` (markers sorted by x)."""
    xs = [m.x for m in markers]
    a = bisect.bisect_left(xs, lo)
    b = bisect.bisect_right(xs, hi)
    return markers[a:b]
