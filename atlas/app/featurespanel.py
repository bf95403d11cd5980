"""The features panel: a sortable table of the star's found features, stepped through with
buttons or keys; choosing one opens a window around it and the link carries its number.

Rows come from the store's ``features`` group (``atlas.store``): wavelength, species or
"unexplained" (a feature nothing in the line list explains; older atlases say
"unidentified"), depth, equivalent width ± error, significance.  The link parameter
``feature`` is the row's number in wavelength order (-1 = none).
"""

from __future__ import annotations

import numpy as np
import panel as pn
from bokeh.models import ColumnDataSource, DataTable, NumberFormatter, TableColumn

from atlas.app import compare as cmpmod
from atlas.app.frames import scale
from atlas.physics.constants import C_KMS

#: The view parameters the table shows.
WATCHES = ("star", "feature", "frame", "medium", "unit")
#: Half-width of the window opened around a chosen feature, km/s.
FEATURE_KMS = 60.0
#: Words for a feature nothing explains (the second is what older atlases wrote).
UNEXPLAINED = ("unexplained", "unidentified")
COLUMNS = ("i", "wave", "species", "depth", "ew", "ew_err", "significance")


def is_unexplained(species, kind) -> np.ndarray:
    """True where a feature has no species, or its kind says nothing explains it."""
    sp = np.asarray([str(s or "").strip() for s in species])
    kd = np.asarray([str(k or "").strip().lower() for k in kind])
    return (sp == "") | np.isin(kd, UNEXPLAINED)


def feature_depths(data, star_id: str, waves_A: np.ndarray) -> np.ndarray:
    """Depth 1 − min/F_c of each feature in the normalised flux (real samples of its strip),
    against a local pseudo-continuum (:func:`atlas.app.compare.line_depths`)."""
    out = np.full(waves_A.size, np.nan)
    lo_b, hi_b = data.strip_bounds(star_id)
    strip_of = np.searchsorted(np.asarray(lo_b), waves_A, side="right") - 1
    for s in np.unique(strip_of[strip_of >= 0]):
        here = np.nonzero(strip_of == s)[0]
        w = data.window(star_id, int(s), float(lo_b[s]), float(hi_b[s]), 1 << 22, flux="norm")
        x = np.asarray(w["wavelength"], dtype=np.float64)
        y = np.asarray(w["flux"], dtype=np.float64)
        if x.size < 3:
            continue
        spacing = float(np.median(np.diff(x)))
        c = waves_A[here]
        out[here] = cmpmod.line_depths(x, y, c, cmpmod.depth_half_width(c, spacing),
                                       cmpmod.depth_half_width(c, spacing, kms=60.0))
    return out


class FeaturesPanel:
    def __init__(self, vm):
        self.vm = vm
        self._rows_key = None
        self._table = None  # the star's features in wavelength order (pandas), with depth
        self.src = ColumnDataSource({k: [] for k in COLUMNS}, name="features")
        unit_fmt = NumberFormatter(format="0.000")
        self.table = DataTable(
            source=self.src, name="features-table", sortable=True, selectable=True,
            index_position=None, height=210, sizing_mode="stretch_width",
            columns=[
                TableColumn(field="wave", title="wavelength", formatter=unit_fmt),
                TableColumn(field="species", title="species"),
                TableColumn(field="depth", title="depth", formatter=NumberFormatter(format="0.000")),
                TableColumn(field="ew", title="EW (mÅ)", formatter=NumberFormatter(format="0.0")),
                TableColumn(field="ew_err", title="± (mÅ)", formatter=NumberFormatter(format="0.0")),
                TableColumn(field="significance", title="signif. (σ)",
                            formatter=NumberFormatter(format="0.0")),
            ])
        self.src.selected.on_change("indices", lambda attr, old, new: self.on_pick(new))
        self.w_only = pn.widgets.Checkbox(label="unexplained only", value=False, margin=(4, 10))
        self.w_only.param.watch(lambda e: self.update(), "value")
        b = dict(width=96, color="default", margin=(4, 2))
        self.w_prev = pn.widgets.Button(label="◀ feature", description="previous feature (Shift + F)", **b)
        self.w_next = pn.widgets.Button(label="feature ▶", description="next feature (F)", **b)
        self.w_prev.on_click(lambda e: self.step(-1))
        self.w_next.on_click(lambda e: self.step(1))
        self.title = pn.pane.HTML("", margin=(4, 8), name="features-title")
        self.box = pn.Column(pn.Row(self.title, self.w_only, self.w_prev, self.w_next, margin=0),
                             pn.pane.Bokeh(self.table, sizing_mode="stretch_width"),
                             sizing_mode="stretch_width", margin=(0, 0, 6, 0), visible=False)

    # ---------------------------------------------------------------- the table
    def features(self):
        """The star's features in wavelength order with ``depth`` and ``unexplained``, or None."""
        st = self.vm.state
        if self._table is not None and self._table[0] == st.star:
            return self._table[1]
        df = self.vm.data.features(st.star)
        if df is not None and len(df) and "wavelength_A" in df:
            df = df.sort_values("wavelength_A", ignore_index=True).copy()
            n = len(df)
            df["unexplained"] = is_unexplained(df["species"] if "species" in df else [""] * n,
                                               df["kind"] if "kind" in df else [""] * n)
            if "depth" not in df or not np.isfinite(df["depth"].to_numpy(float)).any():
                # atlases built before the features group stored each feature's depth
                df["depth"] = self.vm.data.cached(("feature_depths", st.star), lambda: feature_depths(
                    self.vm.data, st.star, df["wavelength_A"].to_numpy(float)))
        else:
            df = None
        self._table = (st.star, df)
        return df

    def shown(self) -> np.ndarray:
        """Row numbers the table lists (all, or the unexplained only), in wavelength order."""
        df = self.features()
        if df is None:
            return np.zeros(0, dtype=int)
        keep = df["unexplained"].to_numpy() if self.w_only.value else np.ones(len(df), bool)
        return np.nonzero(keep)[0]

    def update(self):
        st = self.vm.state
        df = self.features()
        self.box.visible = df is not None
        if df is None:
            return
        fr, sc = self.vm.frame(), scale(st.unit)
        key = (st.star, fr, st.unit, self.w_only.value)
        if key != self._rows_key:
            rows = self.shown()
            sub = df.iloc[rows]
            species = [("unexplained" if u else str(s)) for s, u in
                       zip(sub.get("species", [""] * len(sub)), sub["unexplained"], strict=True)]
            num = {k: sub[k].to_numpy(float) if k in sub else np.full(len(sub), np.nan)
                   for k in ("ew_mA", "ew_err_mA", "significance")}
            self.src.data = {"i": rows.tolist(),
                             "wave": (fr.to_display_A(sub["wavelength_A"].to_numpy(float)) / sc).tolist(),
                             "species": species, "depth": sub["depth"].tolist(),
                             "ew": num["ew_mA"].tolist(), "ew_err": num["ew_err_mA"].tolist(),
                             "significance": num["significance"].tolist()}
            self._rows_key = key
            unit = "Å" if st.unit == "A" else "nm"
            n_un = int(df["unexplained"].sum())
            self.title.object = (f"<b>Found features</b> · {len(df)} ({n_un} unexplained) · "
                                 f"wavelength in {unit}, {st.medium}, {st.frame} frame")
        rows = self.src.data["i"]
        want = [rows.index(st.feature)] if st.feature in rows else []
        if list(self.src.selected.indices) != want:
            self.src.selected.indices = want

    # ---------------------------------------------------------------- choosing
    def on_pick(self, indices):
        """A row clicked in the table (the browser's selection)."""
        rows = self.src.data["i"]
        if len(indices) != 1 or not (0 <= int(indices[0]) < len(rows)):
            return
        k = int(rows[int(indices[0])])
        if k != self.vm.state.feature:  # not the selection Python itself just showed
            self.choose(k)

    def choose(self, k: int):
        """Open a window of ±FEATURE_KMS around feature ``k`` and make it the chosen one."""
        df = self.features()
        if df is None or not (0 <= k < len(df)):
            return
        st, vm = self.vm.state, self.vm
        fr = vm.frame()
        target = float(fr.to_display_A(np.array([df["wavelength_A"].iloc[k]]))[0])
        strip = vm.strip_of_display(target, fr)
        if strip is None:
            return
        half = target * FEATURE_KMS / C_KMS
        s0, s1 = vm.strip_display_range(strip, fr)
        st.param.update(feature=int(k), page=strip // st.per_page + 1,
                        lo=max(s0, target - half), hi=min(s1, target + half))

    def step(self, d: int):
        """The next (d = 1) or previous (d = -1) feature the table lists."""
        rows = self.shown()
        if rows.size == 0:
            return
        cur = self.vm.state.feature
        if cur < 0:
            k = rows[0] if d > 0 else rows[-1]
        else:
            after = rows[rows > cur] if d > 0 else rows[rows < cur][::-1]
            if after.size == 0:
                return
            k = after[0]
        self.choose(int(k))
