"""The app's only door to the atlas on disk: catalog, strips, windows, overview, lines.

Everything here is read-only and per process: a server process caches what it has
opened (keyed by the path and the catalog's modification time, so a rebuilt atlas is
picked up) and keeps nothing a session relies on.  The rest of the app never touches
Zarr; it calls :func:`open_view_atlas` and the methods of :class:`AtlasData`.
"""

from __future__ import annotations

import functools
import os
import threading
from pathlib import Path

import numpy as np

from atlas import store
from atlas.errors import InputError


def _check_atlas_path(path) -> str:
    """Local folders get plain messages; URLs (``memory://``, ``s3://``) go to atlas.store."""
    s = os.fspath(path)
    if "://" in s:
        return s
    p = Path(s)
    if not p.exists():
        raise InputError(s, "no such atlas folder")
    if not p.is_dir():
        raise InputError(s, "not a folder (an atlas is a folder holding atlas.json)")
    if not (p / "atlas.json").is_file():
        raise InputError(s, "not an atlas: no atlas.json in this folder")
    return str(p.resolve())


class AtlasData:
    """Read-only access to one atlas (one instance per process and path)."""

    def __init__(self, path):
        self.path = _check_atlas_path(path)
        self.atlas = store.open_atlas(self.path)
        self.catalog = self.atlas.catalog
        self.records = {r["id"]: r for r in self.atlas.stars}
        self._lock = threading.Lock()
        self._bounds: dict[str, tuple[np.ndarray, np.ndarray]] = {}
        self._overview: dict[tuple, dict] = {}
        self._memo: dict[tuple, object] = {}
        self._features: dict[str, object] = {}
        self._lines: dict[str, object] = {}

    # ------------------------------------------------------------------ catalog
    @property
    def star_ids(self) -> list[str]:
        return list(self.records)

    def strips_of(self) -> dict[str, int]:
        """Number of strips of each star, by id."""
        return {k: int(r.get("strips") or 0) for k, r in self.records.items()}

    def record(self, star_id: str) -> dict:
        return self.atlas.record(star_id)

    # ------------------------------------------------------------------ stores
    def dataset(self, star_id: str):
        """The star's root dataset (lazy; atlas.store caches it per process)."""
        return self.atlas.star(star_id)

    def strip_bounds(self, star_id: str) -> tuple[np.ndarray, np.ndarray]:
        """Per-strip (min, max) wavelengths, vacuum observed Å (float64 arrays)."""
        b = self._bounds.get(star_id)
        if b is None:
            lo, hi = self.atlas.load(star_id, "strip_min_A", "strip_max_A")
            b = (np.asarray(lo, dtype=np.float64), np.asarray(hi, dtype=np.float64))
            self._bounds[star_id] = b
        return b

    def window(self, star_id: str, strip: int, lo_A: float, hi_A: float,
               max_points: int, flux: str = "norm") -> dict:
        """Points to draw for one strip between lo_A and hi_A (vacuum observed Å).

        ``atlas.lod.window``: ``wavelength`` and ``flux`` float32, ``level`` (0 = real
        samples), at most ``max_points`` points.
        """
        return self.atlas.window(star_id, int(strip), lo_A, hi_A, max_points, flux=flux)

    def span(self, star_id: str, lo_A: float, hi_A: float, max_points: int,
             flux: str = "norm") -> dict:
        """Points between lo_A and hi_A (vacuum observed Å) across strips, at most
        ``max_points`` in all: each strip gives its own stretch (overlaps cut at their
        middles), a NaN point breaks the line between strips.  ``wavelength`` float64,
        ``flux`` float32, ``level`` the coarsest level-of-detail level used."""
        lo_b, hi_b = self.strip_bounds(star_id)
        ok = np.isfinite(lo_b) & np.isfinite(hi_b)
        own_lo, own_hi = lo_b.copy(), hi_b.copy()
        idx = np.nonzero(ok)[0]
        for a, b in zip(idx[:-1], idx[1:], strict=True):  # overlaps cut at their middles
            if hi_b[a] > lo_b[b]:
                cut = 0.5 * (hi_b[a] + lo_b[b])
                own_hi[a] = own_lo[b] = cut
        parts = [(int(i), max(lo_A, own_lo[i]), min(hi_A, own_hi[i])) for i in idx
                 if own_hi[i] > lo_A and own_lo[i] < hi_A]
        total = max(hi_A - lo_A, 1e-9)
        waves, ys, level = [], [], 0
        for i, a, b in parts:
            if b <= a:
                continue
            n = max(4, int(max_points * (b - a) / total) - 1)
            w = self.window(star_id, i, a, b, n, flux=flux)
            if waves and len(w["wavelength"]):
                waves.append(np.array([0.5 * (float(waves[-1][-1]) + float(w["wavelength"][0]))]))
                ys.append(np.array([np.nan], np.float32))
            waves.append(np.asarray(w["wavelength"], np.float64))
            ys.append(np.asarray(w["flux"], np.float32))
            level = max(level, int(w.get("level", 0)))
        if not waves:
            return {"wavelength": np.zeros(0), "flux": np.zeros(0, np.float32), "level": 0}
        return {"wavelength": np.concatenate(waves), "flux": np.concatenate(ys), "level": level}

    def overview(self, star_id: str, n_bins: int = 1500, flux: str = "norm") -> dict:
        """The whole spectrum as ``n_bins`` min/max pairs (vacuum observed Å), from the
        coarsest level-of-detail group; cached per process."""
        key = (star_id, n_bins, flux)
        ov = self._overview.get(key)
        if ov is not None:
            return ov
        var = "norm" if flux == "norm" else "flux"
        n_levels = int(self.dataset(star_id).attrs.get("lod_levels", 0))
        if n_levels > 0:
            lev = self.atlas.level(star_id, n_levels)
            w, lo_f, hi_f = (np.asarray(a, dtype=np.float64).ravel() for a in store.read.damage_guarded(
                star_id, lambda: [lev[k].values for k in ("wave_min", f"{var}_min", f"{var}_max")]))
            wave = np.concatenate([w, w])
            fl = np.concatenate([lo_f, hi_f])
        else:  # no stored levels: ask each strip for a few points
            lo_b, hi_b = self.strip_bounds(star_id)
            per = max(8, 2 * n_bins // max(1, len(lo_b)))
            parts = [self.window(star_id, i, lo_b[i], hi_b[i], per, flux=flux)
                     for i in range(len(lo_b)) if np.isfinite(lo_b[i])]
            wave = np.concatenate([np.asarray(p["wavelength"], np.float64) for p in parts] or [np.zeros(0)])
            fl = np.concatenate([np.asarray(p["flux"], np.float64) for p in parts] or [np.zeros(0)])
        order = np.argsort(wave, kind="stable")
        ov = _minmax_bins(wave[order], fl[order], n_bins)
        self._overview[key] = ov
        return ov

    def cached(self, key: tuple, make):
        """``make()`` computed once per process and ``key`` (derived data every session of
        this atlas shares)."""
        if key not in self._memo:
            value = make()
            with self._lock:
                self._memo.setdefault(key, value)
        return self._memo[key]

    def features(self, star_id: str):
        """Measured features (identified and unidentified) as a DataFrame, or None.

        Expected in the star's store as the group ``features`` (dimension ``feature``):
        ``wavelength_A`` (vacuum, observed frame), ``species`` (empty when unidentified),
        ``rest_A`` (vacuum rest wavelength, NaN when unidentified), ``ew_mA``
        (equivalent width, mÅ).  None until the measurements write it.
        """
        if star_id in self._features:
            return self._features[star_id]
        ds = self.atlas.features(star_id)
        df = None if ds is None else ds.to_dataframe().reset_index(drop=True)
        self._features[star_id] = df
        return df

    def star_lines(self, star_id: str | None):
        """The lines to mark for a star: those predicted for it (its store's ``lines``
        group, strength class from the predicted depth) plus the shipped list's band
        heads and telluric lines; the whole shipped list when the star has no such
        group (atlases built before it); None when no list is available."""
        base = line_list()
        if not star_id or star_id not in self.records:
            return base
        with self._lock:
            if star_id in self._lines:
                return self._lines[star_id]
        pred = self.atlas.lines(star_id)
        if pred is None:
            out = base
        else:
            import pandas as pd

            other = None if base is None else base[base["kind"].astype(str) != "atomic"]
            out = pd.concat([pred, other], ignore_index=True) if other is not None and len(other) else pred
            out = out.sort_values("vacuum_A", kind="stable").reset_index(drop=True)
        with self._lock:
            self._lines[star_id] = out
        return out


def _minmax_bins(wave, flux, n_bins) -> dict:
    """Decimate to n_bins (min, max) pairs drawn as a zig-zag line (float64 Å, float32 flux)."""
    good = np.isfinite(wave) & np.isfinite(flux)
    wave, flux = wave[good], flux[good]
    if len(wave) <= 2 * n_bins:
        return {"wavelength": wave.astype(np.float64), "flux": flux.astype(np.float32)}
    edges = np.linspace(wave[0], wave[-1], n_bins + 1)
    idx = np.searchsorted(wave, edges)
    starts = idx[:-1]
    nonempty = idx[1:] > starts
    starts = starts[nonempty]
    mn = np.minimum.reduceat(flux, starts)
    mx = np.maximum.reduceat(flux, starts)
    centre = 0.5 * (edges[:-1] + edges[1:])[nonempty]
    f = np.empty(2 * len(mn), dtype=np.float32)
    f[0::2], f[1::2] = mn, mx
    return {"wavelength": np.repeat(centre, 2), "flux": f}


# ---------------------------------------------------------------------------
_cache_lock = threading.Lock()


@functools.lru_cache(maxsize=8)
def _cached(path_str: str, mtime_ns: int) -> AtlasData:
    return AtlasData(path_str)


def open_view_atlas(path) -> AtlasData:
    """The process's AtlasData for ``path``; reopened when atlas.json changes."""
    p = _check_atlas_path(path)
    mtime = os.stat(Path(p) / "atlas.json").st_mtime_ns if "://" not in p else 0
    with _cache_lock:
        return _cached(p, mtime)


@functools.lru_cache(maxsize=2)
def line_list():
    """The shipped line list (pandas DataFrame), or None when it is not available."""
    try:
        from atlas.lines import load_lines
    except ImportError:
        return None
    return load_lines()
