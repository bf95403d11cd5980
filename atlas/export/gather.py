"""What an export reads and plans: the star, the strips to draw, markers, marks, page words.

Data come from the atlas on disk (:mod:`atlas.store`) through the level-of-detail window
query, decimated to what the page needs, one strip at a time.
"""

from __future__ import annotations

import math
import os
from dataclasses import dataclass
from datetime import UTC, datetime

import numpy as np

from atlas import __version__
from atlas.errors import InputError
from atlas.export.parts import LineMarker, MarkBand, PageText, StripData
from atlas.export.view import ExportView, FrameMap
from atlas.presentation import header_measurements


@dataclass
class _Star:
    """What the export reads of one star: its record, the catalog and its dataset."""

    record: dict
    catalog: dict
    ds: object  # xarray.Dataset (opened lazily by atlas.store)
    strip_min_A: np.ndarray
    strip_max_A: np.ndarray
    own: tuple[np.ndarray, np.ndarray] | None = None
    atlas: object = None  # the atlas.store.Atlas it came from (reads through it)

    def own_intervals(self) -> tuple[np.ndarray, np.ndarray]:
        """Each stored strip's own part (overlaps split at their middle), computed once."""
        if self.own is None:
            self.own = _own_intervals(self.strip_min_A, self.strip_max_A)
        return self.own


def _open_star(atlas_path, star_id: str) -> _Star:
    from atlas import store

    atlas = store.open_atlas(atlas_path)
    if star_id not in atlas.ids:
        ids = atlas.ids
        known = ", ".join(ids[:8]) + (", ..." if len(ids) > 8 else "")
        raise InputError("star", f"no star {star_id!r} in {os.fspath(atlas_path)} "
                         f"(stars: {known or 'none'})")
    record = dict(atlas.record(star_id))
    ds = atlas.star(star_id)
    smin, smax = (np.asarray(a, dtype=np.float64) for a in atlas.load(star_id, "strip_min_A", "strip_max_A"))
    return _Star(record, dict(atlas.catalog), ds, smin, smax, atlas=atlas)


def _window(star: _Star, strip: int, lo_A: float, hi_A: float, max_points: int, flux: str):
    """One strip's polyline between stored Å lo_A..hi_A: ``(wave_A, y, decimated)``.

    Real samples when few enough, else min/max envelopes (:func:`atlas.lod.window`).
    """
    from atlas import lod

    kind = "norm" if flux == "normalized" else "raw"
    if star.atlas is not None:
        w = star.atlas.window(star.record["id"], int(strip), lo_A, hi_A, max(2, int(max_points)), flux=kind)
    else:
        w = lod.window(star.ds, int(strip), lo_A, hi_A, max(2, int(max_points)), flux=kind)
    return (np.asarray(w["wavelength"], dtype=np.float64), np.asarray(w["flux"]),
            int(w.get("level", 0)) > 0)


# ------------------------------------------------------------------------ layout


@dataclass(frozen=True)
class Piece:
    """One drawn strip: stored Å interval of data, stored strips feeding it, and x limits."""

    lo_A: float  # stored Å (vacuum, observed)
    hi_A: float
    xlim_A: tuple[float, float]  # stored Å of the axis ends
    sources: tuple[int, ...]  # stored strip indices
    label: int  # number shown beside the strip (stored strips count from 1, as in the viewer)


def _own_intervals(smin: np.ndarray, smax: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Split the overlaps of neighbouring strips at their middle: each strip's own part."""
    lo, hi = smin.copy(), smax.copy()
    if smin.size > 1:
        overlap = smin[1:] < smax[:-1]
        mid = 0.5 * (smin[1:] + smax[:-1])
        hi[:-1] = np.where(overlap, mid, hi[:-1])
        lo[1:] = np.where(overlap, mid, lo[1:])
    return lo, hi


def plan_pieces(view: ExportView, fmap: FrameMap, smin: np.ndarray, smax: np.ndarray,
                *, whole_page: int | None = None,
                extent: tuple[float | None, float | None] = (None, None)) -> list[Piece]:
    """The strips to draw for a view (see the module docstring), in stored Å.

    ``whole_page``: with no range, draw only the stored strips of that page (HTML).
    ``extent``: the first and last sample's stored Å, when known (else strip edges).
    """
    ok = np.isfinite(smin) & np.isfinite(smax) & (smax > smin)
    idx = np.flatnonzero(ok)
    if idx.size == 0:
        raise InputError("star", f"star {view.star!r} has no strips with data")
    if view.lo is None:
        if whole_page is not None:
            n_pages = max(1, math.ceil(idx.size / view.per_page))
            if whole_page > n_pages:
                raise InputError("page", f"star {view.star!r} has {n_pages} page(s) of "
                                 f"{view.per_page} strips, not {whole_page}")
            idx = idx[(whole_page - 1) * view.per_page: whole_page * view.per_page]
        return [Piece(float(smin[i]), float(smax[i]), (float(smin[i]), float(smax[i])),
                      (int(i),), int(i) + 1) for i in idx]

    lo_A, hi_A = (float(v) for v in fmap.from_display_A([view.lo, view.hi]))
    first, last = float(smin[idx].min()), float(smax[idx].max())
    if extent[0] is not None and extent[1] is not None and extent[0] < extent[1]:
        first, last = max(first, extent[0]), min(last, extent[1])
    if hi_A <= first or lo_A >= last:
        a, b = fmap.to_display_A([first, last])
        raise InputError("lo/hi", f"{view.lo:g}..{view.hi:g} Å ({fmap.medium}, {fmap.frame} "
                         f"frame) lies outside the spectrum, {a:.3f}..{b:.3f} Å")
    lo_A, hi_A = max(lo_A, first), min(hi_A, last)
    ratio = float(np.median(smax[idx] / smin[idx]))
    own_lo, own_hi = _own_intervals(smin, smax)
    pieces = []
    a = lo_A
    n_wide = math.log(hi_A / lo_A) / math.log(ratio)
    if n_wide <= 1.0:
        edges = [(lo_A, hi_A, (lo_A, hi_A))]
    else:
        edges = []
        while a < hi_A * (1 - 1e-12):
            b = a * ratio
            edges.append((a, min(b, hi_A), (a, b)))
            a = b
    for a, b, xlim in edges:
        src = tuple(int(i) for i in idx[(own_hi[idx] > a) & (own_lo[idx] < b)])
        if not src:  # a gap between strips: nothing recorded here
            continue
        pieces.append(Piece(a, b, xlim, src, src[0]))
    return pieces


def strip_data(star: _Star, piece: Piece, fmap: FrameMap, flux: str, max_points: int,
               number: int) -> StripData:
    """Fetch one drawn strip (decimated to ``max_points`` bins) in display units."""
    own_lo, own_hi = star.own_intervals()
    if len(piece.sources) == 1:
        parts = [(piece.sources[0], piece.lo_A, piece.hi_A)]
    else:
        parts = [(i, max(piece.lo_A, own_lo[i]), min(piece.hi_A, own_hi[i]))
                 for i in piece.sources]
    waves, ys, dec = [], [], False
    width = piece.hi_A - piece.lo_A
    for i, a, b in parts:
        if b <= a:
            continue
        n = max(16, int(round(max_points * (b - a) / width)))
        w, y, d = _window(star, i, a, b, n, flux)
        if waves and w.size:  # break the line between stored strips (echelle orders may gap)
            waves.append(np.array([0.5 * (waves[-1][-1] + w[0]) if waves[-1].size else w[0]]))
            ys.append(np.array([np.nan], dtype=np.float32))
        waves.append(w)
        ys.append(y)
        dec = dec or d
    wave = np.concatenate(waves) if waves else np.zeros(0)
    y = np.concatenate(ys) if ys else np.zeros(0, dtype=np.float32)
    x = fmap.to_display(wave)
    xlim = tuple(float(v) for v in fmap.to_display(np.asarray(piece.xlim_A)))
    return StripData(number, x, y, xlim, decimated=dec)


# ------------------------------------------------------------------ line markers


def line_markers(view: ExportView, fmap: FrameMap, lo_A: float, hi_A: float,
                 lines_path=None) -> list[LineMarker]:
    """Line-list entries between stored Å lo_A..hi_A, placed in display units, sorted by x."""
    if not view.markers:
        return []
    from atlas.lines import load_lines

    table = load_lines(lines_path)
    species = table["species"].astype(str).str.strip()
    sel = np.ones(len(table), dtype=bool)
    if view.lines:
        wanted = set(view.lines)
        known = set(species)
        missing = sorted(w for w in wanted if w not in known)
        if missing:
            raise InputError("lines", f"no species {', '.join(map(repr, missing))} in the line list")
        sel &= species.isin(wanted).to_numpy()
    strength = table["strength"].to_numpy(dtype=np.float64)
    sel &= ~(strength > view.strength)
    tab = table[sel]
    if len(tab) == 0:
        return []
    vac = tab["vacuum_A"].to_numpy(dtype=np.float64)
    tell = tab["telluric"].astype(str).str.lower().isin(["true", "1", "yes"]).to_numpy()
    obs = fmap.line_obs_A(vac, tell)
    inside = (obs >= lo_A) & (obs <= hi_A)
    if not inside.any():
        return []
    x = fmap.to_display(obs[inside])
    rest_col = "air_A" if fmap.medium == "air" else "vacuum_A"
    rest = tab[rest_col].to_numpy(dtype=np.float64)[inside]
    rest = np.where(np.isfinite(rest), rest, vac[inside]) / fmap.scale
    sp = species[sel].to_numpy()[inside]
    st = np.nan_to_num(strength[sel][inside], nan=4.0)
    digits = 2 if fmap.unit == "A" else 3
    out = [LineMarker(float(x[i]), f"{sp[i]} {rest[i]:.{digits}f}", str(sp[i]), bool(tell[inside][i]),
                      int(st[i])) for i in range(x.size)]
    out.sort(key=lambda m: m.x)
    return out


def mark_bands(view: ExportView, fmap: FrameMap) -> list[MarkBand]:
    """The view's marks in display units (marks are Å in the display frame and medium)."""
    return [MarkBand(a / fmap.scale, b / fmap.scale, note) for a, b, note in view.marks]


#: Marks measured on an exported page (the rest are named as a count).
MEASURED_MARKS = 3


def mark_measurements(view: ExportView, star: _Star, fmap: FrameMap) -> tuple[str, ...]:
    """One line per mark (at most MEASURED_MARKS): its range and ``atlas.measure.marks``'s
    EW ± error, depth, centroid and FWHM (in the view's unit)."""
    from atlas.measure.marks import mark_words, measure_mark

    unit = "nm" if fmap.unit == "nm" else "Å"
    out = []
    for k, (a, b, note) in enumerate(view.marks[:MEASURED_MARKS]):
        lo, hi = (float(v) for v in fmap.from_display_A(np.array([a, b])))
        try:
            m = measure_mark(star.atlas, view.star, lo, hi, to_display=fmap.to_display_A)
            words = mark_words(m, fmap.unit)
        except InputError as exc:
            words = f"not measured ({exc.reason})"
        label = f" ({note})" if note else ""
        out.append(f"mark {k + 1}{label}, {a / fmap.scale:.4f}–{b / fmap.scale:.4f} {unit}: {words}")
    if len(view.marks) > MEASURED_MARKS:
        out.append(f"{len(view.marks) - MEASURED_MARKS} more mark(s) not measured here")
    return tuple(out)


def page_text(view: ExportView, star: _Star, fmap: FrameMap, lo_disp: float, hi_disp: float,
              n_markers_note: str | None = None) -> PageText:
    """The header, axis words and footer for every page of one export."""
    rec = star.record
    name = str(rec.get("name") or view.star)
    unit = "nm" if fmap.unit == "nm" else "Å"
    digits = 3 if fmap.unit == "A" else 4
    header = [
        header_measurements(rec, fmap.rv_kms, fmap.bary_kms),
        f"source: {rec.get('source') or 'unknown'} · range {lo_disp:.{digits}f}–{hi_disp:.{digits}f} "
        f"{unit} ({fmap.medium}, {fmap.frame} frame) · {view.flux} flux",
    ]
    placed = ("stellar lines placed by the star's RV, telluric lines in the observer's frame"
              if fmap.rv_kms is not None else
              "stellar lines at rest wavelengths (no RV measured), telluric lines in the observer's frame")
    if view.markers:
        header.append(placed + (f" · species: {', '.join(view.lines)}" if view.lines else "")
                      + (f" · {n_markers_note}" if n_markers_note else ""))
    built = star.catalog.get("built_utc") or "unknown time"
    tool = star.catalog.get("tool_version") or "unknown version"
    now = datetime.now(UTC).strftime("%Y-%m-%d %H:%M UTC")
    footer = (f"atlas built {built} with striae {tool} · exported {now} with striae "
              f"{__version__} · star id {view.star}")
    return PageText(
        title=name,
        header=tuple(header),
        x_label=fmap.words(),
        y_label=f"{view.flux} flux",
        footer=footer,
    )


