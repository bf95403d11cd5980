"""Reading an atlas: the catalog, each star's store, envelope levels, features, windows.

The only code that opens an atlas for reading.  A store whose chunks fail their checksum
(or cannot be decoded at all) raises :class:`DamagedStar` naming the star, so callers can
say so and go on serving the other stars.
"""

from __future__ import annotations

import threading

import xarray as xr

from atlas.errors import InputError
from atlas.store.catalog import read_catalog
from atlas.store.layout import CATALOG, check_id, join, normalise, store_url

_open_lock = threading.Lock()
_star_cache: dict = {}
_lines_cache: dict = {}


class DamagedStar(InputError):
    """A star whose stored data cannot be read back as written."""

    def __init__(self, star_id: str, detail: str = ""):
        self.star_id = star_id
        self.detail = detail
        super().__init__(f"star {star_id}", "its stored data is damaged; run striae verify")


def damage_guarded(star_id: str, fn, *args, **kwargs):
    """Run a read; a decoding or checksum failure becomes DamagedStar (user mistakes pass)."""
    try:
        return fn(*args, **kwargs)
    except (InputError, MemoryError, KeyboardInterrupt):
        raise
    except Exception as exc:  # zarr/blosc/crc32c/JSON errors of a damaged store
        raise DamagedStar(star_id, f"{type(exc).__name__}: {exc}") from exc


class Atlas:
    """An opened atlas: ``catalog`` (dict), ``stars`` (records), ``star(id)`` (lazy Dataset)."""

    def __init__(self, url: str, catalog: dict):
        self.url = url
        self.catalog = catalog
        self.stars = list(catalog["stars"])
        self._by_id = {}
        for rec in self.stars:
            check_id(rec.get("id"), join(url, CATALOG))
            store_url(url, rec.get("store"))
            self._by_id[rec["id"]] = rec

    @property
    def ids(self) -> list[str]:
        return [r["id"] for r in self.stars]

    def record(self, star_id: str) -> dict:
        """The catalog record of a star; InputError for an unknown or malformed id."""
        check_id(star_id)
        rec = self._by_id.get(star_id)
        if rec is None:
            raise InputError("star", f"no star {star_id!r} in this atlas")
        return rec

    def store_url(self, star_id: str) -> str:
        return store_url(self.url, self.record(star_id)["store"])

    def star(self, star_id: str) -> xr.Dataset:
        """The star's store opened lazily (``xarray.open_zarr``, consolidated), cached per process."""
        url = self.store_url(star_id)
        with _open_lock:
            ds = _star_cache.get(url)
            if ds is None:
                ds = damage_guarded(star_id, xr.open_zarr, url, consolidated=True)
                _star_cache[url] = ds
        return ds

    def level(self, star_id: str, j: int) -> xr.Dataset:
        """Envelope level ``j`` (1, 2, ...) of a star as a lazy Dataset."""
        return damage_guarded(star_id, xr.open_zarr, self.store_url(star_id),
                             group=f"lod{int(j)}", consolidated=True)

    def load(self, star_id: str, *names: str):
        """Arrays of a star's root group loaded into memory (numpy), damage reported."""
        ds = self.star(star_id)
        return damage_guarded(star_id, lambda: [ds[n].values for n in names])

    def window(self, star_id: str, strip: int, lo_A: float, hi_A: float, max_points: int,
               flux: str = "norm") -> dict:
        """:func:`atlas.lod.window` for one stored strip (reads that strip only)."""
        from atlas import lod

        ds = self.star(star_id)
        return damage_guarded(star_id, lod.window, ds, strip, lo_A, hi_A, max_points,
                             flux=flux, url=self.store_url(star_id))

    def group(self, star_id: str, name: str):
        """Group ``name`` of a star's store loaded as a Dataset, or None when absent."""
        url = self.store_url(star_id)
        ds = self.star(star_id)  # opens (and checks) the root first
        del ds
        try:
            grp = xr.open_zarr(url, group=name, consolidated=True)
        except (KeyError, FileNotFoundError):
            return None
        except Exception as exc:
            raise DamagedStar(star_id, str(exc)) from exc
        return damage_guarded(star_id, grp.load)

    def features(self, star_id: str):
        """The star's measured features (group ``features``) as a Dataset, or None when absent."""
        return self.group(star_id, "features")

    def lines(self, star_id: str):
        """The lines predicted for the star (group ``lines``) as a DataFrame sorted by
        vacuum Å (``atlas.lines.stored.from_dataset``), or None when the store has none;
        cached per process (a store's path changes whenever its content does)."""
        from atlas.lines.stored import from_dataset

        url = self.store_url(star_id)
        with _open_lock:
            if url in _lines_cache:
                return _lines_cache[url]
        grp = self.group(star_id, "lines")
        df = None if grp is None else from_dataset(grp)
        with _open_lock:
            _lines_cache[url] = df
        return df


def open_atlas(path) -> Atlas:
    """Open an atlas folder or URL; InputError if it has no readable catalog."""
    url = normalise(path)
    cat = read_catalog(url)
    if cat is None:
        raise InputError(url, f"no {CATALOG} here: not a built atlas")
    return Atlas(url, cat)


def clear_cache() -> None:
    """Forget opened stores (tests, and after a repair)."""
    with _open_lock:
        _star_cache.clear()
        _lines_cache.clear()
