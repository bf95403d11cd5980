"""Export a star's spectrum, or a region of it, as print pages (PDF) or one HTML file.

Two entry points, used by ``striae export`` and by the viewer's export button::

    export_pdf(atlas_path, star_id, out, lo=6540.0, hi=6600.0, frame="rest")
    export_html(atlas_path, None, out, view={"star": "vega", "lo": 6540, "hi": 6600})

Both take the view-state names the URL uses (``star``, ``lo``, ``hi``, ``frame``,
``medium``, ``unit``, ``flux``, ``lines``, ``strength``, ``marks``, ``per_page``,
``page``), either as keywords or as a ``view`` dict (keywords win).  ``lo``/``hi``
are Å in the displayed frame and medium, as in the URL, even when ``unit`` is ``nm``;
marks are ``[lo_A, hi_A, note]`` in the same frame and medium.

What is drawn
-------------
* ``lo``/``hi`` not given: the whole spectrum, one stored strip per drawn strip (the
  HTML export draws the strips of page ``page``).
* a region narrower than one strip: one strip showing just that region.
* a wider region: cut afresh into strips of the atlas's own strip width (equal
  velocity width), starting at ``lo``, so every strip has the same scale.

Data come from the atlas on disk (:mod:`atlas.store`) through the level-of-detail
window query (:func:`atlas.lod.window`), decimated to what the page needs, one strip
at a time.  Both writers write to a temporary file beside ``out`` and move it into
place with ``os.replace``: on any error nothing is left half-written.

User mistakes raise :class:`atlas.errors.InputError` naming the view-state parameter
(``star``, ``lo``/``hi``, ``per_page``, ...) or the output file.
"""

from __future__ import annotations

import math
import os
import tempfile
from collections.abc import Iterator, Mapping, Sequence
from dataclasses import dataclass, field, replace
from datetime import UTC, datetime
from pathlib import Path

import numpy as np

from atlas import __version__
from atlas.errors import InputError
from atlas.export_parts import LineMarker, MarkBand, PageText, StripData
from atlas.frames import Frame
from atlas.spectrum import finite_or_none
from atlas.view import FLUXES, FRAMES, MEDIA, UNITS, is_species, is_star_id

PAPERS = ("a4", "letter")

#: The view-state names an export understands (others, e.g. ``compare``, are ignored).
VIEW_KEYS = ("star", "lo", "hi", "frame", "medium", "unit", "flux", "lines", "strength",
             "marks", "per_page", "page")

MAX_MARKS = 50
MAX_NOTE = 80
#: The most strips one standalone HTML page holds (each is a plot of its own).
HTML_MAX_STRIPS = 40
#: Points per strip in the standalone HTML (min/max envelope bins when decimated).
HTML_POINTS = 4000


@dataclass(frozen=True)
class ExportView:
    """A validated view to export; wavelengths ``lo``/``hi`` in Å (display frame, medium)."""

    star: str
    lo: float | None = None
    hi: float | None = None
    frame: str = "observed"
    medium: str = "air"
    unit: str = "A"
    flux: str = "normalized"
    lines: tuple[str, ...] = ()  # species shown; empty = every species
    strength: int = 3  # weakest strength class shown (1 strongest .. 4 weak)
    markers: bool = True  # False: no line markers at all
    marks: tuple[tuple[float, float, str], ...] = field(default_factory=tuple)
    per_page: int = 6
    page: int = 1
    paper: str = "a4"


# --------------------------------------------------------------------------- view


def _choice(value, choices, where, aliases=None):
    s = str(value).strip()
    key = s.lower()
    aliases = {"normalised": "normalized", "norm": "normalized", "a": "A", "angstrom": "A",
               "å": "A", "vac": "vacuum", "bary": "barycentric", "obs": "observed",
               **(aliases or {})}
    key = aliases.get(key, key)
    if key not in choices:
        raise InputError(where, f"{s[:40]!r} is not one of {', '.join(choices)}")
    return key


def _number(value, where) -> float | None:
    if value is None or (isinstance(value, str) and value.strip().lower() in ("", "none", "null")):
        return None
    if isinstance(value, bool):
        raise InputError(where, f"{value!r} is not a number")
    try:
        x = float(value)
    except (TypeError, ValueError):
        raise InputError(where, f"{str(value)[:40]!r} is not a number") from None
    if not math.isfinite(x):
        raise InputError(where, f"{str(value)[:40]!r} is not a finite number")
    return x


def _whole(value, where, lo, hi) -> int:
    if isinstance(value, bool):
        raise InputError(where, f"{value!r} is not a whole number")
    try:
        f = float(value)
    except (TypeError, ValueError):
        raise InputError(where, f"{str(value)[:40]!r} is not a whole number") from None
    if not (math.isfinite(f) and f == int(f)):
        raise InputError(where, f"{str(value)[:40]!r} is not a whole number")
    n = int(f)
    if not lo <= n <= hi:
        raise InputError(where, f"must be from {lo} to {hi}, not {n}")
    return n


def _species(value) -> tuple[str, ...]:
    if value is None:
        return ()
    items = value.split(",") if isinstance(value, str) else list(value)
    out: list[str] = []
    for it in items:
        s = " ".join(str(it).split())
        if not s:
            continue
        if not is_species(s):
            raise InputError("lines", f"{s[:40]!r} is not a species name like 'Fe I' or 'TiO'")
        if s not in out:
            out.append(s)
    return tuple(out)


def _marks(value) -> tuple[tuple[float, float, str], ...]:
    if value is None:
        return ()
    if isinstance(value, (str, bytes)) or not isinstance(value, Sequence):
        raise InputError("marks", "must be a list of [lo, hi, note]")
    if len(value) > MAX_MARKS:
        raise InputError("marks", f"more than {MAX_MARKS} marks")
    out = []
    for it in value:
        if isinstance(it, Mapping):
            it = [it.get("lo"), it.get("hi"), it.get("note", "")]
        if isinstance(it, (str, bytes)) or not isinstance(it, Sequence) or len(it) not in (2, 3):
            raise InputError("marks", "each mark must be [lo, hi, note]")
        a, b = _number(it[0], "marks"), _number(it[1], "marks")
        if a is None or b is None or not 0 < a < b:
            raise InputError("marks", f"a mark needs 0 < lo < hi, not {it[0]!r}..{it[1]!r}")
        note = str(it[2]) if len(it) == 3 and it[2] is not None else ""
        note = " ".join("".join(ch if ch.isprintable() else " " for ch in note).split())
        if len(note) > MAX_NOTE:
            raise InputError("marks", f"a note may hold at most {MAX_NOTE} characters")
        out.append((a, b, note))
    return tuple(out)


def make_view(view: Mapping | None = None, **kw) -> ExportView:
    """Validate view-state values (a dict with the URL's names, plus keywords) into a view.

    Unknown keys of ``view`` (``compare``, ``ref``, ...) are ignored; ``None`` keyword
    values fall back to ``view`` and then to the defaults.  Raises ``InputError``
    naming the parameter for any unusable value.
    """
    raw = {k: v for k, v in dict(view or {}).items() if k in VIEW_KEYS or k in ("paper", "markers")}
    raw.update({k: v for k, v in kw.items() if v is not None})
    unknown = set(kw) - set(VIEW_KEYS) - {"paper", "markers"}
    if unknown:
        raise TypeError(f"unknown view parameters: {', '.join(sorted(unknown))}")
    star = raw.get("star")
    if star is None or str(star).strip() == "":
        raise InputError("star", "no star given")
    star = str(star).strip()
    if not is_star_id(star):
        raise InputError("star", f"{star[:40]!r} is not a star id (lower-case letters, digits, '-')")
    lo, hi = _number(raw.get("lo"), "lo"), _number(raw.get("hi"), "hi")
    if (lo is None) != (hi is None):
        raise InputError("lo/hi", "give both ends of the range or neither")
    if lo is not None and not lo < hi:
        raise InputError("lo/hi", f"the range must run from low to high, not {lo:g}..{hi:g}")
    if lo is not None and lo <= 0:
        raise InputError("lo/hi", f"wavelengths must be positive, not {lo:g}")
    out = ExportView(
        star=star,
        lo=lo,
        hi=hi,
        frame=_choice(raw.get("frame", "observed"), FRAMES, "frame"),
        medium=_choice(raw.get("medium", "air"), MEDIA, "medium"),
        unit=_choice(raw.get("unit", "A"), UNITS, "unit"),
        flux=_choice(raw.get("flux", "normalized"), FLUXES, "flux"),
        lines=_species(raw.get("lines")),
        strength=_whole(raw.get("strength", 3), "strength", 1, 4),
        markers=bool(raw.get("markers", True)),
        marks=_marks(raw.get("marks")),
        per_page=_whole(raw.get("per_page", 6), "per_page", 1, 100),
        page=_whole(raw.get("page", 1), "page", 1, 10_000_000),
        paper=_choice(raw.get("paper", "a4"), PAPERS, "paper"),
    )
    return out


# ------------------------------------------------------------------------- frames


#: The export's name for :class:`atlas.frames.Frame` (one implementation, shared with the app).
FrameMap = Frame


def frame_for(view: ExportView, record: Mapping) -> FrameMap:
    """The FrameMap of a view for a star record; InputError when the frame is unavailable."""
    fmap = Frame.of_record(view.frame, view.medium, record, view.unit)
    if view.frame == "barycentric" and fmap.bary_kms is None:
        raise InputError("frame", f"star {view.star!r} has no barycentric correction (its file "
                         "lacks time, site or coordinates); use frame observed")
    if view.frame == "rest" and not fmap.has_star_velocity():
        raise InputError("frame", f"star {view.star!r} has no measured radial velocity, so "
                         "there is no rest frame; use frame observed"
                         + (" or barycentric" if fmap.bary_kms is not None else ""))
    return fmap


# ------------------------------------------------------------------------- atlas


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


# ---------------------------------------------------------------------- page text


def _fmt(x, spec, suffix="") -> str | None:
    v = finite_or_none(x)
    return None if v is None else f"{v:{spec}}{suffix}"


def page_text(view: ExportView, star: _Star, fmap: FrameMap, lo_disp: float, hi_disp: float,
              n_markers_note: str | None = None) -> PageText:
    """The header, axis words and footer for every page of one export."""
    rec = star.record
    name = str(rec.get("name") or view.star)
    meas = []
    if rec.get("spectral_class"):
        meas.append(f"class {rec['spectral_class']}")
    if (t := _fmt(rec.get("teff_k"), ".0f", " K")) is not None:
        meas.append(f"Teff {t}")
    if fmap.rv_kms is not None:
        err = _fmt(rec.get("rv_err_kms"), ".2f")
        kind = "barycentric" if fmap.bary_kms is not None else "observed"
        meas.append(f"RV {fmap.rv_kms:+.2f}{' ± ' + err if err else ''} km/s ({kind})")
    else:
        meas.append("RV not measured")
    if fmap.bary_kms is not None:
        meas.append(f"barycentric correction {fmap.bary_kms:+.3f} km/s")
    if (s := _fmt(rec.get("snr"), ".0f")) is not None:
        meas.append(f"S/N {s}")
    unit = "nm" if fmap.unit == "nm" else "Å"
    digits = 3 if fmap.unit == "A" else 4
    header = [
        " · ".join(meas),
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


# ------------------------------------------------------------------ atomic write


def check_out(out, suffix: str):
    """Validate an output file path before any work: parent folder exists, writable.

    A binary file object (anything with ``write``, e.g. ``io.BytesIO``) is accepted as
    it is: the finished file's bytes are written to it in one call.
    """
    if hasattr(out, "write"):
        return out
    if out is None or str(out).strip() == "":
        raise InputError("out", "no output file given")
    p = Path(out)
    if p.is_dir():
        raise InputError(p, "is a folder; give a file name to write")
    parent = p.parent if str(p.parent) else Path(".")
    if not parent.is_dir():
        raise InputError(p, f"folder {os.fspath(parent)} does not exist")
    if not os.access(parent, os.W_OK | os.X_OK):
        raise InputError(p, f"cannot write in folder {os.fspath(parent)}")
    if p.exists() and not os.access(p, os.W_OK):
        raise InputError(p, "exists and cannot be overwritten")
    return p


class _Atomic:
    """A temporary file beside ``path``, moved into place only if the body succeeds.

    For a file object instead of a path, the temporary file lives in the system's
    temporary folder and its bytes are written to the object on success.
    """

    def __init__(self, path):
        self.path = path
        self.stream = None
        if hasattr(path, "write"):
            self.stream, self.path = path, Path(tempfile.gettempdir()) / "striae-export"

    def __enter__(self) -> str:
        try:
            fd, self.tmp = tempfile.mkstemp(prefix=f".{self.path.name}.", suffix=".part",
                                            dir=self.path.parent)
        except OSError as exc:
            raise InputError(self.path, f"cannot write: {exc.strerror or exc}") from None
        os.close(fd)
        return self.tmp

    def __exit__(self, exc_type, exc, tb):
        if exc_type is None and self.stream is not None:
            try:
                with open(self.tmp, "rb") as fh:
                    self.stream.write(fh.read())
            finally:
                _unlink(self.tmp)
            return False
        if exc_type is None:
            try:
                os.chmod(self.tmp, 0o644)
                os.replace(self.tmp, self.path)
            except OSError as e:
                _unlink(self.tmp)
                raise InputError(self.path, f"cannot write: {e.strerror or e}") from None
            return False
        _unlink(self.tmp)
        return False


def _unlink(path):
    try:
        os.unlink(path)
    except OSError:
        pass


# -------------------------------------------------------------------- public API


@dataclass
class Prepared:
    """Everything both writers need for one export, with strips fetched lazily."""

    view: ExportView
    star: _Star
    fmap: FrameMap
    pieces: list[Piece]
    markers: list[LineMarker]
    marks: list[MarkBand]
    text: PageText

    def strips(self, max_points: int) -> Iterator[StripData]:
        """The drawn strips in order, fetched one at a time."""
        for k, piece in enumerate(self.pieces):
            yield strip_data(self.star, piece, self.fmap, self.view.flux, max_points,
                             piece.label if self.view.lo is None else k + 1)


def prepare(atlas_path, view: ExportView, *, html_page: int | None = None,
            lines_path=None) -> Prepared:
    """Open the star, check the view against it, and plan the strips to draw."""
    star = _open_star(atlas_path, view.star)
    fmap = frame_for(view, star.record)
    extent = (finite_or_none(star.record.get("wavelength_min_A")),
              finite_or_none(star.record.get("wavelength_max_A")))
    pieces = plan_pieces(view, fmap, star.strip_min_A, star.strip_max_A, whole_page=html_page,
                         extent=extent)
    if not pieces:
        raise InputError("lo/hi", "the range holds no recorded samples (it falls in a gap)")
    lo_A = min(p.xlim_A[0] for p in pieces)
    hi_A = max(p.xlim_A[1] for p in pieces)
    markers = line_markers(view, fmap, lo_A, hi_A, lines_path)
    data_lo = max(min(p.lo_A for p in pieces), extent[0] or 0.0)
    data_hi = min(max(p.hi_A for p in pieces), extent[1] or math.inf)
    lo_d, hi_d = (float(v) for v in fmap.to_display([data_lo, data_hi]))
    text = page_text(view, star, fmap, lo_d, hi_d)
    return Prepared(view, star, fmap, pieces, markers, mark_bands(view, fmap), text)


def export_pdf(atlas_path, star_id: str | None = None, out=None, *, view: Mapping | None = None,
               lo=None, hi=None, frame=None, medium=None, unit=None, flux=None, lines=None,
               strength=None, marks=None, per_page=None, paper=None, markers=None,
               lines_path=None) -> dict:
    """Write print pages of stacked strips (A4 or Letter, portrait) to ``out`` (PDF).

    Returns a summary dict: ``out``, ``pages``, ``strips``.  ``lo``/``hi`` in Å in
    the displayed frame and medium; see the module docstring for the rest.
    """
    from atlas import export_pdf as pdfmod

    v = make_view(view, star=star_id, lo=lo, hi=hi, frame=frame, medium=medium, unit=unit,
                  flux=flux, lines=lines, strength=strength, marks=marks, per_page=per_page,
                  paper=paper, markers=markers)
    limit = pdfmod.max_per_page(v.paper)
    if v.per_page > limit:
        raise InputError("per_page", f"at most {limit} strips fit on one {v.paper.upper()} "
                         f"page, not {v.per_page}")
    path = check_out(out, ".pdf")
    prep = prepare(atlas_path, v, lines_path=lines_path)
    n_pages = math.ceil(len(prep.pieces) / v.per_page)
    max_points = int(pdfmod.strip_width_in(v.paper) * pdfmod.POINTS_PER_INCH)

    def pages() -> Iterator[pdfmod.PageSpec]:
        it = prep.strips(max_points)
        for k in range(n_pages):
            chunk = [s for _, s in zip(range(v.per_page), it, strict=False)]
            yield pdfmod.PageSpec(chunk, k + 1, n_pages)

    meta = {"Title": f"{prep.text.title}: {prep.text.header[1]}", "Creator": f"striae {__version__}"}
    with _Atomic(path) as tmp:
        written = pdfmod.write_pdf(tmp, pages(), lambda page: prep.text, prep.markers, prep.marks,
                                   paper=v.paper, per_page=v.per_page,
                                   normalized=v.flux == "normalized", metadata=meta)
    return {"out": _name(path), "pages": written, "strips": len(prep.pieces)}


def export_html(atlas_path, star_id: str | None = None, out=None, *, view: Mapping | None = None,
                lo=None, hi=None, frame=None, medium=None, unit=None, flux=None, lines=None,
                strength=None, marks=None, per_page=None, page=None, markers=None,
                lines_path=None) -> dict:
    """Write the view as one standalone HTML file (data and scripts inline, no server).

    With no range, the strips of page ``page`` (``per_page`` strips) are drawn; with a
    range, every strip of it (at most ``HTML_MAX_STRIPS``).  Returns ``out``, ``strips``.
    """
    from atlas import export_html as htmlmod

    v = make_view(view, star=star_id, lo=lo, hi=hi, frame=frame, medium=medium, unit=unit,
                  flux=flux, lines=lines, strength=strength, marks=marks, per_page=per_page,
                  page=page, markers=markers)
    path = check_out(out, ".html")
    prep = prepare(atlas_path, v, html_page=v.page if v.lo is None else None,
                   lines_path=lines_path)
    if len(prep.pieces) > HTML_MAX_STRIPS:
        raise InputError("lo/hi", f"the range covers {len(prep.pieces)} strips; one HTML page "
                         f"holds at most {HTML_MAX_STRIPS}: narrow the range or export a PDF")
    strips = list(prep.strips(HTML_POINTS))
    text = prep.text
    if v.lo is None:
        text = replace(text, notes=(f"page {v.page}: strips {prep.pieces[0].label}–"
                                    f"{prep.pieces[-1].label}",))
    html = htmlmod.render_html(strips, text, prep.markers, prep.marks,
                               normalized=v.flux == "normalized")
    with _Atomic(path) as tmp:
        with open(tmp, "w", encoding="utf-8") as fh:
            fh.write(html)
    return {"out": _name(path), "strips": len(strips)}


def _name(out) -> str | None:
    return None if hasattr(out, "write") else os.fspath(out)
