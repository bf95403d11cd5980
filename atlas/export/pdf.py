"""Print-ready PDF pages of stacked strips, drawn with matplotlib from plain arrays.

One page holds ``per_page`` strips stacked top to bottom; above each strip a band of
line labels (thinned so they never overlap), inside it the spectrum, short ticks for
every line marker and shaded bands for the user's marks.  A header names the star,
its measurements, the source file, the range and the page number; a footer gives the
atlas build time and tool versions.  Figures are plain ``matplotlib.figure.Figure``
objects (no pyplot state), written one page at a time so memory stays flat.
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence
from dataclasses import dataclass

import matplotlib
import numpy as np
from matplotlib.backends.backend_pdf import PdfPages
from matplotlib.figure import Figure
from matplotlib.transforms import blended_transform_factory

from atlas.export.parts import (
    LineMarker,
    MarkBand,
    PageText,
    StripData,
    markers_in,
    thin_labels,
)
from atlas.presentation import PALETTE, y_limits

#: Paper sizes in inches (portrait): ISO 216 A4 and US Letter (common practice).
PAPERS = {"a4": (8.27, 11.69), "letter": (8.5, 11.0)}

# Page layout, inches.
_LEFT, _RIGHT, _TOP, _BOTTOM = 0.8, 0.35, 1.05, 0.55
_LABEL_BAND = 0.55  # line labels above each strip
_TICK_BAND = 0.34  # x tick labels and axis words below each strip
_MIN_AXES = 0.35  # the smallest useful strip height
_LABEL_PT = 5.0  # line label font size, points
_NOTE_PT = 5.5

#: Points drawn per inch of strip: a decimated strip gets 150 min/max bins per inch,
#: each about as wide as the drawn line (0.45 pt).
POINTS_PER_INCH = 300

_STELLAR_COLOUR = PALETTE["stellar"]
_TELLURIC_COLOUR = PALETTE["telluric"]
_MARK_COLOUR = PALETTE["mark"]


@dataclass(frozen=True)
class PageSpec:
    """One page: its strips and its page number (1-based) out of ``n_pages``."""

    strips: Sequence[StripData]
    page_no: int
    n_pages: int


def strip_width_in(paper: str) -> float:
    """Width of one strip's plotting area on the page, inches."""
    return PAPERS[paper][0] - _LEFT - _RIGHT


def max_per_page(paper: str) -> int:
    """How many strips fit on one page of this paper while staying readable."""
    avail = PAPERS[paper][1] - _TOP - _BOTTOM
    return int(avail // (_LABEL_BAND + _TICK_BAND + _MIN_AXES))


def _y_limits(strips: Sequence[StripData], normalized: bool) -> list[tuple[float, float]]:
    """Per-strip y limits (:func:`atlas.presentation.y_limits`)."""
    return [y_limits(s.y, normalized) for s in strips]


def draw_page(
    page: PageSpec,
    text: PageText,
    markers: Sequence[LineMarker],
    marks: Sequence[MarkBand],
    *,
    paper: str = "a4",
    per_page: int,
    normalized: bool = True,
) -> Figure:
    """Draw one page as a matplotlib Figure (not saved; the caller writes it)."""
    width, height = PAPERS[paper]
    fig = Figure(figsize=(width, height))
    kw = {"parse_math": False}  # user text ($, ^, _) is never read as mathtext

    # Header and footer.
    top = height - 0.32
    fig.text(_LEFT / width, top / height, text.title, fontsize=11, weight="bold",
             va="baseline", **kw)
    fig.text(1 - _RIGHT / width, top / height, f"page {page.page_no} of {page.n_pages}",
             fontsize=8, ha="right", va="baseline", **kw)
    for i, line in enumerate(text.header):
        fig.text(_LEFT / width, (top - 0.17 * (i + 1)) / height, line, fontsize=6.5,
                 va="baseline", **kw)
    fig.text(_LEFT / width, 0.25 / height, text.footer, fontsize=6, color=PALETTE["muted"],
             va="baseline", **kw)
    for i, note in enumerate(text.notes):
        fig.text(_LEFT / width, (0.25 + 0.12 * (i + 1)) / height, note, fontsize=6,
                 color=PALETTE["muted"], va="baseline", **kw)
    fig.text(0.2 / width, 0.5, text.y_label, rotation=90, fontsize=8, ha="center",
             va="center", **kw)

    slot = (height - _TOP - _BOTTOM) / per_page
    axes_h = slot - _LABEL_BAND - _TICK_BAND
    axes_w = width - _LEFT - _RIGHT
    ylims = _y_limits(page.strips, normalized)
    # Labels may not come closer than their own height (they are turned 90 degrees).
    label_sep_in = _LABEL_PT * 1.25 / 72.0

    for k, strip in enumerate(page.strips):
        y0 = height - _TOP - k * slot - _LABEL_BAND - axes_h
        ax = fig.add_axes((_LEFT / width, y0 / height, axes_w / width, axes_h / height))
        x, y = strip.x, strip.y
        ax.plot(x, y, lw=0.45, color=PALETTE["spectrum"], solid_joinstyle="round")
        ax.set_xlim(*strip.xlim)
        ax.set_ylim(*ylims[k])
        ax.tick_params(labelsize=6, length=2.5, width=0.5, pad=1.5)
        for spine in ax.spines.values():
            spine.set_linewidth(0.5)
        ax.set_xlabel(text.x_label, fontsize=5.5, loc="right", labelpad=1, **kw)
        ax.set_ylabel(f"strip {strip.index}", fontsize=5.5, labelpad=2, **kw)
        x_lo, x_hi = strip.xlim
        trans = blended_transform_factory(ax.transData, ax.transAxes)

        for band in marks:
            a, b = max(band.x0, x_lo), min(band.x1, x_hi)
            if a >= b:
                continue
            ax.axvspan(a, b, color=_MARK_COLOUR, alpha=0.35, lw=0, zorder=0)
            if band.note:
                ax.text(a, 0.05, band.note, transform=trans, fontsize=_NOTE_PT, ha="left",
                        va="bottom", clip_on=True, zorder=5,
                        bbox={"boxstyle": "square,pad=0.15", "fc": "white", "ec": "none",
                              "alpha": 0.75}, **kw)

        here = markers_in(list(markers), x_lo, x_hi)
        if not here:
            continue
        xs = np.array([m.x for m in here])
        tell = np.array([m.telluric for m in here])
        for sel, colour, style in ((~tell, _STELLAR_COLOUR, "-"), (tell, _TELLURIC_COLOUR, ":")):
            if sel.any():
                ax.vlines(xs[sel], 0.86, 1.0, transform=trans, colors=colour, lw=0.5,
                          linestyles=style, zorder=3)
        min_sep = label_sep_in / axes_w * (x_hi - x_lo)
        keep = thin_labels(xs, [m.strength + (0.5 if m.telluric else 0.0) for m in here],
                           min_sep)
        for i in keep:
            m = here[i]
            ax.text(m.x, 1.03, m.label, transform=trans, rotation=90, fontsize=_LABEL_PT,
                    ha="center", va="bottom", clip_on=False,
                    color=_TELLURIC_COLOUR if m.telluric else _STELLAR_COLOUR, **kw)
    return fig


def write_pdf(
    path,
    pages: Iterable[PageSpec],
    text_for,
    markers: Sequence[LineMarker],
    marks: Sequence[MarkBand],
    *,
    paper: str = "a4",
    per_page: int,
    normalized: bool = True,
    metadata: dict | None = None,
) -> int:
    """Write the pages to ``path`` as one PDF; ``text_for(page)`` gives each PageText.

    Pages are drawn and written one at a time.  Returns the number of pages written.
    """
    n = 0
    with matplotlib.rc_context({"pdf.fonttype": 42, "pdf.compression": 6}):
        with PdfPages(path, metadata=metadata or {}) as pdf:
            for page in pages:
                fig = draw_page(page, text_for(page), markers, marks, paper=paper,
                                per_page=per_page, normalized=normalized)
                pdf.savefig(fig)
                n += 1
    return n
