"""Level of detail: min/max envelopes of each strip at coarser and coarser steps, and the window query.

Level 1 bins 4 neighbouring samples of a strip, level 2 bins 16, level j bins 4**j, up to
the first level where a strip fits in ``MAX_BINS`` bins.  Each bin keeps the wavelength of
its first and last sample (``wave_min``, ``wave_max``, Å) and the least and greatest flux
(``flux_min``/``flux_max``) and normalised flux (``norm_min``/``norm_max``) over its
unmasked samples (NaN when all are masked), so every unmasked sample lies inside its bin's
envelope at every level.  A view ``P`` pixels wide then needs at most about ``2 P``
points: real samples when the window holds few enough, else the finest level that fits.

:func:`window` reads one strip only, so its cost does not depend on the spectrum's total
length; decoded strips are kept per process in a small LRU cache.
"""

from __future__ import annotations

import math
import threading
from collections import OrderedDict

import numpy as np

from atlas.errors import InputError

FACTOR = 4
MAX_BINS = 256
#: How many decoded strips each process keeps.
CACHE_STRIPS = 256

_ENVELOPES = ("flux", "norm")


def _reduce(arr: np.ndarray, factor: int, how) -> np.ndarray:
    """Reduce the last axis by ``factor`` with a NaN-ignoring ufunc (np.fmin / np.fmax)."""
    n = arr.shape[-1]
    m = math.ceil(n / factor)
    pad = m * factor - n
    if pad:
        arr = np.concatenate([arr, np.full(arr.shape[:-1] + (pad,), np.nan, dtype=arr.dtype)], axis=-1)
    # Element-wise over strided slices: much faster than a reduction along a short axis.
    out = how(arr[..., 0::factor], arr[..., 1::factor])
    for i in range(2, factor):
        how(out, arr[..., i::factor], out=out)
    return out


def _next_level(level: dict) -> dict:
    return {
        "step": level["step"] * FACTOR,
        "wave_min": _reduce(level["wave_min"], FACTOR, np.fmin),
        "wave_max": _reduce(level["wave_max"], FACTOR, np.fmax),
        **{f"{v}_{m}": _reduce(level[f"{v}_{m}"], FACTOR, np.fmin if m == "min" else np.fmax)
           for v in _ENVELOPES for m in ("min", "max")},
    }


def build_levels(wavelength, flux, norm_flux, mask, max_bins: int = MAX_BINS) -> list[dict]:
    """Envelope levels for (strip, pixel) arrays; a list of dicts of (strip, bin) arrays.

    Each dict holds ``step`` (samples per bin) and ``wave_min``, ``wave_max`` (float32,
    Å), ``flux_min``, ``flux_max``, ``norm_min``, ``norm_max`` (float32).  Masked samples
    (``mask`` True) are left out of the flux envelopes; padding (NaN wavelength) is ignored.
    At least one level is made.
    """
    wave = np.asarray(wavelength, dtype=np.float64)
    m = np.asarray(mask, dtype=bool)
    f = np.where(m, np.float32(np.nan), np.asarray(flux, dtype=np.float32))
    level = {
        "step": FACTOR,
        # float32 is what the window query returns anyway (0.001 Å at 10,000 Å).
        "wave_min": _reduce(wave, FACTOR, np.fmin).astype(np.float32),
        "wave_max": _reduce(wave, FACTOR, np.fmax).astype(np.float32),
        "flux_min": _reduce(f, FACTOR, np.fmin),
        "flux_max": _reduce(f, FACTOR, np.fmax),
    }
    del f
    nf = np.where(m, np.float32(np.nan), np.asarray(norm_flux, dtype=np.float32))
    level["norm_min"] = _reduce(nf, FACTOR, np.fmin)
    level["norm_max"] = _reduce(nf, FACTOR, np.fmax)
    del nf
    levels = [level]
    while levels[-1]["wave_min"].shape[-1] > max_bins:
        levels.append(_next_level(levels[-1]))
    return levels


# ---------------------------------------------------------------- decoded strips


class _Strip:
    """One strip's real samples (padding removed) and its envelope levels."""

    __slots__ = ("wave", "flux", "norm", "levels")

    def __init__(self, wave, flux, norm, levels):
        self.wave = wave
        self.flux = flux
        self.norm = norm
        self.levels = levels  # list of dicts of 1-D arrays, trimmed to the real bins


_cache: OrderedDict = OrderedDict()
_cache_lock = threading.Lock()
_groups: dict = {}


def clear_cache() -> None:
    """Forget every decoded strip and open store of this process."""
    with _cache_lock:
        _cache.clear()
        _groups.clear()


def _trim(n: int, levels: list[dict]) -> list[dict]:
    out = []
    for lev in levels:
        nb = math.ceil(n / lev["step"])
        out.append({k: (v if k == "step" else np.asarray(v[:nb])) for k, v in lev.items()})
    return out


def _from_arrays(wave, flux, norm, mask, n, levels=None) -> _Strip:
    wave = np.asarray(wave[:n], dtype=np.float64)
    m = np.asarray(mask[:n], dtype=bool)
    flux = np.where(m, np.nan, np.asarray(flux[:n], dtype=np.float32)).astype(np.float32)
    norm = np.where(m, np.nan, np.asarray(norm[:n], dtype=np.float32)).astype(np.float32)
    if levels is None:
        levels = build_levels(wave[None, :], flux[None, :], norm[None, :], m[None, :])
        levels = [{k: (v if k == "step" else v[0]) for k, v in lev.items()} for lev in levels]
    return _Strip(wave, flux, norm, _trim(n, levels))


def _open_group(url: str):
    import zarr

    g = _groups.get(url)
    if g is None:
        g = zarr.open_group(url, mode="r", use_consolidated=True)
        _groups[url] = g
    return g


def _load_from_store(url: str, strip: int) -> _Strip:
    g = _open_group(url)
    n_levels = int(g.attrs.get("lod_levels", 0))
    wave = g["wavelength"][strip, :]
    if "strip_samples" in g:
        n = int(g["strip_samples"][strip])
    else:
        n = int(np.count_nonzero(np.isfinite(wave)))
    levels = []
    for j in range(1, n_levels + 1):
        lg = g[f"lod{j}"]
        lev = {"step": int(lg.attrs["step"])}
        for name in ("wave_min", "wave_max", "flux_min", "flux_max", "norm_min", "norm_max"):
            lev[name] = lg[name][strip, :]
        levels.append(lev)
    return _from_arrays(
        wave, g["flux"][strip, :], g["norm_flux"][strip, :], g["mask"][strip, :], n, levels or None
    )


def _strip_data(star, strip: int, url: str | None) -> _Strip:
    n_strips = int(star.sizes["strip"])
    if not (isinstance(strip, int | np.integer) and 0 <= int(strip) < n_strips):
        raise InputError("strip", f"must be a whole number from 0 to {n_strips - 1}, not {strip!r}")
    strip = int(strip)
    if url is None:  # an in-memory star (or no store named): decode directly, no cache
        row = star.isel(strip=strip)
        n = int(row["strip_samples"]) if "strip_samples" in row else int(np.isfinite(row["wavelength"].values).sum())
        return _from_arrays(row["wavelength"].values, row["flux"].values, row["norm_flux"].values,
                            row["mask"].values, n)
    key = (url, strip)
    with _cache_lock:
        hit = _cache.get(key)
        if hit is not None:
            _cache.move_to_end(key)
            return hit
    data = _load_from_store(url, strip)
    with _cache_lock:
        _cache[key] = data
        while len(_cache) > CACHE_STRIPS:
            _cache.popitem(last=False)
    return data


def _interleave(lev: dict, var: str, b0: int, b1: int):
    wmin, wmax = lev["wave_min"][b0:b1], lev["wave_max"][b0:b1]
    ymin, ymax = lev[f"{var}_min"][b0:b1], lev[f"{var}_max"][b0:b1]
    m = b1 - b0
    x = np.empty(2 * m, dtype=np.float32)
    y = np.empty(2 * m, dtype=np.float32)
    x[0::2] = wmin
    x[1::2] = wmax
    # Alternate min-first and max-first by bin number, so the line sweeps the envelope.
    even = (np.arange(b0, b1) % 2) == 0
    y[0::2] = np.where(even, ymin, ymax)
    y[1::2] = np.where(even, ymax, ymin)
    return x, y


def window(star, strip: int, lo_A: float, hi_A: float, max_points: int, flux: str = "norm",
           url: str | None = None) -> dict:
    """Points to draw for one strip between ``lo_A`` and ``hi_A`` (Å, vacuum), at most ``max_points``.

    ``star`` is a Dataset with the star-store layout; ``url``, the store it was opened
    from, lets the strip be read from the store alone (and cached per process):
    :meth:`atlas.store.Atlas.window` passes it.  ``flux`` is ``norm`` (normalised flux) or ``raw``.  Returns a dict:
    ``wavelength`` and ``flux`` (float32 arrays, wavelength non-decreasing; masked samples
    are NaN), ``level`` (0 = real samples, j = envelopes of 4**j samples per bin),
    ``step`` (samples per point pair, 1 for real samples) and ``n_source`` (real samples
    in the window).  Envelope levels give a min and a max per bin, at the bin's first
    and last sample wavelengths.
    """
    if flux not in ("norm", "raw"):
        raise InputError("flux", f"must be 'norm' or 'raw', not {flux!r}")
    max_points = int(max_points)
    if max_points < 2:
        raise InputError("max_points", f"must be at least 2, not {max_points}")
    data = _strip_data(star, strip, url)
    lo_A, hi_A = float(lo_A), float(hi_A)
    i0 = int(np.searchsorted(data.wave, lo_A, side="left"))
    i1 = int(np.searchsorted(data.wave, hi_A, side="right"))
    n_source = max(0, i1 - i0)
    if n_source <= max_points:
        y = data.norm if flux == "norm" else data.flux
        return {
            "wavelength": data.wave[i0:i1].astype(np.float32),
            "flux": y[i0:i1].astype(np.float32, copy=True),
            "level": 0,
            "step": 1,
            "n_source": n_source,
        }
    var = "norm" if flux == "norm" else "flux"
    levels = list(data.levels)
    j = 0
    while True:
        if j >= len(levels):
            levels.append(_next_level(levels[-1]))
        lev = levels[j]
        b0 = int(np.searchsorted(lev["wave_max"], lo_A, side="left"))
        b1 = int(np.searchsorted(lev["wave_min"], hi_A, side="right"))
        if 2 * (b1 - b0) <= max_points:
            x, y = _interleave(lev, var, b0, b1)
            return {"wavelength": x, "flux": y, "level": j + 1, "step": int(lev["step"]),
                    "n_source": n_source}
        j += 1
