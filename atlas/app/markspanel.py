"""The marks panel: marked ranges with short notes, typed, drawn with the mouse, edited.

Marks live in the state's ``marks`` (Å in the displayed frame and medium); every change
goes through the same reader as a link (:func:`atlas.app.state.parse_marks`).
"""

from __future__ import annotations

import html
import math
from typing import TYPE_CHECKING

import numpy as np
import panel as pn

from atlas.app import markers
from atlas.app.frames import scale
from atlas.app.state import MAX_MARKS, parse_marks

if TYPE_CHECKING:
    from atlas.app.strippanel import Slot

#: The view parameters the marks panel shows.
WATCHES = ("star", "marks", "unit", "frame", "medium", "ref")


class MarksPanel:
    def __init__(self, vm, strips, note):
        self.vm = vm
        self.strips = strips
        self._note = note  # note(message): show a one-line notice
        self.w_add = pn.widgets.TextInput(label="Mark a range (from–to, then a note)",
                                               placeholder="6550-6575 Hα wing", sizing_mode="stretch_width",
                                               css_classes=["striae-mark-add"])
        self.w_add.param.watch(lambda e: self.add_text(e.new), "value")
        # then Shift + drag across a strip; drag a band to move it, click it and Backspace deletes
        self.w_mode = pn.widgets.Toggle(label="✎ mark with the mouse", value=False,
                                             sizing_mode="stretch_width")
        self.w_mode.param.watch(lambda e: self.strips.set_mark_mode(e.new), "value")
        self.w_pick = pn.widgets.Select(label="Marks", options={"(no marks)": -1}, value=-1,
                                             sizing_mode="stretch_width")
        self.w_pick.param.watch(lambda e: (self._show_note(), self.show_measured()), "value")
        self.w_note = pn.widgets.TextInput(label="Note of the chosen mark", max_length=80,
                                                sizing_mode="stretch_width")
        self.w_save = pn.widgets.Button(label="save note", width=90, margin=(4, 4))
        self.w_del = pn.widgets.Button(label="delete mark", width=90, margin=(4, 4))
        self.w_save.on_click(lambda e: self.edit(self.w_pick.value, note=self.w_note.value))
        self.w_del.on_click(lambda e: self.delete(self.w_pick.value))

        self.result = pn.pane.HTML("", sizing_mode="stretch_width", margin=(0, 10), name="mark-measured",
                                   styles={"font-size": "12px"})
        self.measured: dict | None = None  # the chosen mark's measurements (atlas.measure.marks)

    def widgets(self) -> list:
        return [self.w_add, self.w_mode, self.w_pick, self.result, self.w_note,
                pn.Row(self.w_save, self.w_del)]

    def measure(self, k: int) -> dict | None:
        """Measure mark ``k`` on the star's stored samples (None with a notice if it cannot be)."""
        from atlas.errors import InputError
        from atlas.measure.marks import measure_mark

        st, vm = self.vm.state, self.vm
        a, b, _ = st.marks[k]
        fr = vm.frame()
        lo, hi = (float(v) for v in fr.from_display_A(np.array([a, b])))
        ref_A, _ = self.strips._ref()
        try:
            return measure_mark(vm.data.atlas, st.star, lo, hi, to_display=fr.to_display_A,
                                ref_A=ref_A or None)
        except InputError as exc:
            self._note(f"mark {k + 1}: {exc.reason}", redraw=False)
            return None

    def add_text(self, text: str):
        """Add a typed mark such as ``6550-6575 Hα wing`` (axis unit unless one is given)."""
        if not text or not text.strip():
            return
        try:
            a, b, note = markers.parse_mark(text, self.vm.state.unit)
        except ValueError as exc:
            self._note(f"mark: {exc}")
            return
        self.add(a, b, note)
        self.w_add.value = ""

    def add(self, lo_A: float, hi_A: float, note: str = ""):
        """Add a marked range (displayed Å), cleaned by the URL rules."""
        marks = [list(m) for m in self.vm.state.marks]
        if len(marks) >= MAX_MARKS:
            self._note(f"mark: at most {MAX_MARKS} marks")
            return
        try:
            new = parse_marks([[lo_A, hi_A, note]])
        except ValueError as exc:
            self._note(str(exc))
            return
        if new[0] in marks:  # the same mark again (e.g. Enter and blur of one typed line)
            return
        self.vm.state.param.update(marks=marks + new)
        self.w_pick.value = len(self.vm.state.marks) - 1

    def edit(self, k, note: str | None = None, lo_A=None, hi_A=None):
        """Change one mark's note (plain text) or range."""
        marks = [list(m) for m in self.vm.state.marks]
        if k is None or not (0 <= int(k) < len(marks)):
            return
        k = int(k)
        m = marks[k]
        cand = [lo_A if lo_A is not None else m[0], hi_A if hi_A is not None else m[1],
                note if note is not None else m[2]]
        try:
            marks[k] = parse_marks([cand])[0]
        except ValueError as exc:
            self._note(str(exc))
            return
        self.vm.state.param.update(marks=marks)

    def delete(self, k):
        marks = [list(m) for m in self.vm.state.marks]
        if k is None or not (0 <= int(k) < len(marks)):
            return
        del marks[int(k)]
        self.vm.state.param.update(marks=marks)

    def on_edited(self, slot: Slot, new: dict):
        """Marks moved, added (Shift + drag) or deleted with the mark tool in one strip."""
        if new == slot.drawn_marks:  # the strip shows what Python drew: not an edit
            return
        st, sc = self.vm.state, scale(self.vm.state.unit)
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
            self._note(str(exc), redraw=False)
            out = [list(m) for m in st.marks]
        if out != [list(m) for m in st.marks]:
            st.param.update(marks=out)
        else:  # put the drawing back as it was
            slot.drawn = None
            self.strips.update()

    def _show_note(self):
        k = self.w_pick.value
        if k is not None and 0 <= int(k) < len(self.vm.state.marks):
            self.w_note.value = self.vm.state.marks[int(k)][2]
        else:
            self.w_note.value = ""

    def update(self):
        st = self.vm.state
        sc = scale(st.unit)
        unit = "Å" if st.unit == "A" else "nm"
        opts = {f"{k + 1}. {m[0] / sc:.3f}–{m[1] / sc:.3f} {unit}: {m[2] or '(no note)'}": k
                for k, m in enumerate(st.marks)} or {"(no marks)": -1}
        cur = self.w_pick.value
        self.w_pick.options = opts
        vals = list(opts.values())
        self.w_pick.value = cur if cur in vals else vals[-1]
        self._show_note()
        self.show_measured()

    def show_measured(self):
        """The chosen mark's EW ± error, depth, centroid, FWHM and velocity, under the list."""
        from atlas.measure.marks import mark_words

        st = self.vm.state
        k = self.w_pick.value
        if k is None or not (0 <= int(k) < len(st.marks)):
            self.measured, self.result.object = None, ""
            return
        self.measured = self.measure(int(k))
        words = mark_words(self.measured, st.unit) if self.measured else "cannot be measured here"
        ref = f" (v against {st.ref})" if st.ref and self.measured and self.measured["v_kms"] is not None else ""
        self.result.object = f"mark {int(k) + 1}: {html.escape(words)}{html.escape(ref)}"

