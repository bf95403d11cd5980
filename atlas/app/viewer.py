"""The viewer: one session's panels, composed and kept in step with one :class:`ViewState`.

The state holds only the link parameters; :class:`~atlas.app.viewmodel.ViewModel`
derives the rest.  Each panel lives in its own module and names the parameters it shows
(its ``WATCHES``): controls, overview, strips, comparison, marks and the star card.
One watcher on the state first reads the whole state with the link rules and the
consequences of a change (a window kept on the same stretch when the frame changes, the
page that keeps the first strip when the page size changes); if anything must change it
makes one corrected update and stops, and that update redraws.  Otherwise it redraws the
panels whose parameters changed, in one held document update.
"""

from __future__ import annotations

import html

import numpy as np
import panel as pn
from bokeh.models import Div

from atlas.app import (
    card,
    comparepanel,
    controls,
    featurespanel,
    legend,
    markspanel,
    overview,
    strippanel,
)
from atlas.app.data import AtlasData, line_list
from atlas.app.frames import Frame
from atlas.app.state import DEFAULTS, PER_PAGE_MAX, URL_PARAMS, ViewState, parse_query, parse_search
from atlas.app.viewmodel import ViewModel
from atlas.presentation import PALETTE
from atlas.store import DamagedStar

KEYS_HELP = ("Keys: ↓/→ next strip, ↑/← previous, PageDown/PageUp pages, Home/End, F / Shift + F next / "
             "previous found feature. Drag to pan, box "
             "tool or Ctrl + wheel to zoom; the reset tool shows the whole strip again. Marking with "
             "the mouse: Shift + drag across a strip adds a mark, drag a band to move it, click it and "
             "press Backspace to delete it.")


class Viewer:
    """One session's view of an atlas; ``layout`` is what the server shows."""

    def __init__(self, data: AtlasData, state: ViewState, notices: list[str] | None = None):
        self.data, self.state = data, state
        self.vm = ViewModel(state=state, data=data)
        self._notices = list(notices or [])
        self._width_pending = False
        self.location = None  # the session's pn.state.location, set by atlas.app.serve
        self.bridge = Div(text="", visible=False, name="striae-keys")
        self.bridge.on_change("tags", lambda attr, old, new: self.from_browser(list(new)))
        lines = line_list()
        self.notice = pn.pane.Alert("", alert_type="warning", visible=False, sizing_mode="stretch_width",
                                    margin=(0, 0, 4, 0))
        self.strips = strippanel.StripsPanel(self.vm, lines, max_slots=PER_PAGE_MAX, on_width=self.on_width,
                                             on_marks_edited=lambda slot, new: self.marks.on_edited(slot, new))
        self.marks = markspanel.MarksPanel(self.vm, self.strips, self.say)
        self.compare = comparepanel.ComparePanel(self.vm, lines, self.on_width)
        self.controls = controls.Controls(self.vm, lines, self.say, self.compare.choose)
        self.overview = overview.Overview(self.vm)
        self.card = card.Card(self.vm)
        self.features = featurespanel.FeaturesPanel(self.vm)
        self.legend = legend.Legend()
        self.panels = (
            (strippanel.WATCHES, self.strips.update), (overview.WATCHES, self.overview.update),
            (comparepanel.WATCHES, self.compare.update), (markspanel.WATCHES, self.marks.update),
            (card.WATCHES, self.card.update), (controls.WATCHES, self.controls.update),
            (featurespanel.WATCHES, self.features.update),
        )
        self.strips.ensure(state.per_page)
        zs = self.vm.zoom_strip()  # a link's zoom window wins over its page
        if zs is not None and zs not in self.vm.page_strips():
            state.page = zs // state.per_page + 1
        state.param.watch(self._on_state, list(URL_PARAMS))
        self.layout = self._build_layout()
        self.refresh()

    def _build_layout(self):
        c = self.controls
        # Two groups that wrap onto a second line on narrow windows (nothing is cut off).
        nav = pn.FlexBox(
            pn.Row(c.w_first, c.w_prev_page, c.w_prev_strip, c.w_next_strip, c.w_next_page, c.w_last,
                   c.page_label, margin=0),
            pn.Row(c.w_whole, c.w_pdf, c.w_html, c.w_copy, margin=0),
            flex_wrap="wrap", justify_content="space-between", align_items="center",
            sizing_mode="stretch_width", margin=0)
        main = pn.Column(
            nav, c.w_link, self.notice,
            pn.pane.Bokeh(self.strips.readout, sizing_mode="stretch_width", margin=(0, 4)),
            self.legend.pane,
            pn.pane.Bokeh(self.overview.fig, sizing_mode="stretch_width", margin=(0, 0, 4, 0)),
            self.features.box, self.compare.box, self.strips.column, pn.pane.Bokeh(self.bridge, visible=False),
            sizing_mode="stretch_width", margin=(0, 8),
        )
        muted = PALETTE["muted"]

        def label(t):
            return pn.pane.HTML(f'<div style="font-size:12px;color:{muted};margin-top:4px">{t}</div>',
                                margin=(0, 10))

        side = pn.Column(
            pn.pane.HTML(f'<div style="font:600 22px Georgia,serif;color:{PALETTE["ink"]}">Striae</div>'
                         f'<div style="font-size:11px;color:{muted}">{html.escape(str(self.data.path))}</div>',
                         margin=(6, 10)),
            c.w_star, self.card.pane, c.w_compare, c.w_jump,
            label("Frame"), c.w_frame, label("Wavelengths in"), c.w_medium, c.w_unit,
            label("Flux"), c.w_flux, label("Flux axis (Shift + wheel zooms it)"), c.w_yaxis, c.w_lines, c.w_strength, c.w_per_page,
            *self.marks.widgets(),
            pn.pane.HTML(f'<div style="font-size:11px;color:{muted}">{KEYS_HELP}</div>', margin=(6, 10)),
            width=290, styles={"background": "#f3efe4", "border-right": f"1px solid {PALETTE['rule']}"},
            scroll=True, sizing_mode="stretch_height",
        )
        return pn.Row(side, main, sizing_mode="stretch_both", styles={"background": "white"})

    # ----------------------------------------------------------------- notices
    def note(self, *msgs: str):
        """Queue notices for the next redraw."""
        self._notices.extend(m for m in msgs if m)

    def say(self, msg: str, redraw: bool = True):
        """Show a notice now (a gesture that changed no state), or with the next redraw."""
        self.note(msg)
        if redraw:
            self.refresh_notice()

    def refresh_notice(self):
        if self._notices:
            self.notice.object = " · ".join(html.escape(n) for n in self._notices[-4:])
            self.notice.visible = True
        else:
            self.notice.visible = False

    # ----------------------------------------------------------------- from the browser
    def from_browser(self, tags: list):
        """A message from the page: a key action, or ``["url", search]`` after Back/Forward."""
        if not tags:
            return
        if tags[0] == "url" and len(tags) > 1:
            self.restore_address(str(tags[1]))
        elif str(tags[0]) in ("feature+", "feature-"):
            self.features.step(1 if tags[0] == "feature+" else -1)
        else:
            self.controls.key(str(tags[0]))

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

    def on_url_error(self, mapped: dict):
        """Values from the URL that the parameters refused: validate them our way."""
        values, notices = parse_query(dict(mapped), self.data.strips_of())
        values = {k: v for k, v in values.items() if k in mapped}
        self.note(*notices)
        if values:
            self.state.param.update(**values)
        else:
            self.refresh_notice()

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

    # ----------------------------------------------------------------- the state
    def corrections(self, old: dict, changed: set) -> dict:
        """What the state must become after a change: values the link rules refuse put
        back (clamped ones clamped), and the consequences of frame, medium and page size."""
        st = self.state
        values, notices = parse_query({k: v for k, v in st.values().items() if v is not None},
                                      self.data.strips_of())
        fix = {}
        for k in URL_PARAMS:
            v = values.get(k) if k in ("lo", "hi") else values.get(k, old.get(k, getattr(st, k)))
            if getattr(st, k) != v:
                fix[k] = v
        if fix:
            self.note(*notices)
            return fix
        if changed & {"frame", "medium"} and (st.lo is not None or st.marks):
            rec = self.vm.record()
            before = Frame.of_record(old.get("frame", st.frame), old.get("medium", st.medium), rec)
            now = self.vm.frame()

            def move(a, b):
                x = now.to_display_A(before.from_display_A(np.array([a, b])))
                return round(float(x[0]), 6), round(float(x[1]), 6)

            if st.lo is not None and st.hi is not None:
                fix["lo"], fix["hi"] = move(st.lo, st.hi)
            if st.marks:
                fix["marks"] = [[*move(a, b), note] for a, b, note in st.marks]
        if "per_page" in changed:
            focus = self.vm.zoom_strip()
            first = (old.get("page", st.page) - 1) * old["per_page"] if focus is None else focus
            page = min(first // st.per_page + 1, self.vm.n_pages())
            if page != st.page:
                fix["page"] = page
        return fix

    def _on_state(self, *events):
        changed = {e.name for e in events}
        fix = self.corrections({e.name: e.old for e in events}, changed)
        if fix:
            # One corrected update (its own call of this watcher finds nothing left to
            # correct: converted windows and clamped pages read back unchanged), then the
            # panels of the first change too (panels whose drawing is unchanged send nothing).
            said = list(self._notices)
            self.state.param.update(**fix)
            self._notices = said + self._notices  # still shown after the second redraw
            changed |= set(fix)
        self.refresh(changed)

    def refresh(self, changed: set | None = None):
        """Redraw the panels showing a changed parameter (all when ``changed`` is None),
        in one held document update."""
        with pn.io.hold():
            for watches, update in self.panels:
                if changed is not None and not changed.intersection(watches):
                    continue
                try:
                    update()
                except DamagedStar as exc:  # say so; every other star stays readable
                    self.note(exc.message)
                    if update == self.strips.update:
                        for slot in self.strips.slots:
                            slot.fig.visible = False
            self.legend.show(self.strips.glyphs | self.overview.glyphs | self.compare.glyphs)
            self.refresh_notice()
        self._notices = []
