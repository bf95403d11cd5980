"""A standalone HTML page of stacked strips: Bokeh plots with data and scripts inline.

The page opens from ``file://`` with no server and no network: BokehJS is embedded
(inline resources, Bokeh's own only) and the data are already decimated, since no Python runs
there.  Pan and zoom work in the browser; line labels were thinned for the page width
beforehand.  Every piece of user text (star name, notes, file names) reaches the page
either HTML-escaped in the header or as canvas text and escaped tooltips, so a note
such as ``<script>`` shows as text and never runs.

This is the one module outside :mod:`atlas.app` that imports Bokeh, and only here.
"""

from __future__ import annotations

import html
import math
from collections.abc import Sequence

import numpy as np
from bokeh.embed import file_html
from bokeh.layouts import column
from bokeh.model import Model
from bokeh.models import (
    ColumnDataSource,
    Div,
    HoverTool,
    LabelSet,
    Range1d,
)
from bokeh.plotting import figure
from bokeh.resources import Resources

from atlas.export.parts import (
    LineMarker,
    MarkBand,
    PageText,
    StripData,
    markers_in,
    thin_labels,
)
from atlas.presentation import PALETTE, y_limits

#: Plot width assumed when thinning labels, CSS pixels.
PLOT_WIDTH_PX = 1100
STRIP_HEIGHT_PX = 230
LABEL_PX = 9  # label font size; labels are turned 90 degrees
_STELLAR = PALETTE["stellar"]
_TELLURIC = PALETTE["telluric"]
_MARK = PALETTE["mark"]


class BokehOnlyResources(Resources):
    """Inline BokehJS with the external scripts of Bokeh's own models only.

    Bokeh adds the ``__javascript__`` of every model class registered in the process;
    once Panel has been imported (as in ``striae serve`` or the app's tests) that adds a
    relative ``static/extensions/panel/...`` script, which a file opened from disk cannot
    load.  The exported page draws only Bokeh models, so only theirs are collected.
    """

    def _collect_external_resources(self, resource_attr) -> list[str]:
        out: list[str] = []
        for _, cls in sorted(Model.model_class_reverse_map.items(), key=lambda kv: kv[0]):
            if not cls.__module__.startswith("bokeh."):
                continue
            ext = getattr(cls, resource_attr, None)
            for e in [ext] if isinstance(ext, str) else (ext or []):
                if e not in out:
                    out.append(e)
        return out

    def clone(self, *, components=None) -> BokehOnlyResources:
        """A copy that keeps this class (Bokeh's own ``clone`` returns a plain Resources)."""
        return BokehOnlyResources(
            mode=self.mode, version=self.version, root_dir=self.root_dir, dev=self.dev,
            minified=self.minified, log_level=self.log_level, root_url=self._root_url,
            path_versioner=self.path_versioner,
            components=components if components is not None else list(self.components),
            base_dir=self.base_dir,
        )


def _y_range(strip: StripData, normalized: bool) -> tuple[float, float]:
    # Room above the spectrum for the line ticks and labels.
    return y_limits(strip.y, normalized, room_above=0.75)


def _header_html(text: PageText, marks: Sequence[MarkBand], unit_word: str) -> str:
    e = html.escape
    parts = [f"<h2 style='margin:4px 0'>{e(text.title)}</h2>"]
    parts += [f"<div style='font-size:13px'>{e(line)}</div>" for line in text.header]
    parts += [f"<div style='font-size:13px'>{e(n)}</div>" for n in text.notes]
    if marks:
        items = "".join(
            f"<li>{m.x0:.4f}–{m.x1:.4f} {e(unit_word)}: {e(m.note) or '(no note)'}</li>"
            for m in marks
        )
        parts.append(f"<div style='font-size:13px'>marks:<ul style='margin:2px 0'>{items}</ul></div>")
    parts.append(f"<div style='font-size:11px;color:#555'>{e(text.footer)}</div>")
    return "".join(parts)


def strip_figure(strip: StripData, text: PageText, markers: Sequence[LineMarker],
                 marks: Sequence[MarkBand], *, normalized: bool = True):
    """One Bokeh figure for one strip: spectrum, line ticks and thinned labels, marks."""
    x_lo, x_hi = strip.xlim
    y_lo, y_hi = _y_range(strip, normalized)
    p = figure(
        height=STRIP_HEIGHT_PX,
        sizing_mode="stretch_width",
        x_range=Range1d(x_lo, x_hi, bounds=(x_lo, x_hi)),
        y_range=Range1d(y_lo, y_hi),
        tools="xpan,xwheel_zoom,box_zoom,reset,save",
        active_drag="xpan",
        active_scroll="xwheel_zoom",
        toolbar_location="right",
        x_axis_label=text.x_label,
        y_axis_label=f"strip {strip.index}",
    )
    p.min_border_left = 60
    p.xaxis.axis_label_text_font_size = "11px"
    p.yaxis.axis_label_text_font_size = "11px"
    p.xgrid.visible = False
    p.ygrid.grid_line_alpha = 0.3

    x, y = strip.x, strip.y
    src = ColumnDataSource({"x": np.asarray(x, dtype=np.float32),
                            "y": np.asarray(y, dtype=np.float32)})
    line = p.line("x", "y", source=src, line_width=1, color=PALETTE["spectrum"])
    p.add_tools(HoverTool(renderers=[line], mode="vline", tooltips=[("λ", "@x{0.000}"),
                                                                    ("flux", "@y{0.000}")]))

    here = [m for m in marks if m.x1 > x_lo and m.x0 < x_hi]
    if here:
        msrc = ColumnDataSource({
            "x0": [max(m.x0, x_lo) for m in here],
            "x1": [min(m.x1, x_hi) for m in here],
            "note": [m.note for m in here],
            "y": [y_lo + 0.02 * (y_hi - y_lo)] * len(here),
        })
        band = p.vstrip(x0="x0", x1="x1", source=msrc, fill_color=_MARK, fill_alpha=0.35,
                        line_alpha=0)
        p.add_tools(HoverTool(renderers=[band], tooltips=[("note", "@note")]))
        p.add_layout(LabelSet(x="x0", y="y", text="note", source=msrc, text_font_size="11px",
                              x_offset=3, background_fill_color="white",
                              background_fill_alpha=0.7))

    lines = markers_in(list(markers), x_lo, x_hi)
    if lines:
        xs = np.array([m.x for m in lines])
        tell = np.array([m.telluric for m in lines])
        span = y_hi - y_lo
        top = y_hi - 0.01 * span
        lsrc = ColumnDataSource({
            "x": xs, "y0": np.full(xs.size, top - 0.08 * span), "y1": np.full(xs.size, top),
            "colour": np.where(tell, _TELLURIC, _STELLAR).tolist(),
            "label": [m.label for m in lines],
        })
        seg = p.segment(x0="x", y0="y0", x1="x", y1="y1", source=lsrc, color="colour",
                        line_width=1)
        p.add_tools(HoverTool(renderers=[seg], tooltips=[("line", "@label")]))
        min_sep = (LABEL_PX * 1.3) / PLOT_WIDTH_PX * (x_hi - x_lo)
        keep = thin_labels(xs, [m.strength + (0.5 if m.telluric else 0.0) for m in lines],
                           min_sep)
        tsrc = ColumnDataSource({
            "x": xs[keep], "y": np.full(keep.size, top - 0.1 * span),
            "label": [lines[i].label for i in keep],
            "colour": [_TELLURIC if lines[i].telluric else _STELLAR for i in keep],
        })
        p.add_layout(LabelSet(x="x", y="y", text="label", source=tsrc, angle=math.pi / 2,
                              text_align="right", text_baseline="middle",
                              text_font_size=f"{LABEL_PX}px", text_color="colour"))
    return p


def render_html(strips: Sequence[StripData], text: PageText, markers: Sequence[LineMarker],
                marks: Sequence[MarkBand], *, normalized: bool = True) -> str:
    """The whole standalone page as one HTML string (BokehJS and data inline)."""
    unit_word = "nm" if "(nm" in text.x_label else "Å"
    header = Div(text=_header_html(text, marks, unit_word), sizing_mode="stretch_width")
    plots = [strip_figure(s, text, markers, marks, normalized=normalized) for s in strips]
    layout = column(header, *plots, sizing_mode="stretch_width")
    return file_html(layout, resources=BokehOnlyResources(mode="inline"), title=f"{text.title}: spectrum strips")
