"""The overview: the whole spectrum in one small plot, the page and the zoom shaded; a
click there opens the page holding that wavelength."""

from __future__ import annotations

import numpy as np
from bokeh.events import Tap
from bokeh.models import BoxAnnotation, ColumnDataSource, Range1d
from bokeh.plotting import figure

from atlas.app.frames import scale
from atlas.presentation import PALETTE

#: The view parameters the overview shows.
WATCHES = ("star", "frame", "medium", "unit", "flux", "page", "per_page", "lo", "hi")


class Overview:
    def __init__(self, vm):
        self.vm = vm
        self._key = None
        self.src = ColumnDataSource({"x": np.zeros(0, np.float32), "y": np.zeros(0, np.float32)})
        fig = figure(height=92, sizing_mode="stretch_width", tools="", toolbar_location=None,
                     x_range=Range1d(0, 1), y_range=Range1d(0, 1.2), name="overview",
                     background_fill_color="white", min_border_left=46, min_border_bottom=16,
                     min_border_top=16, output_backend="webgl")
        fig.title.text = "whole spectrum: click to go there"
        fig.title.text_font_size = "11px"
        fig.title.text_color = PALETTE["muted"]
        fig.grid.visible = False
        fig.yaxis.visible = False
        fig.xaxis.major_label_text_font_size = "9px"
        fig.line("x", "y", source=self.src, line_color=PALETTE["overview"], line_width=1)
        self.page_box = BoxAnnotation(left=0, right=0, fill_color=PALETTE["spectrum"], fill_alpha=0.15,
                                      line_color=PALETTE["spectrum"], line_width=1)
        self.zoom_box = BoxAnnotation(left=0, right=0, fill_color=PALETTE["focus"], fill_alpha=0.6,
                                      line_alpha=0)
        fig.add_layout(self.page_box)
        fig.add_layout(self.zoom_box)
        fig.on_event(Tap, self.on_tap)
        self.fig = fig
        self.glyphs: set[str] = set()

    def on_tap(self, ev):
        if ev.x is None:
            return
        st = self.vm.state
        strip = self.vm.strip_of_display(float(ev.x) * scale(st.unit))
        if strip is None:
            return
        st.param.update(page=strip // st.per_page + 1, lo=None, hi=None)

    def update(self):
        vm, st = self.vm, self.vm.state
        fr = vm.frame()
        sc = scale(st.unit)
        flux = "norm" if st.flux == "normalized" else "raw"
        key = (st.star, fr, st.unit, flux)
        if self._key != key:
            ov = vm.data.overview(st.star, flux=flux)
            x = fr.to_display_A(ov["wavelength"]) / sc
            y = np.asarray(ov["flux"], dtype=np.float32)
            self.src.data = {"x": x.astype(np.float32), "y": y}
            lo_b, hi_b = vm.data.strip_bounds(st.star)
            full = fr.to_display_A(np.array([np.nanmin(lo_b), np.nanmax(hi_b)])) / sc
            self.fig.x_range.update(start=float(full[0]), end=float(full[1]))
            fy = y[np.isfinite(y)]
            if len(fy):
                a, b = np.percentile(fy, [0.5, 99.9])
                pad = 0.05 * (b - a or 1)
                self.fig.y_range.update(start=float(a - pad), end=float(b + pad))
            self._key = key
        strips = vm.page_strips()
        if strips:
            p0, _ = vm.strip_display_range(strips[0], fr)
            _, p1 = vm.strip_display_range(strips[-1], fr)
            self.page_box.update(left=p0 / sc, right=p1 / sc)
        if st.lo is not None and vm.zoom_strip() is not None:
            xr = self.fig.x_range
            span = max(st.hi - st.lo, (xr.end - xr.start) * sc / 400)
            mid = 0.5 * (st.lo + st.hi)
            self.zoom_box.update(left=(mid - span / 2) / sc, right=(mid + span / 2) / sc, visible=True)
        else:
            self.zoom_box.visible = False
        self.glyphs = {"overview", "page"} | ({"focus"} if self.zoom_box.visible else set())
