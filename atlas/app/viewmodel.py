"""Values derived from the view state and the atlas: never stored, never sent to the URL.

:class:`ViewModel` answers what the panels ask (the star's record, its frame, the page's
strips, the zoomed strip, a strip's displayed range); each answer is computed from the
state's current values, so the panels never hold a copy that could drift from the link.
"""

from __future__ import annotations

import numpy as np
import param

from atlas.app.data import AtlasData
from atlas.app.frames import Frame
from atlas.app.state import ViewState


class ViewModel(param.Parameterized):
    """Derived values of one session's view (``param.depends`` names what each reads)."""

    state = param.ClassSelector(class_=ViewState, doc="the link parameters")
    data = param.ClassSelector(class_=AtlasData, doc="the atlas as the app reads it")

    def record(self) -> dict:
        return self.data.record(self.state.star)

    @param.depends("state.star", "state.frame", "state.medium")
    def frame(self) -> Frame:
        return Frame.of_record(self.state.frame, self.state.medium, self.record())

    @param.depends("state.compare", "state.frame", "state.medium")
    def compare_frame(self) -> Frame:
        return Frame.of_record(self.state.frame, self.state.medium, self.data.record(self.state.compare))

    @param.depends("state.star")
    def n_strips(self) -> int:
        return len(self.data.strip_bounds(self.state.star)[0])

    @param.depends("state.star", "state.per_page")
    def n_pages(self) -> int:
        return max(1, -(-self.n_strips() // self.state.per_page))

    @param.depends("state.star", "state.page", "state.per_page")
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

    @param.depends("state.star", "state.lo", "state.hi", "state.frame", "state.medium")
    def zoom_strip(self) -> int | None:
        """The strip holding the middle of the zoom window (None: no zoom)."""
        if self.state.lo is None or self.state.hi is None:
            return None
        return self.strip_of_display(0.5 * (self.state.lo + self.state.hi))

    def strip_display_range(self, strip: int, fr: Frame | None = None) -> tuple[float, float]:
        lo, hi = self.data.strip_bounds(self.state.star)
        d = (fr or self.frame()).to_display_A(np.array([lo[strip], hi[strip]]))
        return float(d[0]), float(d[1])

    @param.depends("state.star")
    def strip_width_kms(self) -> float | None:
        """The strips' velocity width (median over the star's strips), km/s."""
        from atlas.physics.constants import C_KMS

        lo, hi = (np.asarray(a, dtype=np.float64) for a in self.data.strip_bounds(self.state.star))
        ok = np.isfinite(lo) & np.isfinite(hi) & (lo > 0) & (hi > lo)
        return float(C_KMS * np.median(np.log(hi[ok] / lo[ok]))) if ok.any() else None

    def compare_window(self) -> tuple[float, float] | None:
        """The stretch compared (displayed Å): the zoom window, else the page's first strip."""
        st = self.state
        if st.lo is not None and st.hi is not None:
            return st.lo, st.hi
        strips = self.page_strips()
        return self.strip_display_range(strips[0]) if strips else None

    def frame_fallback(self) -> str:
        """What the chosen frame cannot do for this star ("" when nothing)."""
        rec = self.record()
        if self.state.frame == "barycentric" and rec.get("barycentric_kms") is None:
            return ("No barycentric correction is known for this star (the file lacked time, site or "
                    "coordinates): the barycentric frame equals the observed frame here.")
        if self.state.frame == "rest" and not self.frame().has_star_velocity():
            return "No radial velocity is measured for this star: the rest frame shows no RV shift."
        return ""

    def page_words(self) -> str:
        """``page 2 of 9 · strips 6–10 of 44 · focus: strip 7 · Å air, rest frame``."""
        st = self.state
        strips = self.page_strips()
        if not strips:
            return "no strips"
        zs = self.zoom_strip()
        extra = f" · focus: strip {zs + 1}" if zs is not None else ""
        unit = "Å" if st.unit == "A" else "nm"
        extra += f" · {unit} {st.medium}, {st.frame} frame"
        return (f"page <b>{st.page}</b> of {self.n_pages()} · strips "
                f"{strips[0] + 1}–{strips[-1] + 1} of {self.n_strips()}{extra}")
