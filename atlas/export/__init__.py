"""Export a star's spectrum, or a region of it, as print pages (PDF) or one HTML file.

Two entry points, used by ``striae export`` and by the viewer's export button::

    export_pdf(atlas_path, star_id, out, lo=6540.0, hi=6600.0, frame="rest")
    export_html(atlas_path, None, out, view={"star": "vega", "lo": 6540, "hi": 6600})

Both take the view-state names the URL uses (``star``, ``lo``, ``hi``, ``frame``,
``medium``, ``unit``, ``flux``, ``lines``, ``strength``, ``marks``, ``per_page``,
``page``), either as keywords or as a ``view`` dict (keywords win).  ``lo``/``hi``
are Å in the displayed frame and medium, as in the URL, even when ``unit`` is ``nm``;
marks are ``[lo_A, hi_A, note]`` in the same frame and medium.

What is drawn
-------------
* ``lo``/``hi`` not given: the whole spectrum, one stored strip per drawn strip (the
  HTML export draws the strips of page ``page``).
* a region narrower than one strip: one strip showing just that region.
* a wider region: cut afresh into strips of the atlas's own strip width (equal
  velocity width), starting at ``lo``, so every strip has the same scale.

Data come from the atlas on disk (:mod:`atlas.store`) through the level-of-detail
window query (:func:`atlas.lod.window`), decimated to what the page needs, one strip
at a time.  Both writers write to a temporary file beside ``out`` and move it into
place with ``os.replace``: on any error nothing is left half-written.

User mistakes raise :class:`atlas.errors.InputError` naming the view-state parameter
(``star``, ``lo``/``hi``, ``per_page``, ...) or the output file.
"""

from __future__ import annotations

import math
from collections.abc import Iterator, Mapping
from dataclasses import dataclass, replace

from atlas import __version__
from atlas.errors import InputError
from atlas.export.files import _Atomic, _name, check_out
from atlas.export.gather import (
    Piece,
    _open_star,
    _own_intervals,
    _Star,
    _window,
    line_markers,
    mark_bands,
    mark_measurements,
    page_text,
    plan_pieces,
    strip_data,
)
from atlas.export.parts import LineMarker, MarkBand, PageText, StripData
from atlas.export.view import PAPERS, VIEW_KEYS, ExportView, FrameMap, frame_for, make_view
from atlas.spectrum import finite_or_none

__all__ = ["PAPERS", "VIEW_KEYS", "ExportView", "FrameMap", "HTML_MAX_STRIPS", "HTML_POINTS",
           "LineMarker", "MarkBand", "PageText", "Piece", "Prepared", "StripData", "check_out",
           "export_html", "export_pdf", "frame_for", "line_markers", "make_view", "mark_bands",
           "page_text", "plan_pieces", "prepare", "strip_data", "_own_intervals", "_window"]

#: The most strips one standalone HTML page holds (each is a plot of its own).
HTML_MAX_STRIPS = 40
#: Points per strip in the standalone HTML (min/max envelope bins when decimated).
HTML_POINTS = 4000


@dataclass
class Prepared:
    """Everything both writers need for one export, with strips fetched lazily."""

    view: ExportView
    star: _Star
    fmap: FrameMap
    pieces: list[Piece]
    markers: list[LineMarker]
    marks: list[MarkBand]
    text: PageText

    def strips(self, max_points: int) -> Iterator[StripData]:
        """The drawn strips in order, fetched one at a time."""
        for k, piece in enumerate(self.pieces):
            yield strip_data(self.star, piece, self.fmap, self.view.flux, max_points,
                             piece.label if self.view.lo is None else k + 1)


def prepare(atlas_path, view: ExportView, *, html_page: int | None = None,
            lines_path=None) -> Prepared:
    """Open the star, check the view against it, and plan the strips to draw."""
    star = _open_star(atlas_path, view.star)
    fmap = frame_for(view, star.record)
    extent = (finite_or_none(star.record.get("wavelength_min_A")),
              finite_or_none(star.record.get("wavelength_max_A")))
    pieces = plan_pieces(view, fmap, star.strip_min_A, star.strip_max_A, whole_page=html_page,
                         extent=extent)
    if not pieces:
        raise InputError("lo/hi", "the range holds no recorded samples (it falls in a gap)")
    lo_A = min(p.xlim_A[0] for p in pieces)
    hi_A = max(p.xlim_A[1] for p in pieces)
    markers = line_markers(view, fmap, lo_A, hi_A, lines_path)
    data_lo = max(min(p.lo_A for p in pieces), extent[0] or 0.0)
    data_hi = min(max(p.hi_A for p in pieces), extent[1] or math.inf)
    lo_d, hi_d = (float(v) for v in fmap.to_display([data_lo, data_hi]))
    text = page_text(view, star, fmap, lo_d, hi_d)
    text = replace(text, notes=text.notes + mark_measurements(view, star, fmap))
    return Prepared(view, star, fmap, pieces, markers, mark_bands(view, fmap), text)


def export_pdf(atlas_path, star_id: str | None = None, out=None, *, view: Mapping | None = None,
               lo=None, hi=None, frame=None, medium=None, unit=None, flux=None, lines=None,
               strength=None, marks=None, per_page=None, paper=None, markers=None,
               lines_path=None) -> dict:
    """Write print pages of stacked strips (A4 or Letter, portrait) to ``out`` (PDF).

    Returns a summary dict: ``out``, ``pages``, ``strips``.  ``lo``/``hi`` in Å in
    the displayed frame and medium; see the module docstring for the rest.
    """
    from atlas.export import pdf as pdfmod

    v = make_view(view, star=star_id, lo=lo, hi=hi, frame=frame, medium=medium, unit=unit,
                  flux=flux, lines=lines, strength=strength, marks=marks, per_page=per_page,
                  paper=paper, markers=markers)
    limit = pdfmod.max_per_page(v.paper)
    if v.per_page > limit:
        raise InputError("per_page", f"at most {limit} strips fit on one {v.paper.upper()} "
                         f"page, not {v.per_page}")
    path = check_out(out, ".pdf")
    prep = prepare(atlas_path, v, lines_path=lines_path)
    n_pages = math.ceil(len(prep.pieces) / v.per_page)
    max_points = int(pdfmod.strip_width_in(v.paper) * pdfmod.POINTS_PER_INCH)

    def pages() -> Iterator[pdfmod.PageSpec]:
        it = prep.strips(max_points)
        for k in range(n_pages):
            chunk = [s for _, s in zip(range(v.per_page), it, strict=False)]
            yield pdfmod.PageSpec(chunk, k + 1, n_pages)

    meta = {"Title": f"{prep.text.title}: {prep.text.header[1]}", "Creator": f"striae {__version__}"}
    with _Atomic(path) as tmp:
        written = pdfmod.write_pdf(tmp, pages(), lambda page: prep.text, prep.markers, prep.marks,
                                   paper=v.paper, per_page=v.per_page,
                                   normalized=v.flux == "normalized", metadata=meta)
    return {"out": _name(path), "pages": written, "strips": len(prep.pieces)}


def export_html(atlas_path, star_id: str | None = None, out=None, *, view: Mapping | None = None,
                lo=None, hi=None, frame=None, medium=None, unit=None, flux=None, lines=None,
                strength=None, marks=None, per_page=None, page=None, markers=None,
                lines_path=None) -> dict:
    """Write the view as one standalone HTML file (data and scripts inline, no server).

    With no range, the strips of page ``page`` (``per_page`` strips) are drawn; with a
    range, every strip of it (at most ``HTML_MAX_STRIPS``).  Returns ``out``, ``strips``.
    """
    from atlas.export import html as htmlmod

    v = make_view(view, star=star_id, lo=lo, hi=hi, frame=frame, medium=medium, unit=unit,
                  flux=flux, lines=lines, strength=strength, marks=marks, per_page=per_page,
                  page=page, markers=markers)
    path = check_out(out, ".html")
    prep = prepare(atlas_path, v, html_page=v.page if v.lo is None else None,
                   lines_path=lines_path)
    if len(prep.pieces) > HTML_MAX_STRIPS:
        raise InputError("lo/hi", f"the range covers {len(prep.pieces)} strips; one HTML page "
                         f"holds at most {HTML_MAX_STRIPS}: narrow the range or export a PDF")
    strips = list(prep.strips(HTML_POINTS))
    text = prep.text
    if v.lo is None:
        text = replace(text, notes=(f"page {v.page}: strips {prep.pieces[0].label}–"
                                    f"{prep.pieces[-1].label}",) + text.notes)
    html = htmlmod.render_html(strips, text, prep.markers, prep.marks,
                               normalized=v.flux == "normalized")
    with _Atomic(path) as tmp:
        with open(tmp, "w", encoding="utf-8") as fh:
            fh.write(html)
    return {"out": _name(path), "strips": len(strips)}
