"""The controls: star, comparison, go to, frame, medium, unit, flux, line filters, page
size, page and strip steps, export and copy-link buttons.

Widgets only set the state; :meth:`Controls.update` puts the widgets that are not bound
to a parameter (star, compare, species) back in step with it.
"""

from __future__ import annotations

import io

import numpy as np
import panel as pn

from atlas.app import markers
from atlas.app.scripts import COPY_JS
from atlas.app.targets import common_target
from atlas.physics.constants import C_KMS
from atlas.presentation import PALETTE

JUMP_KMS = 150.0  # half-width of the window a go-to opens, km/s
#: The view parameters the controls show.
WATCHES = ("star", "compare", "lines", "page", "per_page", "lo", "hi", "frame", "medium", "unit")


class Controls:
    def __init__(self, vm, lines, note, choose_compare):
        self.vm = vm
        self._lines = lines
        self._note = note
        self.choose_compare = choose_compare
        st = vm.state
        names = {f"{r.get('name') or k} ({k})": k for k, r in self.vm.data.records.items()}
        self.w_star = pn.widgets.Select(label="Star", options=names, value=st.star or None,
                                        sizing_mode="stretch_width")
        self.w_star.param.watch(lambda e: self.choose_star(e.new), "value")
        cmp_names = {"(none)": ""} | names
        self.w_compare = pn.widgets.Select(label="Compare with", options=cmp_names,
                                           value=st.compare or "", sizing_mode="stretch_width")
        self.w_compare.param.watch(lambda e: self.choose_compare(e.new), "value")
        self.w_jump = pn.widgets.TextInput(label="Go to (wavelength or line)",
                                           placeholder="6563 · 656.3 nm · Na I 5890 · Hα · Mg b · G band",
                                           sizing_mode="stretch_width")
        self.w_jump.param.watch(lambda e: self.go_to(e.new), "value")
        self.w_frame = pn.widgets.RadioButtonGroup.from_param(st.param.frame,
                                                              color="light", sizing_mode="stretch_width")
        self.w_medium = pn.widgets.RadioButtonGroup.from_param(st.param.medium, color="light",
                                                               sizing_mode="stretch_width")
        self.w_unit = pn.widgets.RadioButtonGroup.from_param(st.param.unit, color="light",
                                                             sizing_mode="stretch_width")
        self.w_yaxis = pn.widgets.RadioButtonGroup.from_param(
            st.param.yaxis, color="light", sizing_mode="stretch_width",
            description="fit: the flux axis follows what each strip shows; fixed: 0 to 1.05 (normalised flux)")
        self.w_flux = pn.widgets.RadioButtonGroup.from_param(st.param.flux, color="light",
                                                             sizing_mode="stretch_width")
        species = sorted(set(self._lines["species"])) if self._lines is not None else []
        self.w_lines = pn.widgets.MultiChoice(label="Line species (empty = all)", options=species,
                                              value=[s for s in st.lines if s in species],
                                              sizing_mode="stretch_width")
        self.w_lines.param.watch(lambda e: self.vm.state.param.update(lines=list(e.new)), "value")
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
        self.page_label = pn.pane.HTML("", margin=(8, 8), styles={"font-size": "13px", "color": PALETTE["ink"]},
                                       css_classes=["page-label"], name="page-label")

    def update(self):
        st = self.vm.state
        if list(self.w_lines.value) != list(st.lines):
            self.w_lines.value = [s for s in st.lines if s in self.w_lines.options]
        if self.w_star.value != st.star:
            self.w_star.value = st.star
        if self.w_compare.value != st.compare:
            self.w_compare.value = st.compare
        self.page_label.object = self.vm.page_words()

    def key(self, action: str):
        """Step pages and strips (buttons and keys)."""
        st = self.vm.state
        n_pages = self.vm.n_pages()
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
        st, fr = self.vm.state, self.vm.frame()
        cur = self.vm.zoom_strip()
        strips = self.vm.page_strips()
        if cur is None:
            target = strips[0] if d > 0 else strips[-1]
            lo, hi = self.vm.strip_display_range(target, fr)
        else:
            target = cur + d
            if not (0 <= target < self.vm.n_strips()):
                return
            a0, _ = self.vm.strip_display_range(cur, fr)
            b0, b1 = self.vm.strip_display_range(target, fr)
            r = b0 / a0
            lo, hi = max(b0, st.lo * r), min(b1, st.hi * r)
            if hi - lo < 1e-3:
                lo, hi = b0, b1
        st.param.update(page=target // st.per_page + 1, lo=lo, hi=hi)

    def go_to(self, text: str):
        """Open a window around a typed wavelength or line (and make a line the velocity reference)."""
        if not text or not text.strip():
            return
        st = self.vm.state
        named = common_target(text)
        half_kms = JUMP_KMS
        if named is not None:
            text, half_kms = named[0], named[1] or JUMP_KMS
        try:
            species, w, unit = markers.parse_target(text)
        except ValueError as exc:
            self._note(f"go to: {exc}")
            return
        if w is not None:
            unit = unit or ("nm" if st.unit == "nm" and w < 2000 else "A")
            w = w * 10.0 if unit == "nm" else w
        fr = self.vm.frame()
        ref = st.ref
        if species:
            row = markers.find_line(self._lines, species, w, st.medium)
            if row is None:
                self._note(f"go to: no line {species!r} near {w} in the line list" if w else
                       f"go to: no species {species!r} in the line list")
                return
            target = float(fr.rest_vac_to_display_A(np.array([row["vacuum_A"]]), bool(row["telluric"]))[0])
            rest = row["air_A"] if st.medium == "air" else row["vacuum_A"]
            ref = f"{row['species']} {rest:.2f}"
        else:
            target = w
        strip = self.vm.strip_of_display(target, fr)
        if strip is None:
            self._note(f"go to: {target:.2f} Å ({st.medium}, {st.frame} frame) is outside this spectrum")
            return
        half = target * half_kms / C_KMS
        s0, s1 = self.vm.strip_display_range(strip, fr)
        st.param.update(page=strip // st.per_page + 1, lo=max(s0, target - half),
                        hi=min(s1, target + half), ref=ref)

    def choose_star(self, star_id):
        if star_id and star_id != self.vm.state.star:
            self.vm.state.param.update(star=star_id, page=1, lo=None, hi=None, compare="", feature=-1)

    def export_view(self) -> dict:
        """The current view as export arguments (``atlas.export``): the zoom window, or
        the strips of this page; per_page clamped to what one printed page holds."""
        from atlas.export import pdf as pdfmod

        st = self.vm.state
        view = {k: getattr(st, k) for k in ("star", "frame", "medium", "unit", "flux", "lines",
                                            "strength", "marks", "page")}
        view["per_page"] = min(st.per_page, pdfmod.max_per_page("a4"))
        if st.lo is not None and st.hi is not None:
            view["lo"], view["hi"] = st.lo, st.hi
        else:
            strips = self.vm.page_strips()
            fr = self.vm.frame()
            if strips:
                view["lo"] = self.vm.strip_display_range(strips[0], fr)[0]
                view["hi"] = self.vm.strip_display_range(strips[-1], fr)[1]
        return view

    def _export(self, kind: str):
        from atlas import export
        from atlas.errors import InputError

        buf = io.BytesIO()
        try:
            if kind == "pdf":
                export.export_pdf(self.vm.data.path, out=buf, view=self.export_view())
            else:
                export.export_html(self.vm.data.path, out=buf, view=self.export_view())
        except InputError as exc:
            self._note(f"export: {exc}")
            return None
        buf.seek(0)
        return buf

    def export_pdf_bytes(self):
        """PDF pages of the current view (for the download button)."""
        self.w_pdf.filename = f"{self.vm.state.star}.pdf"
        return self._export("pdf")

    def export_html_bytes(self):
        """A standalone HTML page of the current view (for the download button)."""
        self.w_html.filename = f"{self.vm.state.star}.html"
        return self._export("html")

