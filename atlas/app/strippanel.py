"""The page of strips: one Bokeh figure per strip, filled with at most about two points
per pixel from :mod:`atlas.lod` for the strip's whole range or the zoom window.

Each figure has a fixed ``Range1d``; the end of a pan or zoom (``RangesUpdate``) sets the
state's ``lo``/``hi``.  Strips whose drawing key is unchanged are not sent again.
"""

from __future__ import annotations

import dataclasses
import math

import numpy as np
import panel as pn
from bokeh.events import RangesUpdate, Reset
from bokeh.models import (
    BoxEditTool,
    BoxZoomTool,
    ColumnDataSource,
    CustomJS,
    Div,
    HoverTool,
    Label,
    LabelSet,
    PanTool,
    Range1d,
    ResetTool,
    WheelZoomTool,
)
from bokeh.plotting import figure

from atlas.app import markers
from atlas.app.featurespanel import is_unexplained
from atlas.app.frames import Frame, scale
from atlas.app.scripts import READOUT_JS
from atlas.presentation import PALETTE, flux_axis

DEFAULT_PX = 1100  # plot width assumed before the browser reports it
#: The view parameters the strips show.
WATCHES = ("star", "page", "per_page", "lo", "hi", "frame", "medium", "unit", "flux", "yaxis",
           "lines", "strength", "ref", "marks")


def spectrum_columns(x, y, level: int) -> dict:
    """Columns for a strip: real samples as a line (``lo`` = ``hi`` = ``y``), or min/max
    envelopes (level > 0, pairs of points per bin) as a band at the bin centres."""
    if level == 0 or len(x) < 2:
        return {"x": x, "y": y, "lo": y, "hi": y}
    n = len(x) // 2
    xc = 0.5 * (x[0:2 * n:2] + x[1:2 * n:2])
    a, b = y[0:2 * n:2], y[1:2 * n:2]
    lo, hi = np.fmin(a, b), np.fmax(a, b)
    return {"x": xc.astype(np.float32), "y": (0.5 * (lo + hi)).astype(np.float32),
            "lo": lo.astype(np.float32), "hi": hi.astype(np.float32)}


def plot_width_px(fig) -> int:
    """The plot's canvas width in pixels as the browser reported it (a default before)."""
    try:
        w = int(fig.inner_width or 0)
    except Exception:  # not reported yet
        w = 0
    return min(max(w, 200), 4000) if w > 0 else DEFAULT_PX


class Slot:
    """One strip figure on the page and its data sources."""

    def __init__(self, index: int, panel: StripsPanel):
        self.index = index
        self.strip: int | None = None
        self.drawn = None
        z = np.zeros(0, np.float32)
        self.src = ColumnDataSource({"x": z, "y": z, "lo": z, "hi": z},
                                    name=f"spectrum-{index}")
        self.msrc = ColumnDataSource(markers._empty() | {"colour": [], "air_u": [], "vac_u": [], "unit": []},
                                     name=f"markers-{index}")
        self.fsrc = ColumnDataSource({"x": [], "y": [], "species": [], "rest": [], "ew": [], "colour": []},
                                     name=f"found-{index}")
        self.ksrc = ColumnDataSource({"x0": [], "x1": [], "note": [], "i": []}, name=f"marks-{index}")
        self.mark_idx: list[int] = []
        self.level = 0
        self.glyphs: set[str] = set()  # legend keys of what this strip draws
        self.drawn_marks: dict = {}  # what Python last wrote to ksrc (an edit differs from it)
        self.conv = ColumnDataSource({"d": [0.0, 1.0], "vac": [0.0, 1.0], "air": [0.0, 1.0]})
        fig = figure(
            height=118, sizing_mode="stretch_width", output_backend="webgl",
            x_range=Range1d(0, 1), y_range=Range1d(0, 1.2),
            tools="xpan", active_drag="xpan",
            toolbar_location="right", min_border_left=46, min_border_right=6,
            min_border_top=4, min_border_bottom=18, name=f"strip-{index}",
            background_fill_color=PALETTE["paper"], border_fill_color="white",
        )
        fig.toolbar.logo = None
        # Ctrl + wheel zooms; the plain wheel keeps scrolling the page of strips.
        wheel = WheelZoomTool(dimensions="width", modifiers={"ctrl": True}, visible=False)
        # Shift + wheel, or the flux box tool, zooms the flux axis alone.
        ywheel = WheelZoomTool(dimensions="height", modifiers={"shift": True}, visible=False)
        fig.add_tools(wheel, ywheel)
        fig.toolbar.active_scroll = wheel
        fig.grid.grid_line_color = PALETTE["rule"]
        fig.xaxis.major_label_text_font_size = "10px"
        fig.yaxis.major_label_text_font_size = "9px"
        fig.yaxis.ticker.desired_num_ticks = 3
        fig.outline_line_width = 2
        fig.outline_line_color = None
        band = fig.vstrip(x0="x0", x1="x1", source=self.ksrc, fill_color=PALETTE["mark"], fill_alpha=0.22,
                          line_color=PALETTE["mark"], line_alpha=0.6, line_width=1)
        # Marks: pick the mark tool, Shift + drag to add, drag to move, click + Backspace to delete.
        # toolbar: pan, mark, box zoom, reset (hover and Ctrl + wheel work without buttons)
        self.box_edit = BoxEditTool(renderers=[band], empty_value=-1, description="mark a range "
                                    "(Shift + drag adds; click and Backspace deletes)")
        fig.add_tools(self.box_edit, BoxZoomTool(dimensions="width"),
                      BoxZoomTool(dimensions="height", description="zoom the flux axis"), ResetTool())
        self.pan = fig.select_one({"type": PanTool})
        fig.add_layout(LabelSet(x="x0", y=-4, y_units="screen", text="note", source=self.ksrc,
                                text_font_size="10px", text_color=PALETTE["mark_text"], x_offset=3,
                                text_baseline="bottom", background_fill_color="white",
                                background_fill_alpha=0.6))
        self.ksrc.on_change("data", lambda attr, old, new: panel.on_marks_edited(self, new))
        mr = fig.vspan(x="x", source=self.msrc, line_color="colour", line_alpha=0.55, line_width=1)
        fig.add_layout(LabelSet(
            x="x", y=4, y_units="screen", text="label", source=self.msrc, text_font_size="9px",
            text_color="colour", angle=math.pi / 2, x_offset=-2, text_baseline="bottom",
            text_align="left",
        ))
        fig.varea(x="x", y1="lo", y2="hi", source=self.src, fill_color=PALETTE["spectrum"], fill_alpha=0.85)
        fig.line("x", "y", source=self.src, line_color=PALETTE["spectrum"], line_width=1.1)
        fr = fig.scatter("x", "y", source=self.fsrc, marker="diamond", size=9,
                         fill_color="colour", line_color=None)
        self.number = Label(x=4, y=3, x_units="screen", y_units="screen", text="", text_font_size="10px",
                            text_color=PALETTE["muted"], background_fill_color="white",
                            background_fill_alpha=0.75)
        fig.add_layout(self.number)
        fig.add_tools(HoverTool(renderers=[mr], tooltips=[
            ("line", "@species"), ("rest air", "@air_u{0.0000} @unit"),
            ("rest vacuum", "@vac_u{0.0000} @unit"), ("strength", "@strength"),
            ("EW", "@ew")], point_policy="follow_mouse", visible=False))
        fig.add_tools(HoverTool(renderers=[fr], tooltips=[
            ("feature", "@species"), ("rest vacuum", "@rest"), ("EW", "@ew")], visible=False))
        fig.js_on_event("mousemove", CustomJS(
            args={"src": self.src, "conv": self.conv, "meta": panel.meta, "out": panel.readout},
            code=READOUT_JS))
        fig.on_event(RangesUpdate, lambda ev: panel.on_range(self, ev))
        fig.on_event(Reset, lambda ev: panel.on_reset(self))
        fig.on_change("inner_width", lambda attr, old, new: panel.on_width())
        self.fig = fig


def in_unit(m: dict, sc: float, medium: str) -> dict:
    """Marker columns in the axis unit: x, the labels' rest wavelengths, and the hover's
    ``air_u`` / ``vac_u`` with their ``unit``."""
    air = np.asarray(m.get("air_A", []), dtype=np.float64) / sc
    vac = np.asarray(m.get("vacuum_A", []), dtype=np.float64) / sc
    m["x"] = np.asarray(m["x"], dtype=np.float64) / sc
    if sc != 1.0:
        rest = air if medium == "air" else vac
        m["label"] = [f"{sp} {r:.3f}" if lab else "" for sp, r, lab in
                      zip(m["species"], rest, m["label"], strict=True)]
    m["air_u"], m["vac_u"] = air, vac
    m["unit"] = ["Å" if sc == 1.0 else "nm"] * len(m["x"])
    return m


class StripsPanel:
    """The strips of the page; ``update()`` draws what the state shows."""

    def __init__(self, vm, lines, *, max_slots: int, on_width, on_marks_edited):
        self.vm = vm
        self._lines = lines
        self.max_slots = max_slots
        self.on_width = on_width
        self.on_marks_edited = on_marks_edited
        self.mark_mode = False
        self._placed_key = None
        self._placed = None
        self.meta = ColumnDataSource({"scale": [1.0], "ref_A": [0.0], "ref_name": [""],
                                      "frame": ["observed"]})
        self.readout = Div(text="move the cursor over a strip for wavelength, velocity and flux",
                           sizing_mode="stretch_width", name="readout",
                           styles={"font-size": "12.5px", "color": PALETTE["ink"]})
        self.slots: list[Slot] = []
        self.glyphs: set[str] = set()
        self.column = pn.Column(sizing_mode="stretch_width")

    def set_mark_mode(self, on: bool):
        """Mouse marking: make each strip's mark tool (or pan, when off) the active drag."""
        self.mark_mode = bool(on)
        with pn.io.hold():
            for slot in self.slots:
                slot.fig.toolbar.active_drag = slot.box_edit if on else slot.pan

    def ensure(self, n: int):
        """Strip figures are made when first needed (never more than self.max_slots)."""
        new = []
        while len(self.slots) < min(n, self.max_slots):
            slot = Slot(len(self.slots), self)
            if self.mark_mode:
                slot.fig.toolbar.active_drag = slot.box_edit
            self.slots.append(slot)
            new.append(pn.pane.Bokeh(slot.fig, sizing_mode="stretch_width", margin=(0, 0, 2, 0)))
        if new:
            self.column.extend(new)

    def on_range(self, slot: Slot, ev):
        """End of a pan or zoom in one strip: the window becomes the state."""
        if slot.strip is None or ev.x0 is None or ev.x1 is None:
            return
        sc = scale(self.vm.state.unit)
        x0, x1 = float(ev.x0) * sc, float(ev.x1) * sc
        if not (math.isfinite(x0) and math.isfinite(x1)) or x1 <= x0:
            return
        fr = self.vm.frame()
        s0, s1 = self.vm.strip_display_range(slot.strip, fr)
        x0, x1 = max(s0, x0), min(s1, x1)
        cur = (self.vm.state.lo, self.vm.state.hi)
        whole = (x1 - x0) >= 0.999 * (s1 - s0)
        if whole:
            if self.vm.zoom_strip() == slot.strip or cur == (None, None):
                if cur != (None, None):
                    self.vm.state.param.update(lo=None, hi=None)
            return
        if cur[0] is not None and abs(cur[0] - x0) < 1e-6 and abs(cur[1] - x1) < 1e-6:
            return
        self.vm.state.param.update(lo=x0, hi=x1)

    def on_reset(self, slot: Slot):
        if self.vm.zoom_strip() == slot.strip:
            self.vm.state.param.update(lo=None, hi=None)

    def _ref(self):
        st = self.vm.state
        if not st.ref or self._lines is None:
            return 0.0, ""
        try:
            sp, w, _ = markers.parse_target(st.ref)
        except ValueError:
            return 0.0, ""
        row = markers.find_line(self._lines, sp, w, "air") if sp else None
        if row is None:
            row = markers.find_line(self._lines, sp, w, "vacuum") if sp else None
        if row is None:
            return 0.0, ""
        lam = float(row["air_A"] if st.medium == "air" else row["vacuum_A"])
        return lam, f"{row['species']} {lam:.2f} ({st.medium})"

    def _placed_lines(self, fr: Frame):
        key = (self.vm.state.star, fr)
        if key != self._placed_key:
            self._placed = markers.place(self.vm.data.star_lines(self.vm.state.star), fr)
            self._placed_key = key
        return self._placed

    def _ew_map(self):
        df = self.vm.data.features(self.vm.state.star)
        if df is None or "species" not in df or "ew_mA" not in df or "rest_A" not in df:
            return None
        return {(s, round(float(r), 1)): float(e) for s, r, e in zip(df["species"], df["rest_A"], df["ew_mA"],
                                                                    strict=True)
                if s and np.isfinite(r) and np.isfinite(e)}

    def update(self):
        st = self.vm.state
        fr = self.vm.frame()
        sc = scale(st.unit)
        flux = "norm" if st.flux == "normalized" else "raw"
        strips = self.vm.page_strips()
        self.ensure(len(strips))
        zs = self.vm.zoom_strip()
        ref_A, ref_name = self._ref()
        self.meta.data = {"scale": [sc], "ref_A": [ref_A], "ref_name": [ref_name], "frame": [st.frame]}
        placed = self._placed_lines(fr)
        ew = self._ew_map()
        feats = self.vm.data.features(st.star)
        for i, slot in enumerate(self.slots):
            strip = strips[i] if i < len(strips) else None
            slot.strip = strip
            visible = strip is not None
            if slot.fig.visible != visible:
                slot.fig.visible = visible
            if not visible:
                continue
            s0, s1 = self.vm.strip_display_range(strip, fr)
            if zs == strip:
                lo, hi = max(s0, st.lo), min(s1, st.hi)
            else:
                lo, hi = s0, s1
            width = plot_width_px(slot.fig)
            key = (st.star, strip, round(lo, 6), round(hi, 6), fr, st.unit, flux, st.yaxis, width,
                   tuple(st.lines), st.strength, ref_A, tuple(map(tuple, st.marks)), zs == strip)
            if key == slot.drawn:
                continue
            self.draw_slot(slot, strip, lo, hi, s0, s1, fr, sc, flux, width, placed, ew, feats, zs == strip)
            slot.drawn = key
        shown = [s for s in self.slots if s.strip is not None]
        unit = "Å" if st.unit == "A" else "nm"
        for k, slot in enumerate(shown):
            slot.fig.xaxis.axis_label = (f"λ ({unit}, {st.medium}, {st.frame} frame)"
                                         if k == len(shown) - 1 else None)
        self.glyphs = set().union(*(s.glyphs for s in shown)) if shown else set()

    def raw_flux_words(self) -> str:
        """The y words of raw flux: its unit from the star's record when known."""
        u = self.vm.record().get("flux_unit")
        return f"flux ({u})" if u else "flux (as recorded)"

    def draw_slot(self, slot, strip, lo, hi, s0, s1, fr, sc, flux, width, placed, ew, feats, focused):
        """Fill one strip figure: LOD data for [lo, hi] (displayed Å), markers, ranges."""
        st = self.vm.state
        stored = fr.from_display_A(np.array([lo, hi]))
        w = self.vm.data.window(st.star, strip, float(stored[0]), float(stored[1]), 2 * width, flux=flux)
        x = (fr.to_display_A(np.asarray(w["wavelength"], dtype=np.float64)) / sc).astype(np.float32)
        slot.src.data = spectrum_columns(x, np.asarray(w["flux"], dtype=np.float32), int(w.get("level", 0)))
        slot.level = int(w.get("level", 0))
        xr_ = slot.fig.x_range
        xr_.update(bounds=None)
        xr_.update(start=lo / sc, end=hi / sc, reset_start=s0 / sc, reset_end=s1 / sc,
                   bounds=(s0 / sc, s1 / sc))
        y0, y1 = flux_axis(w["flux"], flux == "norm", st.yaxis)
        slot.fig.y_range.update(start=y0, end=y1, reset_start=y0, reset_end=y1)
        slot.fig.outline_line_color = PALETTE["focus"] if focused else None
        slot.number.text = f"strip {strip + 1}"
        slot.fig.yaxis.axis_label = "normalised flux" if flux == "norm" else self.raw_flux_words()
        slot.fig.yaxis.axis_label_text_font_size = "9px"
        slot.fig.yaxis.axis_label_text_font_style = "normal"
        m = markers.visible(placed, lo, hi, st.lines, st.strength, st.medium, width, ew=ew)
        m = in_unit(m, sc, st.medium)
        m["colour"] = [PALETTE["telluric"] if t else PALETTE["stellar"] for t in m["telluric"]]
        slot.msrc.data = m
        slot.glyphs = {"envelope" if slot.level > 0 else "spectrum"}
        slot.glyphs |= {"telluric" if t else "stellar" for t in m["telluric"]}
        fd = {"x": [], "y": [], "species": [], "rest": [], "ew": [], "colour": []}
        if feats is not None and "wavelength_A" in feats:
            fx = fr.to_display_A(feats["wavelength_A"].to_numpy(dtype=float))
            inside = (fx >= lo) & (fx <= hi)
            sub = feats[inside]
            sp = sub["species"].astype(str).tolist() if "species" in sub else [""] * len(sub)
            un = is_unexplained(sp, sub["kind"] if "kind" in sub else [""] * len(sub))
            unit = "Å" if sc == 1.0 else "nm"
            fd = {
                "x": fx[inside] / sc,
                "y": [y1 - 0.03 * (y1 - y0)] * len(sub),
                "species": ["unexplained" if u else s for s, u in zip(sp, un, strict=True)],
                "rest": [f"{r / sc:.4f} {unit}" if np.isfinite(r) else "—"
                         for r in sub.get("rest_A", [np.nan] * len(sub))],
                "ew": [f"{e:.1f} mÅ" if np.isfinite(e) else "not measured"
                       for e in sub.get("ew_mA", [np.nan] * len(sub))],
                "colour": [PALETTE["feature_unexplained"] if u else PALETTE["feature_known"] for u in un],
            }
            slot.glyphs |= {"feature_unexplained" if u else "feature_known" for u in un}
        slot.fsrc.data = fd
        idx = [k for k, mk in enumerate(st.marks) if mk[1] >= lo and mk[0] <= hi]
        slot.mark_idx = idx
        slot.drawn_marks = {"x0": [st.marks[k][0] / sc for k in idx], "x1": [st.marks[k][1] / sc for k in idx],
                            "note": [st.marks[k][2] for k in idx], "i": [float(k) for k in idx]}
        slot.ksrc.data = dict(slot.drawn_marks)
        if idx:
            slot.glyphs.add("mark")
        if focused:
            slot.glyphs.add("focus")
        d = np.linspace(s0 - 1.0, s1 + 1.0, 33)
        vac = dataclasses.replace(fr, medium="vacuum").to_display_A(fr.from_display_A(d))
        air = dataclasses.replace(fr, medium="air").to_display_A(fr.from_display_A(d))
        slot.conv.data = {"d": d, "vac": vac, "air": air}

