"""The viewer: one session's widgets and plots, all derived from a :class:`ViewState`.

Widgets only set the state; one watcher on the state redraws what changed, with the
Bokeh document held so each gesture reaches the browser as one update.  Each strip is
a Bokeh figure with a fixed ``Range1d``; a ``RangesUpdate`` event (the end of a pan or
zoom) sets ``lo``/``hi`` and the server answers with at most about two points per
pixel from :mod:`atlas.lod` (real samples when zoomed in far enough).
"""

from __future__ import annotations

import dataclasses
import html
import math

import numpy as np
import panel as pn
from bokeh.events import RangesUpdate, Reset, Tap
from bokeh.models import (
    BoxAnnotation,
    BoxEditTool,
    BoxZoomTool,
    ColumnDataSource,
    CustomJS,
    Div,
    HoverTool,
    LabelSet,
    PanTool,
    Range1d,
    ResetTool,
    WheelZoomTool,
)
from bokeh.plotting import figure

from atlas.app import compare as cmpmod
from atlas.app import markers
from atlas.app.data import AtlasData, line_list
from atlas.app.frames import Frame, scale
from atlas.app.state import (
    DEFAULTS,
    MAX_MARKS,
    PER_PAGE_MAX,
    URL_PARAMS,
    ViewState,
    parse_marks,
    parse_query,
    parse_search,
)
from atlas.physics.constants import C_KMS
from atlas.presentation import PALETTE, record_rows, y_limits
from atlas.store import DamagedStar

DEFAULT_PX = 1100  # plot width assumed before the browser reports it
JUMP_KMS = 150.0  # half-width of the window a go-to opens, km/s

# Our own palette: ink on warm paper, one accent for the focused strip.
INK = PALETTE["ink"]
PAPER = PALETTE["paper"]
RULE = PALETTE["rule"]
SPECTRUM = PALETTE["spectrum"]
STELLAR = PALETTE["stellar"]
TELLURIC = PALETTE["telluric"]
FOCUS = PALETTE["mark"]
FEATURE_ID = PALETTE["feature_known"]
FEATURE_UN = PALETTE["feature_unexplained"]
OVERVIEW = PALETTE["overview"]
SECOND = PALETTE["second"]
GROW = PALETTE["grow"]
FADE = PALETTE["fade"]

CSS = f"""
:host {{ --striae-ink: {INK}; }}
.striae-card table {{ border-collapse: collapse; font-size: 12.5px; width: 100%; }}
.striae-card td {{ padding: 2px 4px; border-bottom: 1px solid {RULE}; vertical-align: top; }}
.striae-card td:first-child {{ color: #5a6275; white-space: nowrap; }}
.striae-card .na {{ color: #9a9fab; font-style: italic; }}
.striae-swatch {{ display:inline-block; width: 44px; height: 18px; border-radius: 3px;
  border: 1px solid #00000033; vertical-align: middle; }}
"""

READOUT_JS = """
const x = cb_obj.x;
if (x == null || !isFinite(x)) { return; }
const m = meta.data;
const sc = m.scale[0];
const lam = x * sc;
function interp(xs, ys, v) {
  const n = xs.length;
  if (n == 0) { return NaN; }
  if (n == 1) { return ys[0] + (v - xs[0]); }
  let lo = 0, hi = n - 1;
  if (v <= xs[0]) { hi = 1; } else if (v >= xs[n - 1]) { lo = n - 2; } else {
    while (hi - lo > 1) { const mid = (lo + hi) >> 1; if (xs[mid] <= v) { lo = mid; } else { hi = mid; } }
  }
  const t = (v - xs[lo]) / (xs[hi] - xs[lo]);
  return ys[lo] + t * (ys[hi] - ys[lo]);
}
const vac = interp(conv.data.d, conv.data.vac, lam);
const air = interp(conv.data.d, conv.data.air, lam);
const xs = src.data.x, ys = src.data.y;
let f = '';
if (xs.length > 0) {
  let lo = 0, hi = xs.length - 1;
  while (hi - lo > 1) { const mid = (lo + hi) >> 1; if (xs[mid] <= x) { lo = mid; } else { hi = mid; } }
  const i = Math.abs(xs[lo] - x) <= Math.abs(xs[hi] - x) ? lo : hi;
  const y = ys[i];
  f = isFinite(y) ? ' · flux ' + (Math.abs(y) < 1e4 ? y.toFixed(3) : y.toExponential(3)) : ' · flux masked';
}
let v = '';
if (m.ref_A[0] > 0) {
  const r = lam / m.ref_A[0];
  const kms = C_KMS * (r * r - 1) / (r * r + 1);
  v = ' · v ' + (kms >= 0 ? '+' : '') + kms.toFixed(2) + ' km/s from ' + m.ref_name[0];
}
out.text = '<b>' + m.frame[0] + ' frame</b> · λ ' + air.toFixed(3) + ' Å air · ' +
  vac.toFixed(3) + ' Å vacuum' + v + f;
""".replace("C_KMS", repr(C_KMS))

KEYS_JS = """
if (window.__striae_keys) { window.removeEventListener('keydown', window.__striae_keys); }
const actions = {ArrowDown: 'strip+', ArrowRight: 'strip+', ArrowUp: 'strip-', ArrowLeft: 'strip-',
                 PageDown: 'page+', PageUp: 'page-', Home: 'first', End: 'last'};
window.__striae_keys = (e) => {
  const t = e.composedPath ? e.composedPath()[0] : e.target;
  if (t && (t.tagName === 'INPUT' || t.tagName === 'TEXTAREA' || t.tagName === 'SELECT' || t.isContentEditable)) { return; }
  if (e.altKey || e.ctrlKey || e.metaKey) { return; }
  const a = actions[e.key];
  if (!a) { return; }
  e.preventDefault();
  bridge.tags = [a, Date.now()];
};
window.addEventListener('keydown', window.__striae_keys);
// Back and Forward: send the address the browser went to; the server restores that view
if (window.__striae_pop) { window.removeEventListener('popstate', window.__striae_pop); }
window.__striae_pop = () => { bridge.tags = ['url', window.location.search.slice(0, 4000), Date.now()]; };
window.addEventListener('popstate', window.__striae_pop);
// The view then writes its address again: the same address replaces the history entry
// instead of adding one (which would drop every entry after it, so Forward would not work)
if (!history.__striae_same_url) {
  const push = history.pushState.bind(history);
  history.pushState = function (data, title, url) {
    if (url != null && new URL(url, window.location.href).href === window.location.href) {
      return history.replaceState(data, title, url);
    }
    return push(data, title, url);
  };
  history.__striae_same_url = true;
}
"""


COPY_JS = """
const url = window.location.href;
field.value = url;
field.visible = true;
function find(root) {
  for (const e of root.querySelectorAll('*')) {
    if (e.tagName === 'INPUT' && e.placeholder === 'link to this view') { return e; }
    if (e.shadowRoot) { const f = find(e.shadowRoot); if (f) { return f; } }
  }
  return null;
}
function pick() {
  const el = find(document);
  if (!el) { return false; }
  el.value = url; el.focus(); el.select();
  try { return document.execCommand('copy'); } catch (err) { return false; }
}
if (navigator.clipboard && window.isSecureContext) {
  navigator.clipboard.writeText(url).catch(() => setTimeout(pick, 80));
} else {
  // plain http: no clipboard API; show the link selected so Ctrl+C copies it
  setTimeout(pick, 80);
}
"""


def swatch_css(colour) -> str | None:
    """A CSS colour from a record's ``colour_srgb`` ([r, g, b] in 0..1 or 0..255, or #hex)."""
    if isinstance(colour, str) and len(colour) in (4, 7) and colour.startswith("#"):
        return colour if all(c in "0123456789abcdefABCDEF" for c in colour[1:]) else None
    if isinstance(colour, (list, tuple)) and len(colour) == 3:
        try:
            vals = [float(c) for c in colour]
        except (TypeError, ValueError):
            return None
        if not all(math.isfinite(c) for c in vals):
            return None
        if max(vals) <= 1.0:
            vals = [c * 255 for c in vals]
        r, g, b = (int(round(min(255, max(0, c)))) for c in vals)
        return f"#{r:02x}{g:02x}{b:02x}"
    return None


def star_card_html(rec: dict, frame_note: str = "") -> str:
    """The star card: name, class, Teff, RV, barycentric correction, S/N, R, colour, file."""
    colour = swatch_css(rec.get("colour_srgb"))
    sw = (f'<span class="striae-swatch" style="background:{colour}"></span> {colour}'
          if colour else '<span class="na">not measured</span>')
    na = '<span class="na">not measured</span>'
    rows = []
    for label, text in record_rows(rec):
        if label == "range (vacuum)" and text is None:
            text = "not measured"
        rows.append((label, html.escape(text) if text is not None else
                     ('<span class="na">unknown</span>' if label == "source file" else na)))
        if label == "resolving power":
            rows.append(("true colour", sw))
    body = "".join(f"<tr><td>{k}</td><td>{v}</td></tr>" for k, v in rows)
    note = f'<p style="color:#8a5a00;font-size:12px">{html.escape(frame_note)}</p>' if frame_note else ""
    return f'<div class="striae-card"><table>{body}</table>{note}</div>'


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

    def __init__(self, index: int, viewer: Viewer):
        self.index = index
        self.strip: int | None = None
        self.drawn = None
        z = np.zeros(0, np.float32)
        self.src = ColumnDataSource({"x": z, "y": z, "lo": z, "hi": z},
                                    name=f"spectrum-{index}")
        self.msrc = ColumnDataSource(markers._empty() | {"colour": []}, name=f"markers-{index}")
        self.fsrc = ColumnDataSource({"x": [], "y": [], "species": [], "rest": [], "ew": [], "colour": []})
        self.ksrc = ColumnDataSource({"x0": [], "x1": [], "note": [], "i": []}, name=f"marks-{index}")
        self.mark_idx: list[int] = []
        self.conv = ColumnDataSource({"d": [0.0, 1.0], "vac": [0.0, 1.0], "air": [0.0, 1.0]})
        fig = figure(
            height=118, sizing_mode="stretch_width", output_backend="webgl",
            x_range=Range1d(0, 1), y_range=Range1d(0, 1.2),
            tools="xpan", active_drag="xpan",
            toolbar_location="right", min_border_left=46, min_border_right=6,
            min_border_top=4, min_border_bottom=18, name=f"strip-{index}",
            background_fill_color=PAPER, border_fill_color="white",
        )
        fig.toolbar.logo = None
        # Ctrl + wheel zooms; the plain wheel keeps scrolling the page of strips.
        wheel = WheelZoomTool(dimensions="width", modifiers={"ctrl": True}, visible=False)
        fig.add_tools(wheel)
        fig.toolbar.active_scroll = wheel
        fig.grid.grid_line_color = RULE
        fig.xaxis.major_label_text_font_size = "10px"
        fig.yaxis.major_label_text_font_size = "9px"
        fig.yaxis.ticker.desired_num_ticks = 3
        fig.outline_line_width = 2
        fig.outline_line_color = None
        band = fig.vstrip(x0="x0", x1="x1", source=self.ksrc, fill_color=FOCUS, fill_alpha=0.22,
                          line_color=FOCUS, line_alpha=0.6, line_width=1)
        # Marks: pick the mark tool, Shift + drag to add, drag to move, click + Backspace to delete.
        # toolbar: pan, mark, box zoom, reset (hover and Ctrl + wheel work without buttons)
        self.box_edit = BoxEditTool(renderers=[band], empty_value=-1, description="mark a range "
                                    "(Shift + drag adds; click and Backspace deletes)")
        fig.add_tools(self.box_edit, BoxZoomTool(dimensions="width"), ResetTool())
        self.pan = fig.select_one({"type": PanTool})
        fig.add_layout(LabelSet(x="x0", y=-4, y_units="screen", text="note", source=self.ksrc,
                                text_font_size="10px", text_color="#6b4e00", x_offset=3,
                                text_baseline="bottom", background_fill_color="white",
                                background_fill_alpha=0.6))
        self.ksrc.on_change("data", lambda attr, old, new: viewer.on_marks_edited(self, new))
        mr = fig.vspan(x="x", source=self.msrc, line_color="colour", line_alpha=0.55, line_width=1)
        fig.add_layout(LabelSet(
            x="x", y=4, y_units="screen", text="label", source=self.msrc, text_font_size="9px",
            text_color="colour", angle=math.pi / 2, x_offset=-2, text_baseline="bottom",
            text_align="left",
        ))
        fig.varea(x="x", y1="lo", y2="hi", source=self.src, fill_color=SPECTRUM, fill_alpha=0.85)
        fig.line("x", "y", source=self.src, line_color=SPECTRUM, line_width=1.1)
        fr = fig.scatter("x", "y", source=self.fsrc, marker="inverted_triangle", size=7,
                         fill_color="colour", line_color=None)
        fig.add_tools(HoverTool(renderers=[mr], tooltips=[
            ("line", "@species"), ("rest air", "@air_A{0.000} Å"),
            ("rest vacuum", "@vacuum_A{0.000} Å"), ("strength", "@strength"),
            ("EW", "@ew")], point_policy="follow_mouse", visible=False))
        fig.add_tools(HoverTool(renderers=[fr], tooltips=[
            ("feature", "@species"), ("rest vacuum", "@rest"), ("EW", "@ew")], visible=False))
        fig.js_on_event("mousemove", CustomJS(
            args={"src": self.src, "conv": self.conv, "meta": viewer.meta, "out": viewer.readout},
            code=READOUT_JS))
        fig.on_event(RangesUpdate, lambda ev: viewer.on_range(self, ev))
        fig.on_event(Reset, lambda ev: viewer.on_reset(self))
        fig.on_change("inner_width", lambda attr, old, new: viewer.on_width())
        self.fig = fig


class Viewer:
    """One session's view of an atlas; ``layout`` is what the server shows."""

    def __init__(self, data: AtlasData, state: ViewState, notices: list[str] | None = None):
        self.data = data
        self.state = state
        self._notices = list(notices or [])
        self._lines = line_list()
        self._placed_key = None
        self._placed = None
        self._yrange: dict = {}
        self._busy = False
        self._width_pending = False
        self._cmp_window = None
        self._drawing = False
        self._cmp_key = None
        self.meta = ColumnDataSource({"scale": [1.0], "ref_A": [0.0], "ref_name": [""],
                                      "frame": ["observed"]})
        self.readout = Div(text="move the cursor over a strip for wavelength, velocity and flux",
                           sizing_mode="stretch_width", styles={"font-size": "12.5px", "color": INK},
                           name="readout")
        self.location = None  # the session's pn.state.location, set by atlas.app.serve
        self.bridge = Div(text="", visible=False, name="striae-keys")
        self.bridge.on_change("tags", lambda attr, old, new: self.from_browser(list(new)))
        self._build_widgets()
        self._build_overview()
        self.cmp_figs: list = []  # the comparison's plots are made when first needed
        self.cmp_title = pn.pane.HTML("", margin=(6, 4, 0, 4), styles={"font-size": "12.5px", "color": INK},
                                      name="compare-title")
        self.cmp_box = pn.Column(self.cmp_title, sizing_mode="stretch_width", visible=False,
                                 margin=(0, 0, 6, 0),
                                 styles={"border": f"1px solid {RULE}", "border-radius": "4px"})
        self.slots: list[Slot] = []
        self.strips = pn.Column(sizing_mode="stretch_width")
        self._ensure_slots(state.per_page)
        zs = self.zoom_strip()  # a link's zoom window wins over its page
        if zs is not None and zs not in self.page_strips():
            state.page = zs // state.per_page + 1
        self.state.param.watch(self._on_state, list(URL_PARAMS))
        self.layout = self._build_layout()
        self.refresh()

    # ----------------------------------------------------------------- building
    def _build_widgets(self):
        st = self.state
        names = {f"{r.get('name') or k} ({k})": k for k, r in self.data.records.items()}
        self.w_star = pn.widgets.Select(label="Star", options=names, value=st.star or None,
                                        sizing_mode="stretch_width")
        self.w_star.param.watch(lambda e: self.choose_star(e.new), "value")
        cmp_names = {"(none)": ""} | names
        self.w_compare = pn.widgets.Select(label="Compare with", options=cmp_names,
                                           value=st.compare or "", sizing_mode="stretch_width")
        self.w_compare.param.watch(lambda e: self.choose_compare(e.new), "value")
        self.w_jump = pn.widgets.TextInput(label="Go to (wavelength or line)",
                                           placeholder="6563 · 656.3 nm · Na I 5890 · H I",
                                           sizing_mode="stretch_width")
        self.w_jump.param.watch(lambda e: self.go_to(e.new), "value")
        self.w_frame = pn.widgets.RadioButtonGroup.from_param(st.param.frame,
                                                              color="light", sizing_mode="stretch_width")
        self.w_medium = pn.widgets.RadioButtonGroup.from_param(st.param.medium, color="light",
                                                               sizing_mode="stretch_width")
        self.w_unit = pn.widgets.RadioButtonGroup.from_param(st.param.unit, color="light",
                                                             sizing_mode="stretch_width")
        self.w_flux = pn.widgets.RadioButtonGroup.from_param(st.param.flux, color="light",
                                                             sizing_mode="stretch_width")
        species = sorted(set(self._lines["species"])) if self._lines is not None else []
        self.w_lines = pn.widgets.MultiChoice(label="Line species (empty = all)", options=species,
                                              value=[s for s in st.lines if s in species],
                                              sizing_mode="stretch_width")
        self.w_lines.param.watch(lambda e: self.state.param.update(lines=list(e.new)), "value")
        self.w_strength = pn.widgets.IntSlider.from_param(st.param.strength, label="Weakest line class shown",
                                                          sizing_mode="stretch_width")
        self.w_per_page = pn.widgets.IntSlider.from_param(st.param.per_page, label="Strips per page",
                                                          sizing_mode="stretch_width")
        self.w_copy = pn.widgets.Button(label="Copy link", color="primary", width=100,
                                        description="copy the address of this view", margin=(4, 4))
        self.w_link = pn.widgets.TextInput(value="", placeholder="link to this view", visible=False,
                                           sizing_mode="stretch_width", margin=(4, 4),
                                           css_classes=["striae-link"])
        self.w_copy.js_on_click(args={"field": self.w_link}, code=COPY_JS)
        self.w_pdf = pn.widgets.FileDownload(callback=self.export_pdf_bytes, filename="view.pdf",
                                             label="PDF", color="default", embed=False,
                                             width=64, margin=(4, 2), description="PDF pages of this view")
        self.w_html = pn.widgets.FileDownload(callback=self.export_html_bytes, filename="view.html",
                                              label="HTML", color="default",
                                              embed=False, width=70, margin=(4, 2),
                                              description="a standalone HTML page of this view (opens with no server)")
        self.w_mark_add = pn.widgets.TextInput(label="Mark a range (from–to, then a note)",
                                               placeholder="6550-6575 Hα wing", sizing_mode="stretch_width",
                                               css_classes=["striae-mark-add"])
        self.w_mark_add.param.watch(lambda e: self.add_mark_text(e.new), "value")
        # then Shift + drag across a strip; drag a band to move it, click it and Backspace deletes
        self.w_mark_mode = pn.widgets.Toggle(label="✎ mark with the mouse", value=False,
                                             sizing_mode="stretch_width")
        self.w_mark_mode.param.watch(lambda e: self.set_mark_mode(e.new), "value")
        self.w_mark_pick = pn.widgets.Select(label="Marks", options={"(no marks)": -1}, value=-1,
                                             sizing_mode="stretch_width")
        self.w_mark_pick.param.watch(lambda e: self._show_mark_note(), "value")
        self.w_mark_note = pn.widgets.TextInput(label="Note of the chosen mark", max_length=80,
                                                sizing_mode="stretch_width")
        self.w_mark_save = pn.widgets.Button(label="save note", width=90, margin=(4, 4))
        self.w_mark_del = pn.widgets.Button(label="delete mark", width=90, margin=(4, 4))
        self.w_mark_save.on_click(lambda e: self.edit_mark(self.w_mark_pick.value, note=self.w_mark_note.value))
        self.w_mark_del.on_click(lambda e: self.delete_mark(self.w_mark_pick.value))
        b = dict(width=62, color="default", margin=(4, 2))
        self.w_first = pn.widgets.Button(label="⇤ first", description="first page (Home)", **b)
        self.w_prev_page = pn.widgets.Button(label="◀ page", description="previous page (PageUp)", **b)
        self.w_prev_strip = pn.widgets.Button(label="↑ strip", description="previous strip (↑ or ←)", **b)
        self.w_next_strip = pn.widgets.Button(label="↓ strip", description="next strip (↓ or →)", **b)
        self.w_next_page = pn.widgets.Button(label="page ▶", description="next page (PageDown)", **b)
        self.w_last = pn.widgets.Button(label="last ⇥", description="last page (End)", **b)
        self.w_whole = pn.widgets.Button(label="whole strips", width=104, margin=(4, 4))
        for w, act in ((self.w_first, "first"), (self.w_prev_page, "page-"), (self.w_prev_strip, "strip-"),
                       (self.w_next_strip, "strip+"), (self.w_next_page, "page+"), (self.w_last, "last"),
                       (self.w_whole, "whole")):
            w.on_click(lambda e, a=act: self.key(a))
        self.page_label = pn.pane.HTML("", margin=(8, 8), styles={"font-size": "13px", "color": INK},
                                       css_classes=["page-label"], name="page-label")
        self.notice = pn.pane.Alert("", alert_type="warning", visible=False, sizing_mode="stretch_width",
                                    margin=(0, 0, 4, 0))
        self.card = pn.pane.HTML("", sizing_mode="stretch_width", stylesheets=[CSS])

    def _build_overview(self):
        self.ov_src = ColumnDataSource({"x": np.zeros(0, np.float32), "y": np.zeros(0, np.float32)})
        fig = figure(height=92, sizing_mode="stretch_width", tools="", toolbar_location=None,
                     x_range=Range1d(0, 1), y_range=Range1d(0, 1.2), name="overview",
                     background_fill_color="white", min_border_left=46, min_border_bottom=16,
                     min_border_top=16, output_backend="webgl")
        fig.title.text = "whole spectrum: click to go there"
        fig.title.text_font_size = "11px"
        fig.title.text_color = "#5a6275"
        fig.grid.visible = False
        fig.yaxis.visible = False
        fig.xaxis.major_label_text_font_size = "9px"
        fig.line("x", "y", source=self.ov_src, line_color=OVERVIEW, line_width=1)
        self.ov_page = BoxAnnotation(left=0, right=0, fill_color=SPECTRUM, fill_alpha=0.15,
                                     line_color=SPECTRUM, line_width=1)
        self.ov_zoom = BoxAnnotation(left=0, right=0, fill_color=FOCUS, fill_alpha=0.6, line_alpha=0)
        fig.add_layout(self.ov_page)
        fig.add_layout(self.ov_zoom)
        fig.on_event(Tap, self.on_overview_tap)
        self.overview_fig = fig

    def _build_compare(self):
        """Two stars one above the other on one linked wavelength axis, and their difference."""
        xr_ = Range1d(0, 1)
        self.cmp_a = ColumnDataSource({"x": np.zeros(0, np.float32), "y": np.zeros(0, np.float32)},
                                      name="compare-a")
        self.cmp_b = ColumnDataSource({"x": np.zeros(0, np.float32), "y": np.zeros(0, np.float32)},
                                      name="compare-b")
        self.cmp_d = ColumnDataSource({"x": np.zeros(0, np.float32), "y": np.zeros(0, np.float32)},
                                      name="compare-diff")
        self.cmp_l = ColumnDataSource({k: [] for k in ("x", "species", "da", "db", "dd", "colour",
                                                       "marker", "size", "label")}, name="compare-lines")
        self.cmp_k = ColumnDataSource({"x0": [], "x1": [], "note": []}, name="compare-marks")
        figs = []
        for name, src, colour, h in (("compare-fig-a", self.cmp_a, SPECTRUM, 120),
                                     ("compare-fig-b", self.cmp_b, SECOND, 120),
                                     ("compare-fig-diff", self.cmp_d, INK, 120)):
            fig = figure(height=h, sizing_mode="stretch_width", output_backend="webgl", x_range=xr_,
                         y_range=Range1d(0, 1.2) if name != "compare-fig-diff" else Range1d(-0.5, 0.5),
                         tools="xpan,xbox_zoom,reset", active_drag="xpan", toolbar_location="right",
                         min_border_left=46, min_border_right=6, min_border_top=18, min_border_bottom=18,
                         name=name, background_fill_color=PAPER, border_fill_color="white")
            fig.toolbar.logo = None
            wheel = WheelZoomTool(dimensions="width", modifiers={"ctrl": True})
            fig.add_tools(wheel)
            fig.toolbar.active_scroll = wheel
            fig.grid.grid_line_color = RULE
            fig.title.text_font_size = "11px"
            fig.xaxis.major_label_text_font_size = "10px"
            fig.yaxis.major_label_text_font_size = "9px"
            fig.yaxis.ticker.desired_num_ticks = 3
            fig.vstrip(x0="x0", x1="x1", source=self.cmp_k, fill_color=FOCUS, fill_alpha=0.22,
                       line_alpha=0)
            if name != "compare-fig-diff":
                fig.vspan(x="x", source=self.cmp_l, line_color="colour", line_alpha=0.5, line_width=1)
            else:
                fig.add_layout(LabelSet(x="x0", y=-4, y_units="screen", text="note", source=self.cmp_k,
                                        text_font_size="10px", text_color="#6b4e00", x_offset=3,
                                        text_baseline="bottom"))
            fig.line("x", "y", source=src, line_color=colour, line_width=1.1)
            fig.on_event(RangesUpdate, self.on_compare_range)
            fig.on_change("inner_width", lambda attr, old, new: self.on_width())
            figs.append(fig)
        d = figs[2]
        d.hspan(y=[0.0], line_color=OVERVIEW, line_dash="dashed", line_width=1)
        sc = d.scatter("x", "dd", source=self.cmp_l, marker="marker", size="size", fill_color="colour",
                       line_color=None, fill_alpha=0.9)
        d.add_layout(LabelSet(x="x", y="dd", text="label", source=self.cmp_l, text_font_size="9px",
                              text_color="colour", x_offset=4, y_offset=2))
        d.add_tools(HoverTool(renderers=[sc], tooltips=[
            ("line", "@species"), ("depth, first star", "@da{0.000}"),
            ("depth, second star", "@db{0.000}"), ("change", "@dd{+0.000}")]))
        self.cmp_figs = figs
        self.cmp_box.extend([pn.pane.Bokeh(f, sizing_mode="stretch_width", margin=(0, 0, 2, 0)) for f in figs])

    def _build_layout(self):
        # Two groups that wrap onto a second line on narrow windows (nothing is cut off).
        nav = pn.FlexBox(
            pn.Row(self.w_first, self.w_prev_page, self.w_prev_strip, self.w_next_strip,
                   self.w_next_page, self.w_last, self.page_label, margin=0),
            pn.Row(self.w_whole, self.w_pdf, self.w_html, self.w_copy, margin=0),
            flex_wrap="wrap", justify_content="space-between", align_items="center",
            sizing_mode="stretch_width", margin=0)
        main = pn.Column(
            nav, self.w_link, self.notice,
            pn.pane.Bokeh(self.readout, sizing_mode="stretch_width", margin=(0, 4)),
            pn.pane.Bokeh(self.overview_fig, sizing_mode="stretch_width", margin=(0, 0, 4, 0)),
            self.cmp_box, self.strips, pn.pane.Bokeh(self.bridge, visible=False),
            sizing_mode="stretch_width", margin=(0, 8),
        )

        def label(t):
            return pn.pane.HTML(f'<div style="font-size:12px;color:#5a6275;margin-top:4px">{t}</div>', margin=(0, 10))

        side = pn.Column(
            pn.pane.HTML(f'<div style="font:600 22px Georgia,serif;color:{INK}">Striae</div>'
                         f'<div style="font-size:11px;color:#5a6275">{html.escape(str(self.data.path))}</div>',
                         margin=(6, 10)),
            self.w_star, self.card, self.w_compare, self.w_jump,
            label("Frame"), self.w_frame, label("Wavelengths in"), self.w_medium, self.w_unit,
            label("Flux"), self.w_flux, self.w_lines, self.w_strength, self.w_per_page,
            self.w_mark_add, self.w_mark_mode, self.w_mark_pick, self.w_mark_note, pn.Row(self.w_mark_save, self.w_mark_del),
            pn.pane.HTML('<div style="font-size:11px;color:#5a6275">Keys: ↓/→ next strip, ↑/← previous,'
                         ' PageDown/PageUp pages, Home/End. Drag to pan, box tool or'
                         ' Ctrl + wheel to zoom; the reset tool shows the whole strip again.'
                         ' Marking with the mouse: Shift + drag across a strip adds a mark, drag a'
                         ' band to move it, click it and press Backspace to delete it.</div>', margin=(6, 10)),
            width=290, styles={"background": "#f3efe4", "border-right": f"1px solid {RULE}"},
            scroll=True, sizing_mode="stretch_height",
        )
        return pn.Row(side, main, sizing_mode="stretch_both", styles={"background": "white"})

    def _ensure_slots(self, n: int):
        """Strip figures are made when first needed (never more than PER_PAGE_MAX)."""
        new = []
        while len(self.slots) < min(n, PER_PAGE_MAX):
            slot = Slot(len(self.slots), self)
            if getattr(self, "w_mark_mode", None) is not None and self.w_mark_mode.value:
                slot.fig.toolbar.active_drag = slot.box_edit
            self.slots.append(slot)
            new.append(pn.pane.Bokeh(slot.fig, sizing_mode="stretch_width", margin=(0, 0, 2, 0)))
        if new:
            self.strips.extend(new)

    # ----------------------------------------------------------------- derived
    def record(self) -> dict:
        return self.data.record(self.state.star)

    def frame(self) -> Frame:
        rec = self.record()
        return Frame.of_record(self.state.frame, self.state.medium, rec)

    def n_strips(self) -> int:
        return len(self.data.strip_bounds(self.state.star)[0])

    def n_pages(self) -> int:
        return max(1, -(-self.n_strips() // self.state.per_page))

    def page_strips(self) -> list[int]:
        first = (self.state.page - 1) * self.state.per_page
        return [i for i in range(first, first + self.state.per_page) if i < self.n_strips()]

    def strip_of_display(self, wave_A: float, fr: Frame | None = None) -> int | None:
        """The strip holding a displayed wavelength (Å), or None."""
        fr = fr or self.frame()
        s = float(fr.from_display_A(wave_A))
        lo, hi = self.data.strip_bounds(self.state.star)
        inside = np.nonzero((lo <= s) & (s <= hi))[0]
        return int(inside[0]) if len(inside) else None

    def zoom_strip(self) -> int | None:
        if self.state.lo is None or self.state.hi is None:
            return None
        return self.strip_of_display(0.5 * (self.state.lo + self.state.hi))

    def strip_display_range(self, strip: int, fr: Frame) -> tuple[float, float]:
        lo, hi = self.data.strip_bounds(self.state.star)
        d = fr.to_display_A(np.array([lo[strip], hi[strip]]))
        return float(d[0]), float(d[1])

    # ----------------------------------------------------------------- gestures
    def note(self, *msgs: str):
        self._notices.extend(m for m in msgs if m)

    def choose_star(self, star_id):
        if star_id and star_id != self.state.star:
            self.state.param.update(star=star_id, page=1, lo=None, hi=None, compare="")

    def set_mark_mode(self, on: bool):
        """Mouse marking: make each strip's mark tool (or pan, when off) the active drag."""
        with pn.io.hold():
            for slot in self.slots:
                slot.fig.toolbar.active_drag = slot.box_edit if on else slot.pan

    def add_mark_text(self, text: str):
        """Add a typed mark such as ``6550-6575 Hα wing`` (axis unit unless one is given)."""
        if not text or not text.strip():
            return
        try:
            a, b, note = markers.parse_mark(text, self.state.unit)
        except ValueError as exc:
            self.note(f"mark: {exc}")
            self.refresh_notice()
            return
        self.add_mark(a, b, note)
        self.w_mark_add.value = ""

    def add_mark(self, lo_A: float, hi_A: float, note: str = ""):
        """Add a marked range (displayed Å), cleaned by the URL rules."""
        marks = [list(m) for m in self.state.marks]
        if len(marks) >= MAX_MARKS:
            self.note(f"mark: at most {MAX_MARKS} marks")
            self.refresh_notice()
            return
        try:
            new = parse_marks([[lo_A, hi_A, note]])
        except ValueError as exc:
            self.note(str(exc))
            self.refresh_notice()
            return
        if new[0] in marks:  # the same mark again (e.g. Enter and blur of one typed line)
            return
        self.state.param.update(marks=marks + new)
        self.w_mark_pick.value = len(self.state.marks) - 1

    def edit_mark(self, k, note: str | None = None, lo_A=None, hi_A=None):
        """Change one mark's note (plain text) or range."""
        marks = [list(m) for m in self.state.marks]
        if k is None or not (0 <= int(k) < len(marks)):
            return
        k = int(k)
        m = marks[k]
        cand = [lo_A if lo_A is not None else m[0], hi_A if hi_A is not None else m[1],
                note if note is not None else m[2]]
        try:
            marks[k] = parse_marks([cand])[0]
        except ValueError as exc:
            self.note(str(exc))
            self.refresh_notice()
            return
        self.state.param.update(marks=marks)

    def delete_mark(self, k):
        marks = [list(m) for m in self.state.marks]
        if k is None or not (0 <= int(k) < len(marks)):
            return
        del marks[int(k)]
        self.state.param.update(marks=marks)

    def on_marks_edited(self, slot: Slot, new: dict):
        """Marks moved, added (Shift + drag) or deleted with the mark tool in one strip."""
        if self._drawing:
            return
        st, sc = self.state, scale(self.state.unit)
        marks = [list(m) for m in st.marks]
        seen, added = set(), []
        for a, b, i in zip(new.get("x0", []), new.get("x1", []), new.get("i", []), strict=False):
            try:
                a, b = sorted((float(a) * sc, float(b) * sc))
                i = int(i) if i is not None and math.isfinite(float(i)) else -1
            except (TypeError, ValueError):
                continue
            if not (math.isfinite(a) and math.isfinite(b)) or b - a < 1e-3:
                continue
            if i in slot.mark_idx and i not in seen:
                marks[i][0:2] = [a, b]
                seen.add(i)
            else:
                added.append([a, b, ""])
        gone = set(slot.mark_idx) - seen
        out = [m for k, m in enumerate(marks) if k not in gone] + added
        try:
            out = parse_marks(out[:MAX_MARKS])
        except ValueError as exc:
            self.note(str(exc))
            out = [list(m) for m in st.marks]
        if out != [list(m) for m in st.marks]:
            st.param.update(marks=out)
        else:  # put the drawing back as it was
            slot.drawn = None
            self.update_strips()

    def _show_mark_note(self):
        k = self.w_mark_pick.value
        if k is not None and 0 <= int(k) < len(self.state.marks):
            self.w_mark_note.value = self.state.marks[int(k)][2]
        else:
            self.w_mark_note.value = ""

    def update_marks_widgets(self):
        st = self.state
        sc = scale(st.unit)
        unit = "Å" if st.unit == "A" else "nm"
        opts = {f"{k + 1}. {m[0] / sc:.3f}–{m[1] / sc:.3f} {unit}: {m[2] or '(no note)'}": k
                for k, m in enumerate(st.marks)} or {"(no marks)": -1}
        cur = self.w_mark_pick.value
        self.w_mark_pick.options = opts
        vals = list(opts.values())
        self.w_mark_pick.value = cur if cur in vals else vals[-1]
        self._show_mark_note()

    def export_view(self) -> dict:
        """The current view as export arguments (``atlas.export``): the zoom window, or
        the strips of this page; per_page clamped to what one printed page holds."""
        from atlas.export import pdf as pdfmod

        st = self.state
        view = {k: getattr(st, k) for k in ("star", "frame", "medium", "unit", "flux", "lines",
                                            "strength", "marks", "page")}
        view["per_page"] = min(st.per_page, pdfmod.max_per_page("a4"))
        if st.lo is not None and st.hi is not None:
            view["lo"], view["hi"] = st.lo, st.hi
        else:
            strips = self.page_strips()
            fr = self.frame()
            if strips:
                view["lo"] = self.strip_display_range(strips[0], fr)[0]
                view["hi"] = self.strip_display_range(strips[-1], fr)[1]
        return view

    def _export(self, kind: str):
        import io

        from atlas import export
        from atlas.errors import InputError

        buf = io.BytesIO()
        try:
            if kind == "pdf":
                export.export_pdf(self.data.path, out=buf, view=self.export_view())
            else:
                export.export_html(self.data.path, out=buf, view=self.export_view())
        except InputError as exc:
            self.note(f"export: {exc}")
            self.refresh_notice()
            return None
        buf.seek(0)
        return buf

    def export_pdf_bytes(self):
        """PDF pages of the current view (for the download button)."""
        self.w_pdf.filename = f"{self.state.star}.pdf"
        return self._export("pdf")

    def export_html_bytes(self):
        """A standalone HTML page of the current view (for the download button)."""
        self.w_html.filename = f"{self.state.star}.html"
        return self._export("html")

    def choose_compare(self, star_id):
        """Show a second star; the rest frame (each star through its own RV) by default."""
        star_id = star_id or ""
        if star_id == self.state.compare:
            return
        if star_id and self.state.frame == "observed":
            self.state.param.update(compare=star_id, frame="rest")
        else:
            self.state.param.update(compare=star_id)

    def on_compare_range(self, ev):
        """End of a pan or zoom in the comparison (the three plots share one x range)."""
        if not self.state.compare or ev.x0 is None or ev.x1 is None:
            return
        sc = scale(self.state.unit)
        x0, x1 = float(ev.x0) * sc, float(ev.x1) * sc
        if not (math.isfinite(x0) and math.isfinite(x1)) or x1 - x0 < 1e-3:
            return
        cur = (self.state.lo, self.state.hi)
        if cur[0] is not None and abs(cur[0] - x0) < 1e-6 and abs(cur[1] - x1) < 1e-6:
            return  # the same gesture reported by a linked plot
        if self._cmp_window is not None and abs(self._cmp_window[0] - x0) < 1e-6 \
                and abs(self._cmp_window[1] - x1) < 1e-6:
            return
        self.state.param.update(lo=x0, hi=x1)

    def from_browser(self, tags: list):
        """A message from the page: a key action, or ``["url", search]`` after Back/Forward."""
        if not tags:
            return
        if tags[0] == "url" and len(tags) > 1:
            self.restore_address(str(tags[1]))
        else:
            self.key(str(tags[0]))

    def restore_address(self, search: str):
        """Show the view an address describes (Back/Forward): every link parameter it
        leaves out goes back to its default; bad values are refused as in a link."""
        search = search[:4000]
        values, notices = parse_search(search, self.data.strips_of())
        self.note(*notices)
        loc = self.location
        if loc is None or not hasattr(loc, "_syncing"):
            self.state.param.update(**{**DEFAULTS, **values})
            return
        # The address is already the browser's: keep Panel's URL sync from writing a
        # re-serialised one (a new history entry would drop the ones after it), then
        # tell the page's location model the address it shows.
        loc._syncing = True
        try:
            self.state.param.update(**{**DEFAULTS, **values})
        finally:
            loc._syncing = False
        loc.search = search if search.startswith("?") or not search else "?" + search

    def key(self, action: str):
        """Step pages and strips (buttons and keys)."""
        st = self.state
        n_pages = self.n_pages()
        if action == "first":
            st.param.update(page=1, lo=None, hi=None)
        elif action == "last":
            st.param.update(page=n_pages, lo=None, hi=None)
        elif action in ("page+", "page-"):
            p = min(n_pages, max(1, st.page + (1 if action == "page+" else -1)))
            st.param.update(page=p, lo=None, hi=None)
        elif action == "whole":
            st.param.update(lo=None, hi=None)
        elif action in ("strip+", "strip-"):
            self.step_strip(1 if action == "strip+" else -1)

    def step_strip(self, d: int):
        """Move the focus (the zoom window) to the next or previous strip, keeping its
        position within the strip (strips have equal velocity width, so the window is
        scaled by the ratio of the strips' starts)."""
        st, fr = self.state, self.frame()
        cur = self.zoom_strip()
        strips = self.page_strips()
        if cur is None:
            target = strips[0] if d > 0 else strips[-1]
            lo, hi = self.strip_display_range(target, fr)
        else:
            target = cur + d
            if not (0 <= target < self.n_strips()):
                return
            a0, _ = self.strip_display_range(cur, fr)
            b0, b1 = self.strip_display_range(target, fr)
            r = b0 / a0
            lo, hi = max(b0, st.lo * r), min(b1, st.hi * r)
            if hi - lo < 1e-3:
                lo, hi = b0, b1
        st.param.update(page=target // st.per_page + 1, lo=lo, hi=hi)

    def go_to(self, text: str):
        """Open a window around a typed wavelength or line (and make a line the velocity reference)."""
        if not text or not text.strip():
            return
        st = self.state
        try:
            species, w, unit = markers.parse_target(text)
        except ValueError as exc:
            self.note(f"go to: {exc}")
            self.refresh_notice()
            return
        if w is not None:
            unit = unit or ("nm" if st.unit == "nm" and w < 2000 else "A")
            w = w * 10.0 if unit == "nm" else w
        fr = self.frame()
        ref = st.ref
        if species:
            row = markers.find_line(self._lines, species, w, st.medium)
            if row is None:
                self.note(f"go to: no line {species!r} near {w} in the line list" if w else
                          f"go to: no species {species!r} in the line list")
                self.refresh_notice()
                return
            target = float(fr.rest_vac_to_display_A(np.array([row["vacuum_A"]]), bool(row["telluric"]))[0])
            rest = row["air_A"] if st.medium == "air" else row["vacuum_A"]
            ref = f"{row['species']} {rest:.2f}"
        else:
            target = w
        strip = self.strip_of_display(target, fr)
        if strip is None:
            self.note(f"go to: {target:.2f} Å ({st.medium}, {st.frame} frame) is outside this spectrum")
            self.refresh_notice()
            return
        half = target * JUMP_KMS / C_KMS
        s0, s1 = self.strip_display_range(strip, fr)
        st.param.update(page=strip // st.per_page + 1, lo=max(s0, target - half),
                        hi=min(s1, target + half), ref=ref)

    def on_range(self, slot: Slot, ev):
        """End of a pan or zoom in one strip: the window becomes the state."""
        if slot.strip is None or ev.x0 is None or ev.x1 is None:
            return
        sc = scale(self.state.unit)
        x0, x1 = float(ev.x0) * sc, float(ev.x1) * sc
        if not (math.isfinite(x0) and math.isfinite(x1)) or x1 <= x0:
            return
        fr = self.frame()
        s0, s1 = self.strip_display_range(slot.strip, fr)
        x0, x1 = max(s0, x0), min(s1, x1)
        cur = (self.state.lo, self.state.hi)
        whole = (x1 - x0) >= 0.999 * (s1 - s0)
        if whole:
            if self.zoom_strip() == slot.strip or cur == (None, None):
                if cur != (None, None):
                    self.state.param.update(lo=None, hi=None)
            return
        if cur[0] is not None and abs(cur[0] - x0) < 1e-6 and abs(cur[1] - x1) < 1e-6:
            return
        self.state.param.update(lo=x0, hi=x1)

    def on_width(self):
        """The browser reported (new) plot widths: redraw once, with at most 2 points a pixel."""
        if self._width_pending:
            return
        self._width_pending = True

        def redraw():
            self._width_pending = False
            self.refresh()

        doc = pn.state.curdoc
        if doc is not None and doc.session_context is not None:
            doc.add_next_tick_callback(redraw)
        else:
            redraw()

    def on_reset(self, slot: Slot):
        if self.zoom_strip() == slot.strip:
            self.state.param.update(lo=None, hi=None)

    def on_overview_tap(self, ev):
        if ev.x is None:
            return
        strip = self.strip_of_display(float(ev.x) * scale(self.state.unit))
        if strip is None:
            return
        self.state.param.update(page=strip // self.state.per_page + 1, lo=None, hi=None)

    def on_url_error(self, mapped: dict):
        """Values from the URL that the parameters refused: validate them our way."""
        values, notices = parse_query({k: v for k, v in mapped.items()}, self.data.strips_of())
        values = {k: v for k, v in values.items() if k in mapped}
        self.note(*notices)
        if values:
            self.state.param.update(**values)
        else:
            self.refresh_notice()

    # ----------------------------------------------------------------- drawing
    def _validate(self, old: dict) -> bool:
        """Check the whole state with the URL rules (values may come from the URL sync);
        put back the previous value of anything refused, clamp the rest.  True if fixed."""
        st = self.state
        raw = {k: v for k, v in st.values().items() if v is not None}
        values, notices = parse_query(raw, self.data.strips_of())
        fix = {}
        for k in URL_PARAMS:
            if k in ("lo", "hi"):
                v = values.get(k)
            elif k in values:
                v = values[k]
            else:
                v = old.get(k, DEFAULTS[k])
            if getattr(st, k) != v:
                fix[k] = v
        if not fix:
            return False
        self.note(*notices)
        st.param.update(**fix)
        return True

    def _on_state(self, *events):
        if self._busy:
            return
        changed = {e.name for e in events}
        old = {e.name: e.old for e in events}
        st = self.state
        if self._validate(old):
            return  # the corrected update has redrawn the view
        # Keep the zoom window on the same stretch when the frame or medium changes.
        if changed & {"frame", "medium"} and st.lo is not None and st.hi is not None:
            rec = self.record()
            before = Frame.of_record(old.get("frame", st.frame), old.get("medium", st.medium), rec)
            stored = before.from_display_A(np.array([st.lo, st.hi]))
            lo, hi = (float(v) for v in self.frame().to_display_A(stored))
            self._busy = True
            try:
                st.param.update(lo=lo, hi=hi)
            finally:
                self._busy = False
        if changed & {"frame", "medium"} and st.marks:
            rec = self.record()
            before = Frame.of_record(old.get("frame", st.frame), old.get("medium", st.medium), rec)
            moved = []
            for a, b, note in st.marks:
                x = self.frame().to_display_A(before.from_display_A(np.array([a, b])))
                moved.append([round(float(x[0]), 6), round(float(x[1]), 6), note])
            self._busy = True
            try:
                st.param.update(marks=moved)
            finally:
                self._busy = False
        if "per_page" in changed:
            focus = self.zoom_strip()
            first = (old.get("page", st.page) - 1) * old["per_page"] if focus is None else focus
            self._busy = True
            try:
                st.param.update(page=min(first // st.per_page + 1, self.n_pages()))
            finally:
                self._busy = False
        if "lines" in changed and list(self.w_lines.value) != list(st.lines):
            self.w_lines.value = [s for s in st.lines if s in self.w_lines.options]
        if "star" in changed and self.w_star.value != st.star:
            self.w_star.value = st.star
        if self.w_compare.value != st.compare:
            self.w_compare.value = st.compare
        self.refresh(changed)

    def frame_fallback(self) -> str:
        rec = self.record()
        if self.state.frame == "barycentric" and rec.get("barycentric_kms") is None:
            return ("No barycentric correction is known for this star (the file lacked time, site or "
                    "coordinates): the barycentric frame equals the observed frame here.")
        if self.state.frame == "rest" and not self.frame().has_star_velocity():
            return "No radial velocity is measured for this star: the rest frame shows no RV shift."
        return ""

    def refresh_notice(self):
        if self._notices:
            self.notice.object = " · ".join(html.escape(n) for n in self._notices[-4:])
            self.notice.visible = True
        else:
            self.notice.visible = False

    def refresh(self, changed=None):
        """Make every view match the state (one held document update)."""
        with pn.io.hold():
            for update in (self.update_strips, self.update_overview, self.update_compare):
                try:
                    update()
                except DamagedStar as exc:  # say so; every other star stays readable
                    self.note(exc.message)
                    if update == self.update_strips:
                        for slot in self.slots:
                            slot.fig.visible = False
            self.update_marks_widgets()
            self.update_side()
            self.refresh_notice()
        self._notices = []

    def update_side(self):
        st = self.state
        self.card.object = star_card_html(self.record(), self.frame_fallback())
        strips = self.page_strips()
        zs = self.zoom_strip()
        extra = f" · focus: strip {zs + 1}" if zs is not None else ""
        unit = "Å" if st.unit == "A" else "nm"
        extra += f" · {unit} {st.medium}, {st.frame} frame"
        self.page_label.object = (f"page <b>{st.page}</b> of {self.n_pages()} · strips "
                                  f"{strips[0] + 1}–{strips[-1] + 1} of {self.n_strips()}{extra}"
                                  if strips else "no strips")

    def _ref(self):
        st = self.state
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
        key = (self.state.star, fr)
        if key != self._placed_key:
            self._placed = markers.place(self.data.star_lines(self.state.star), fr)
            self._placed_key = key
        return self._placed

    def _ew_map(self):
        df = self.data.features(self.state.star)
        if df is None or "species" not in df or "ew_mA" not in df or "rest_A" not in df:
            return None
        return {(s, round(float(r), 1)): float(e) for s, r, e in zip(df["species"], df["rest_A"], df["ew_mA"],
                                                                    strict=True)
                if s and np.isfinite(r) and np.isfinite(e)}

    def _y_range(self, strip: int, flux: str):
        key = (self.state.star, strip, flux)
        r = self._yrange.get(key)
        if r is None:
            lo_b, hi_b = self.data.strip_bounds(self.state.star)
            w = self.data.window(self.state.star, strip, lo_b[strip], hi_b[strip], 1024, flux=flux)
            r = y_limits(w["flux"], flux == "norm", room_above=0.06)
            self._yrange[key] = r
        return r

    def update_strips(self):
        st = self.state
        fr = self.frame()
        sc = scale(st.unit)
        flux = "norm" if st.flux == "normalized" else "raw"
        strips = self.page_strips()
        self._ensure_slots(len(strips))
        zs = self.zoom_strip()
        ref_A, ref_name = self._ref()
        self.meta.data = {"scale": [sc], "ref_A": [ref_A], "ref_name": [ref_name], "frame": [st.frame]}
        placed = self._placed_lines(fr)
        ew = self._ew_map()
        feats = self.data.features(st.star)
        for i, slot in enumerate(self.slots):
            strip = strips[i] if i < len(strips) else None
            slot.strip = strip
            visible = strip is not None
            if slot.fig.visible != visible:
                slot.fig.visible = visible
            if not visible:
                continue
            s0, s1 = self.strip_display_range(strip, fr)
            if zs == strip:
                lo, hi = max(s0, st.lo), min(s1, st.hi)
            else:
                lo, hi = s0, s1
            width = plot_width_px(slot.fig)
            key = (st.star, strip, round(lo, 6), round(hi, 6), fr, st.unit, flux, width,
                   tuple(st.lines), st.strength, ref_A, tuple(map(tuple, st.marks)), zs == strip)
            if key == slot.drawn:
                continue
            self.draw_slot(slot, strip, lo, hi, s0, s1, fr, sc, flux, width, placed, ew, feats, zs == strip)
            slot.drawn = key

    def draw_slot(self, slot, strip, lo, hi, s0, s1, fr, sc, flux, width, placed, ew, feats, focused):
        """Fill one strip figure: LOD data for [lo, hi] (displayed Å), markers, ranges."""
        st = self.state
        stored = fr.from_display_A(np.array([lo, hi]))
        w = self.data.window(st.star, strip, float(stored[0]), float(stored[1]), 2 * width, flux=flux)
        x = (fr.to_display_A(np.asarray(w["wavelength"], dtype=np.float64)) / sc).astype(np.float32)
        slot.src.data = spectrum_columns(x, np.asarray(w["flux"], dtype=np.float32), int(w.get("level", 0)))
        slot.level = int(w.get("level", 0))
        xr_ = slot.fig.x_range
        xr_.update(bounds=None)
        xr_.update(start=lo / sc, end=hi / sc, reset_start=s0 / sc, reset_end=s1 / sc,
                   bounds=(s0 / sc, s1 / sc))
        y0, y1 = self._y_range(strip, flux)
        slot.fig.y_range.update(start=y0, end=y1)
        slot.fig.outline_line_color = FOCUS if focused else None
        slot.fig.yaxis.axis_label = f"{strip + 1}"
        slot.fig.yaxis.axis_label_text_font_size = "10px"
        m = markers.visible(placed, lo, hi, st.lines, st.strength, st.medium, width, ew=ew)
        m["x"] = np.asarray(m["x"], dtype=np.float64) / sc
        m["colour"] = [TELLURIC if t else STELLAR for t in m["telluric"]]
        slot.msrc.data = m
        fd = {"x": [], "y": [], "species": [], "rest": [], "ew": [], "colour": []}
        if feats is not None and "wavelength_A" in feats:
            fx = fr.to_display_A(feats["wavelength_A"].to_numpy(dtype=float))
            inside = (fx >= lo) & (fx <= hi)
            sub = feats[inside]
            sp = sub["species"].astype(str).tolist() if "species" in sub else [""] * len(sub)
            fd = {
                "x": fx[inside] / sc,
                "y": [self._y_range(strip, flux)[1] * 0.97] * len(sub),
                "species": [s or "unidentified" for s in sp],
                "rest": [f"{r:.3f} Å" if np.isfinite(r) else "—" for r in sub.get("rest_A", [np.nan] * len(sub))],
                "ew": [f"{e:.1f} mÅ" if np.isfinite(e) else "not measured"
                       for e in sub.get("ew_mA", [np.nan] * len(sub))],
                "colour": [FEATURE_ID if s else FEATURE_UN for s in sp],
            }
        slot.fsrc.data = fd
        idx = [k for k, mk in enumerate(st.marks) if mk[1] >= lo and mk[0] <= hi]
        slot.mark_idx = idx
        self._drawing = True
        try:
            slot.ksrc.data = {"x0": [st.marks[k][0] / sc for k in idx], "x1": [st.marks[k][1] / sc for k in idx],
                              "note": [st.marks[k][2] for k in idx], "i": [float(k) for k in idx]}
        finally:
            self._drawing = False
        d = np.linspace(s0 - 1.0, s1 + 1.0, 33)
        vac = dataclasses.replace(fr, medium="vacuum").to_display_A(fr.from_display_A(d))
        air = dataclasses.replace(fr, medium="air").to_display_A(fr.from_display_A(d))
        slot.conv.data = {"d": d, "vac": vac, "air": air}
        slot.fig.xaxis.axis_label = None

    def update_overview(self):
        st = self.state
        fr = self.frame()
        sc = scale(st.unit)
        flux = "norm" if st.flux == "normalized" else "raw"
        key = (st.star, fr, st.unit, flux)
        if getattr(self, "_ov_key", None) != key:
            ov = self.data.overview(st.star, flux=flux)
            x = fr.to_display_A(ov["wavelength"]) / sc
            y = np.asarray(ov["flux"], dtype=np.float32)
            self.ov_src.data = {"x": x.astype(np.float32), "y": y}
            lo_b, hi_b = self.data.strip_bounds(st.star)
            full = fr.to_display_A(np.array([np.nanmin(lo_b), np.nanmax(hi_b)])) / sc
            self.overview_fig.x_range.update(start=float(full[0]), end=float(full[1]))
            fy = y[np.isfinite(y)]
            if len(fy):
                a, b = np.percentile(fy, [0.5, 99.9])
                pad = 0.05 * (b - a or 1)
                self.overview_fig.y_range.update(start=float(a - pad), end=float(b + pad))
            self._ov_key = key
        strips = self.page_strips()
        if strips:
            p0, _ = self.strip_display_range(strips[0], fr)
            _, p1 = self.strip_display_range(strips[-1], fr)
            self.ov_page.update(left=p0 / sc, right=p1 / sc)
        if st.lo is not None and self.zoom_strip() is not None:
            span = max(st.hi - st.lo, (self.overview_fig.x_range.end - self.overview_fig.x_range.start) * sc / 400)
            mid = 0.5 * (st.lo + st.hi)
            self.ov_zoom.update(left=(mid - span / 2) / sc, right=(mid + span / 2) / sc, visible=True)
        else:
            self.ov_zoom.visible = False


    # ----------------------------------------------------------------- compare
    def compare_frame(self) -> Frame:
        rec = self.data.record(self.state.compare)
        return Frame.of_record(self.state.frame, self.state.medium, rec)

    def compare_window(self) -> tuple[float, float] | None:
        """The stretch compared (displayed Å): the zoom window, else the page's first strip."""
        st = self.state
        if st.lo is not None and st.hi is not None:
            return st.lo, st.hi
        strips = self.page_strips()
        return self.strip_display_range(strips[0], self.frame()) if strips else None

    def update_compare(self):
        """Draw the comparison: both stars' normalised flux, their difference, line changes."""
        st = self.state
        if not st.compare or st.compare not in self.data.records:
            if self.cmp_box.visible:
                self.cmp_box.visible = False
            self._cmp_key = None
            return
        win = self.compare_window()
        if win is None:
            return
        if not self.cmp_figs:
            self._build_compare()
        lo, hi = win
        fa, fb = self.frame(), self.compare_frame()
        sc = scale(st.unit)
        width = plot_width_px(self.cmp_figs[0])
        key = (st.star, st.compare, round(lo, 6), round(hi, 6), fa, fb, st.unit, width,
               tuple(st.lines), st.strength, tuple(map(tuple, st.marks)))
        self.cmp_box.visible = True
        if key == self._cmp_key:
            return
        self._cmp_key = key
        self._cmp_window = (lo, hi)
        pts = 2 * width
        sa = fa.from_display_A(np.array([lo, hi]))
        sb = fb.from_display_A(np.array([lo, hi]))
        wa = self.data.span(st.star, float(sa[0]), float(sa[1]), pts)
        wb = self.data.span(st.compare, float(sb[0]), float(sb[1]), pts)
        xa, ya = fa.to_display_A(wa["wavelength"]), np.asarray(wa["flux"], np.float64)
        xb, yb = fb.to_display_A(wb["wavelength"]), np.asarray(wb["flux"], np.float64)
        self.cmp_a.data = {"x": (xa / sc).astype(np.float32), "y": ya.astype(np.float32)}
        self.cmp_b.data = {"x": (xb / sc).astype(np.float32), "y": yb.astype(np.float32)}
        grid = cmpmod.common_grid(xa, ya, xb, yb, width)
        self.cmp_d.data = {"x": grid["x"] / np.float32(sc), "y": grid["diff"]}
        self.cmp_l.data = self._compare_lines(lo, hi, fa, fb, xa, ya, xb, yb, sc)
        here = [m for m in st.marks if m[1] >= lo and m[0] <= hi]
        self.cmp_k.data = {"x0": [m[0] / sc for m in here], "x1": [m[1] / sc for m in here],
                           "note": [m[2] for m in here]}
        for f in self.cmp_figs:
            f.x_range.update(start=lo / sc, end=hi / sc)
        ys = np.concatenate([ya[np.isfinite(ya)], yb[np.isfinite(yb)]])
        if len(ys):
            a, b = min(float(np.min(ys)), 0.0) if float(np.min(ys)) < 0.2 else float(np.min(ys)), \
                max(float(np.max(ys)), 1.08)
            for f in self.cmp_figs[:2]:
                f.y_range.update(start=a - 0.05 * (b - a), end=b + 0.05 * (b - a))
        dd = np.concatenate([grid["diff"][np.isfinite(grid["diff"])],
                             np.asarray(self.cmp_l.data["dd"], np.float64)])
        m = max(0.05, float(np.max(np.abs(dd)))) * 1.15 if len(dd) else 0.5
        self.cmp_figs[2].y_range.update(start=-m, end=m)
        na = html.escape(str(self.record().get("name") or st.star))
        nb = html.escape(str(self.data.record(st.compare).get("name") or st.compare))
        n_grow = int(np.sum(np.asarray(self.cmp_l.data["dd"]) > 0))
        n_fade = len(self.cmp_l.data["dd"]) - n_grow
        unit = "Å" if st.unit == "A" else "nm"
        self.cmp_figs[0].title.text = f"first star: {self.record().get('name') or st.star} (normalised flux)"
        self.cmp_figs[1].title.text = (f"second star: {self.data.record(st.compare).get('name') or st.compare}"
                                       " (normalised flux)")
        self.cmp_figs[2].title.text = ("second − first: flux difference (line); line depth change "
                                       "(▲ deeper in the second star, ▼ shallower)")
        self.cmp_title.object = (
            f"<b>Comparing</b> {na} with {nb} · {lo / sc:.3f}–{hi / sc:.3f} {unit} ({st.medium}, "
            f"{st.frame} frame{', each star through its own RV' if st.frame == 'rest' else ''}) · "
            f'<span style="color:{GROW}">▲ {n_grow} lines deeper</span> · '
            f'<span style="color:{FADE}">▼ {n_fade} shallower</span> in the second star')

    def _compare_lines(self, lo, hi, fa, fb, xa, ya, xb, yb, sc) -> dict:
        """Stellar lines in the window whose depth differs between the two stars."""
        cols = {k: [] for k in ("x", "species", "da", "db", "dd", "colour", "marker", "size", "label")}
        lines = self._lines
        if lines is None or len(lines) == 0:
            return cols
        st = self.state
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
        cols["colour"] = [GROW if v > 0 else FADE for v in dd]
        cols["marker"] = ["triangle" if v > 0 else "inverted_triangle" for v in dd]
        cols["size"] = [float(min(18.0, 6.0 + 40.0 * abs(v))) for v in dd]
        cols["label"] = [str(s) if i in labelled else "" for i, s in enumerate(sp)]
        return cols
