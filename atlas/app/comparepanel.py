"""The comparison panel: a second star above the first on one linked wavelength axis, and
their difference with the lines that grow or fade (arithmetic in :mod:`atlas.app.compare`).

Its plots are made on first use, so a session that compares nothing pays nothing.
"""

from __future__ import annotations

import html
import math

import numpy as np
import panel as pn
from bokeh.events import RangesUpdate
from bokeh.models import ColumnDataSource, HoverTool, LabelSet, Range1d, WheelZoomTool
from bokeh.plotting import figure

from atlas.app import compare as cmpmod
from atlas.app.frames import scale
from atlas.app.strippanel import plot_width_px
from atlas.presentation import PALETTE

#: The view parameters the comparison shows.
WATCHES = ("star", "compare", "lo", "hi", "page", "per_page", "frame", "medium", "unit",
           "lines", "strength", "marks")


class ComparePanel:
    def __init__(self, vm, lines, on_width):
        self.vm = vm
        self._lines = lines
        self.on_width = on_width
        self._key = None
        self._window = None
        self.glyphs: set[str] = set()
        self.figs: list = []
        self.title = pn.pane.HTML("", margin=(6, 4, 0, 4), name="compare-title",
                                  styles={"font-size": "12.5px", "color": PALETTE["ink"]})
        self.box = pn.Column(self.title, sizing_mode="stretch_width", visible=False, margin=(0, 0, 6, 0),
                             styles={"border": f"1px solid {PALETTE['rule']}", "border-radius": "4px"})

    def _build(self):
        """Two stars one above the other on one linked wavelength axis, and their difference."""
        xr_ = Range1d(0, 1)
        self.a = ColumnDataSource({"x": np.zeros(0, np.float32), "y": np.zeros(0, np.float32)},
                                      name="compare-a")
        self.b = ColumnDataSource({"x": np.zeros(0, np.float32), "y": np.zeros(0, np.float32)},
                                      name="compare-b")
        self.d = ColumnDataSource({"x": np.zeros(0, np.float32), "y": np.zeros(0, np.float32)},
                                      name="compare-diff")
        self.lines_src = ColumnDataSource({k: [] for k in ("x", "species", "da", "db", "dd", "colour",
                                                       "marker", "size", "label")}, name="compare-lines")
        self.marks_src = ColumnDataSource({"x0": [], "x1": [], "note": []}, name="compare-marks")
        figs = []
        for name, src, colour, h in (("compare-fig-a", self.a, PALETTE["spectrum"], 120),
                                     ("compare-fig-b", self.b, PALETTE["second"], 120),
                                     ("compare-fig-diff", self.d, PALETTE["ink"], 120)):
            fig = figure(height=h, sizing_mode="stretch_width", output_backend="webgl", x_range=xr_,
                         y_range=Range1d(0, 1.2) if name != "compare-fig-diff" else Range1d(-0.5, 0.5),
                         tools="xpan,xbox_zoom,reset", active_drag="xpan", toolbar_location="right",
                         min_border_left=46, min_border_right=6, min_border_top=18, min_border_bottom=18,
                         name=name, background_fill_color=PALETTE["paper"], border_fill_color="white")
            fig.toolbar.logo = None
            wheel = WheelZoomTool(dimensions="width", modifiers={"ctrl": True})
            fig.add_tools(wheel)
            fig.toolbar.active_scroll = wheel
            fig.grid.grid_line_color = PALETTE["rule"]
            fig.title.text_font_size = "11px"
            fig.xaxis.major_label_text_font_size = "10px"
            fig.yaxis.major_label_text_font_size = "9px"
            fig.yaxis.ticker.desired_num_ticks = 3
            fig.vstrip(x0="x0", x1="x1", source=self.marks_src, fill_color=PALETTE["mark"], fill_alpha=0.22,
                       line_alpha=0)
            if name != "compare-fig-diff":
                fig.vspan(x="x", source=self.lines_src, line_color="colour", line_alpha=0.5, line_width=1)
            else:
                fig.add_layout(LabelSet(x="x0", y=-4, y_units="screen", text="note", source=self.marks_src,
                                        text_font_size="10px", text_color=PALETTE["mark_text"], x_offset=3,
                                        text_baseline="bottom"))
            fig.line("x", "y", source=src, line_color=colour, line_width=1.1)
            fig.on_event(RangesUpdate, self.on_range)
            fig.on_change("inner_width", lambda attr, old, new: self.on_width())
            figs.append(fig)
        d = figs[2]
        d.hspan(y=[0.0], line_color=PALETTE["overview"], line_dash="dashed", line_width=1)
        sc = d.scatter("x", "dd", source=self.lines_src, marker="marker", size="size", fill_color="colour",
                       line_color=None, fill_alpha=0.9)
        d.add_layout(LabelSet(x="x", y="dd", text="label", source=self.lines_src, text_font_size="9px",
                              text_color="colour", x_offset=4, y_offset=2))
        d.add_tools(HoverTool(renderers=[sc], tooltips=[
            ("line", "@species"), ("depth, first star", "@da{0.000}"),
            ("depth, second star", "@db{0.000}"), ("change", "@dd{+0.000}")]))
        self.figs = figs
        self.box.extend([pn.pane.Bokeh(f, sizing_mode="stretch_width", margin=(0, 0, 2, 0)) for f in figs])

    def update(self):
        """Draw the comparison: both stars' normalised flux, their difference, line changes."""
        st = self.vm.state
        if not st.compare or st.compare not in self.vm.data.records:
            if self.box.visible:
                self.box.visible = False
            self._key = None
            self.glyphs = set()
            return
        win = self.vm.compare_window()
        if win is None:
            return
        if not self.figs:
            self._build()
        lo, hi = win
        fa, fb = self.vm.frame(), self.vm.compare_frame()
        sc = scale(st.unit)
        width = plot_width_px(self.figs[0])
        key = (st.star, st.compare, round(lo, 6), round(hi, 6), fa, fb, st.unit, width,
               tuple(st.lines), st.strength, tuple(map(tuple, st.marks)))
        self.box.visible = True
        if key == self._key:
            return
        self._key = key
        self._window = (lo, hi)
        pts = 2 * width
        sa = fa.from_display_A(np.array([lo, hi]))
        sb = fb.from_display_A(np.array([lo, hi]))
        wa = self.vm.data.span(st.star, float(sa[0]), float(sa[1]), pts)
        wb = self.vm.data.span(st.compare, float(sb[0]), float(sb[1]), pts)
        xa, ya = fa.to_display_A(wa["wavelength"]), np.asarray(wa["flux"], np.float64)
        xb, yb = fb.to_display_A(wb["wavelength"]), np.asarray(wb["flux"], np.float64)
        self.a.data = {"x": (xa / sc).astype(np.float32), "y": ya.astype(np.float32)}
        self.b.data = {"x": (xb / sc).astype(np.float32), "y": yb.astype(np.float32)}
        grid = cmpmod.common_grid(xa, ya, xb, yb, width)
        self.d.data = {"x": grid["x"] / np.float32(sc), "y": grid["diff"]}
        self.lines_src.data = self._lines_changed(lo, hi, fa, fb, xa, ya, xb, yb, sc)
        here = [m for m in st.marks if m[1] >= lo and m[0] <= hi]
        self.marks_src.data = {"x0": [m[0] / sc for m in here], "x1": [m[1] / sc for m in here],
                           "note": [m[2] for m in here]}
        dd_now = np.asarray(self.lines_src.data["dd"], dtype=float)
        self.glyphs = ({"spectrum", "second", "difference"} | ({"grow"} if (dd_now > 0).any() else set())
                       | ({"fade"} if (dd_now < 0).any() else set()) | ({"mark"} if here else set()))
        for f in self.figs:
            f.x_range.update(start=lo / sc, end=hi / sc)
        ys = np.concatenate([ya[np.isfinite(ya)], yb[np.isfinite(yb)]])
        if len(ys):
            a, b = min(float(np.min(ys)), 0.0) if float(np.min(ys)) < 0.2 else float(np.min(ys)), \
                max(float(np.max(ys)), 1.08)
            for f in self.figs[:2]:
                f.y_range.update(start=a - 0.05 * (b - a), end=b + 0.05 * (b - a))
        dd = np.concatenate([grid["diff"][np.isfinite(grid["diff"])],
                             np.asarray(self.lines_src.data["dd"], np.float64)])
        m = max(0.05, float(np.max(np.abs(dd)))) * 1.15 if len(dd) else 0.5
        self.figs[2].y_range.update(start=-m, end=m)
        na = html.escape(str(self.vm.record().get("name") or st.star))
        nb = html.escape(str(self.vm.data.record(st.compare).get("name") or st.compare))
        n_grow = int(np.sum(np.asarray(self.lines_src.data["dd"]) > 0))
        n_fade = len(self.lines_src.data["dd"]) - n_grow
        unit = "Å" if st.unit == "A" else "nm"
        self.figs[0].title.text = f"first star: {self.vm.record().get('name') or st.star} (normalised flux)"
        self.figs[1].title.text = (f"second star: {self.vm.data.record(st.compare).get('name') or st.compare}"
                                       " (normalised flux)")
        self.figs[2].title.text = ("second − first: flux difference (line); line depth change "
                                       "(▲ deeper in the second star, ▼ shallower)")
        self.title.object = (
            f"<b>Comparing</b> {na} with {nb} · {lo / sc:.3f}–{hi / sc:.3f} {unit} ({st.medium}, "
            f"{st.frame} frame{', each star through its own RV' if st.frame == 'rest' else ''}) · "
            f'<span style="color:{PALETTE["grow"]}">▲ {n_grow} lines deeper</span> · '
            f'<span style="color:{PALETTE["fade"]}">▼ {n_fade} shallower</span> in the second star')

    def choose(self, star_id):
        """Show a second star; the rest frame (each star through its own RV) by default."""
        star_id = star_id or ""
        if star_id == self.vm.state.compare:
            return
        if star_id and self.vm.state.frame == "observed":
            self.vm.state.param.update(compare=star_id, frame="rest")
        else:
            self.vm.state.param.update(compare=star_id)

    def on_range(self, ev):
        """End of a pan or zoom in the comparison (the three plots share one x range)."""
        if not self.vm.state.compare or ev.x0 is None or ev.x1 is None:
            return
        sc = scale(self.vm.state.unit)
        x0, x1 = float(ev.x0) * sc, float(ev.x1) * sc
        if not (math.isfinite(x0) and math.isfinite(x1)) or x1 - x0 < 1e-3:
            return
        cur = (self.vm.state.lo, self.vm.state.hi)
        if cur[0] is not None and abs(cur[0] - x0) < 1e-6 and abs(cur[1] - x1) < 1e-6:
            return  # the same gesture reported by a linked plot
        if self._window is not None and abs(self._window[0] - x0) < 1e-6 \
                and abs(self._window[1] - x1) < 1e-6:
            return
        self.vm.state.param.update(lo=x0, hi=x1)

    def _lines_changed(self, lo, hi, fa, fb, xa, ya, xb, yb, sc) -> dict:
        """Stellar lines in the window whose depth differs between the two stars."""
        cols = {k: [] for k in ("x", "species", "da", "db", "dd", "colour", "marker", "size", "label")}
        lines = self._lines
        if lines is None or len(lines) == 0:
            return cols
        st = self.vm.state
        tell = lines["telluric"].astype(str).str.lower().isin(("true", "1")).to_numpy()
        vac = lines["vacuum_A"].to_numpy(dtype=float)
        pa = fa.rest_vac_to_display_A(vac, tell)
        sel = (~tell) & (pa >= lo) & (pa <= hi) & (lines["strength"].to_numpy() <= st.strength)
        if st.lines:
            sel &= lines["species"].isin(list(st.lines)).to_numpy()
        idx = np.nonzero(sel)[0]
        if len(idx) == 0:
            return cols
        idx = idx[np.argsort(lines["strength"].to_numpy()[idx], kind="stable")][:120]
        pb = fb.rest_vac_to_display_A(vac[idx], False)
        spacing = (hi - lo) / max(len(xa), 2)
        da = cmpmod.line_depths(xa, ya, pa[idx], cmpmod.depth_half_width(pa[idx], spacing),
                                cmpmod.depth_half_width(pa[idx], spacing, kms=60.0))
        db = cmpmod.line_depths(xb, yb, pb, cmpmod.depth_half_width(pb, spacing),
                                cmpmod.depth_half_width(pb, spacing, kms=60.0))
        ch = cmpmod.change(da, db)
        keep = ch != 0
        if not keep.any():
            return cols
        dd = (db - da)[keep]
        order = np.argsort(-np.abs(dd))
        labelled = set(order[:10].tolist())
        sp = lines["species"].to_numpy()[idx][keep]
        cols["x"] = (pa[idx][keep] / sc).tolist()
        cols["species"] = [str(s) for s in sp]
        cols["da"], cols["db"], cols["dd"] = da[keep].tolist(), db[keep].tolist(), dd.tolist()
        cols["colour"] = [PALETTE["grow"] if v > 0 else PALETTE["fade"] for v in dd]
        cols["marker"] = ["triangle" if v > 0 else "inverted_triangle" for v in dd]
        cols["size"] = [float(min(18.0, 6.0 + 40.0 * abs(v))) for v in dd]
        cols["label"] = [str(s) if i in labelled else "" for i, s in enumerate(sp)]
        return cols
