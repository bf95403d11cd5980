"""The atlas on disk: ``atlas.json`` (the catalog, the commit point) and one Zarr store per star.

Writing: each star goes to a new, content-named store ``stars/<slug>-<hash8>.zarr``;
when all are complete the catalog is written to a temporary file and moved over
``atlas.json`` with ``os.replace`` (one object PUT on an object store), and only then are
stores no longer named by the catalog removed.  Readers follow only ``atlas.json``, so a
build killed at any moment leaves the previous atlas as it was.

``ATLAS`` may be a local folder or an fsspec URL (``memory://``, ``s3://``, ...).
"""

from __future__ import annotations

import json
import os
import re
import threading
import unicodedata
import uuid
import warnings

import fsspec
import numpy as np
import xarray as xr

from atlas.errors import InputError

FORMAT = 1
CATALOG = "atlas.json"
STARS = "stars"

#: The keys of every star record in ``atlas.json`` (../shared/DESIGN.md).
RECORD_KEYS = (
    "id", "name", "store", "source", "source_sha256", "wavelength_min_A", "wavelength_max_A",
    "medium", "samples", "strips",
    "barycentric_kms", "rv_kms", "rv_err_kms", "teff_k", "spectral_class", "snr",
    "resolving_power", "colour_srgb", "rv_obs_kms",
)

ID_RE = re.compile(r"[a-z0-9][a-z0-9-]{0,63}")
_STORE_RE = re.compile(r"stars/[a-z0-9][a-z0-9-]{0,80}\.zarr")


# ---------------------------------------------------------------- ids


def slugify(text: str, fallback: str = "star") -> str:
    """A star id from a name: lower case ASCII letters, digits and hyphens, at most 64 characters."""
    s = unicodedata.normalize("NFKD", str(text)).encode("ascii", "ignore").decode()
    s = re.sub(r"['`]", "", s)  # "Corran's Star" -> corrans-star
    s = re.sub(r"[^a-z0-9]+", "-", s.lower()).strip("-")
    s = s[:64].rstrip("-")
    return s or fallback


def unique_id(slug: str, taken: set[str]) -> str:
    """``slug``, or ``slug-2``, ``slug-3``, ... (at most 64 characters) if already taken."""
    if slug not in taken:
        return slug
    k = 2
    while True:
        tail = f"-{k}"
        cand = slug[: 64 - len(tail)].rstrip("-") + tail
        if cand not in taken:
            return cand
        k += 1


def check_id(star_id, where: str = "star") -> str:
    """Validate a star id given by a user (a slug, never a path); returns it."""
    if not isinstance(star_id, str) or not ID_RE.fullmatch(star_id):
        raise InputError(where, f"not a star id (lower-case letters, digits, hyphens): {str(star_id)[:80]!r}")
    return star_id


# ---------------------------------------------------------------- paths


def _fs(url: str):
    fs, path = fsspec.core.url_to_fs(os.fspath(url))
    return fs, path.rstrip("/")


def is_local(url: str) -> bool:
    fs, _ = _fs(url)
    return "file" in (fs.protocol if isinstance(fs.protocol, tuple) else (fs.protocol,))


def normalise(url) -> str:
    """A local path for local folders (``file://`` URLs included), else the URL unchanged."""
    url = os.fspath(url)
    if "://" not in url:
        return url
    fs, path = _fs(url)
    return path if is_local(url) else url


def join(url: str, *parts: str) -> str:
    """Join an atlas URL or path with relative parts (always '/')."""
    base = os.fspath(url).rstrip("/")
    return "/".join([base, *parts])


def store_url(atlas_url: str, store: str) -> str:
    """Full URL of a star store named in the catalog; refuses anything but ``stars/<name>.zarr``."""
    if not isinstance(store, str) or not _STORE_RE.fullmatch(store):
        raise InputError(join(atlas_url, CATALOG), f"bad store name {str(store)[:80]!r}")
    return join(atlas_url, store)


def store_name(slug: str, key: str) -> str:
    """``stars/<slug>-<hash8>.zarr`` for a content key (the sha256 of input and options)."""
    return f"{STARS}/{slug}-{key[:8]}.zarr"


def fresh_store_name(slug: str, key: str, atlas_url: str, in_use: set[str]) -> str:
    """A content-named store path not used by the current catalog (a salt is added if it is)."""
    name = store_name(slug, key)
    while name in in_use:
        name = store_name(slug, uuid.uuid4().hex)
    return name


# ---------------------------------------------------------------- writing


def _root_encoding(root: xr.Dataset, strips_per_chunk: int, n_strips: int) -> dict:
    """Zarr encoding of the root group: (strip, pixel) arrays in chunks of ``strips_per_chunk``
    whole strips, Blosc LZ4; the small per-strip (strip) arrays in one chunk of ``n_strips``."""
    pixel = root.sizes["pixel"]
    comp = _compressors()
    enc = {}
    for k, v in root.variables.items():
        if v.dims == ("strip", "pixel"):
            enc[k] = {"chunks": (strips_per_chunk, pixel), "compressors": comp}
        elif v.dims == ("strip",):
            enc[k] = {"chunks": (max(1, n_strips),)}
    return enc


def _level_encoding(lev: xr.Dataset, strips_per_chunk: int, n_strips: int) -> dict:
    """Zarr encoding of an envelope level: chunks of ``4 * strips_per_chunk`` strips (at most all)."""
    rows = min(n_strips, strips_per_chunk * 4)
    comp = _compressors()
    return {v: {"chunks": (rows, lev.sizes["bin"]), "compressors": comp} for v in lev.data_vars}


def _consolidate(url: str) -> None:
    import zarr

    with warnings.catch_warnings():
        # Consolidated metadata is a zarr-python extension to Zarr v3; we rely on it on purpose.
        warnings.filterwarnings("ignore", message="Consolidated metadata", category=UserWarning)
        zarr.consolidate_metadata(url, zarr_format=3)


def _clear(url: str) -> None:
    fs, path = _fs(url)
    if fs.exists(path):
        fs.rm(path, recursive=True)


def write_star(atlas_url: str, name: str, root: xr.Dataset, levels: list[xr.Dataset], strips_per_chunk: int) -> None:
    """Write one star store (root group plus ``lod1``, ``lod2``, ... groups), Zarr v3, consolidated.

    Overwrites whatever is at that path (it is never a path the current catalog names).
    """
    url = join(atlas_url, name)
    _clear(url)
    n = root.sizes["strip"]
    root.to_zarr(url, mode="w", zarr_format=3, consolidated=False,
                 encoding=_root_encoding(root, strips_per_chunk, n))
    for j, lev in enumerate(levels, start=1):
        lev.to_zarr(url, group=f"lod{j}", mode="w", zarr_format=3, consolidated=False,
                    encoding=_level_encoding(lev, strips_per_chunk, n))
    _consolidate(url)


def _layout(url: str, root: xr.Dataset, levels: list[xr.Dataset], n_strips: int, strips_per_chunk: int):
    """Create the empty store of a star of ``n_strips`` strips, consolidated; returns its arrays.

    xarray writes ``root`` and ``levels`` cut to zero strips (attributes, encoding, fill
    values, dimension names: exactly what :func:`write_star` writes) into an in-memory Zarr
    store, where each array is resized to ``n_strips`` strips (a metadata change: no chunk
    exists yet); those metadata documents are then copied to ``url`` in one go.  Making
    the arrays in memory takes a quarter of the time xarray takes on a local folder (measured
    here), and no dask template is needed.  Returns ``{(level, name): zarr.Array}``, level 0
    being the root group.
    """
    import zarr
    from zarr.storage import MemoryStore

    docs: dict = {}
    mem = MemoryStore(docs)
    none = {"strip": slice(0, 0)}
    root.isel(none).to_zarr(mem, mode="w", zarr_format=3, consolidated=False,
                            encoding=_root_encoding(root, strips_per_chunk, n_strips))
    for j, lev in enumerate(levels, start=1):
        lev.isel(none).to_zarr(mem, group=f"lod{j}", mode="w", zarr_format=3, consolidated=False,
                               encoding=_level_encoding(lev, strips_per_chunk, n_strips))
    g = zarr.open_group(mem, mode="r+", zarr_format=3)
    for _, arr in g.arrays():
        arr.resize((n_strips, *arr.shape[1:]))
    for j in range(1, len(levels) + 1):
        for _, arr in g[f"lod{j}"].arrays():
            arr.resize((n_strips, *arr.shape[1:]))
    with warnings.catch_warnings():
        warnings.filterwarnings("ignore", message="Consolidated metadata", category=UserWarning)
        zarr.consolidate_metadata(mem, zarr_format=3)
    fs, path = _fs(url)
    files = {f"{path}/{key}": buf.to_bytes() for key, buf in docs.items()}
    if is_local(url):
        for parent in sorted({f.rsplit("/", 1)[0] for f in files}):
            os.makedirs(parent, exist_ok=True)
    fs.pipe(files)
    group = zarr.open_group(url, mode="r+", zarr_format=3, use_consolidated=True)
    arrays = {(0, k): group[k] for k in root.variables}
    arrays.update({(j, k): group[f"lod{j}"][k] for j, lev in enumerate(levels, start=1) for k in lev.data_vars})
    return arrays


def write_star_blocks(atlas_url: str, name: str, blocks, n_strips: int, strips_per_chunk: int,
                      per_strip: xr.Dataset) -> None:
    """Write one star store block by block; the same store :func:`write_star` writes.

    ``blocks`` yields ``(b0, b1, root, levels)``: strips ``b0:b1`` of the root group and of
    each envelope level, in order and covering every strip; every ``b0`` is a multiple of
    ``4 * strips_per_chunk`` so no Zarr chunk is shared between two blocks.  The layout
    (every array, with its attributes and encoding, and the consolidated metadata) is
    made from the first block by :func:`_layout`; each block then goes into its strips of
    the Zarr arrays, written by one background thread while the next block is computed
    (so at most two blocks of padded strips are in memory at a time).
    ``per_strip`` holds the root group's 1-D (strip) variables for every strip: they are
    small and written whole.
    """
    from concurrent.futures import ThreadPoolExecutor

    url = join(atlas_url, name)
    _clear(url)
    arrays = None
    pending = None
    with ThreadPoolExecutor(1, thread_name_prefix="striae-store") as writer:
        for b0, b1, root, levels in blocks:
            items = []
            if arrays is None:
                arrays = _layout(url, root, levels, n_strips, strips_per_chunk)
                items += [_item(arrays[(0, k)], slice(None), v, k) for k, v in per_strip.variables.items()]
            # The variables keep their own dtypes on disk (no CF encoding changes their
            # values), so each block goes straight to its Zarr arrays: faster than an
            # xarray ``region=`` write per block, which reopens the group each time.
            items += [_item(arrays[(0, k)], slice(b0, b1), v, k)
                      for k, v in root.variables.items() if k not in per_strip]
            items += [_item(arrays[(j, k)], slice(b0, b1), v, f"lod{j}/{k}")
                      for j, lev in enumerate(levels, start=1) for k, v in lev.data_vars.items()]
            del root, levels
            if pending is not None:
                pending.result()
            pending = writer.submit(_write_items, items)
            del items
        if pending is not None:
            pending.result()


def _item(arr, rows: slice, v, name: str):
    """``(arr, rows, values)`` for a variable that must already have the stored dtype."""
    if arr.dtype != v.dtype:  # would need xarray's encoding: never silently differ
        raise TypeError(f"{name}: stored as {arr.dtype}, block is {v.dtype}")
    return arr, rows, np.asarray(v.values)


def _write_items(items) -> None:
    """``arr[rows] = values`` for every item, as one batch of Zarr requests when possible.

    One call into zarr's event loop for the whole batch (``Array.async_array``, public for
    batching) instead of one per array: measured here about 0.04 s less per 2M-sample star.
    ``zarr.core.sync.sync`` is zarr's own runner; without it each array is written in turn.
    """
    try:
        from zarr.core.sync import sync
    except ImportError:  # a zarr without it: the same writes, one by one
        for arr, rows, values in items:
            arr[rows] = values
        return
    import asyncio

    async def write_all():
        await asyncio.gather(*(arr.async_array.setitem(rows, values) for arr, rows, values in items))

    sync(write_all())


def write_features(atlas_url: str, name: str, features: xr.Dataset) -> None:
    """Write the ``features`` group of a star store (dimension ``feature``) and re-consolidate."""

    url = join(atlas_url, name)
    features.to_zarr(url, group="features", mode="w", zarr_format=3, consolidated=False)
    _consolidate(url)


def _compressors():
    """Blosc LZ4 with byte shuffle: several times faster than zstd to write and to read
    here, and smaller on float arrays (measured on this project's strips)."""
    from zarr.codecs import BloscCodec

    return [BloscCodec(cname="lz4", clevel=5, shuffle="shuffle")]


def read_catalog(atlas_url: str) -> dict | None:
    """The catalog of an atlas, or None if it has none yet."""
    fs, path = _fs(atlas_url)
    cpath = f"{path}/{CATALOG}"
    if not fs.exists(cpath):
        return None
    try:
        with fs.open(cpath, "rb") as fh:
            cat = json.loads(fh.read().decode("utf-8"))
    except (OSError, ValueError, UnicodeDecodeError) as exc:
        raise InputError(join(atlas_url, CATALOG), f"cannot read the catalog ({exc})") from None
    if not isinstance(cat, dict) or cat.get("format") != FORMAT or not isinstance(cat.get("stars"), list):
        raise InputError(join(atlas_url, CATALOG), f"not a format-{FORMAT} atlas catalog")
    return cat


def write_catalog(atlas_url: str, catalog: dict) -> None:
    """Commit: write ``atlas.json`` atomically (temporary file + ``os.replace``; one PUT remotely)."""
    data = (json.dumps(catalog, indent=1, allow_nan=False) + "\n").encode("utf-8")
    fs, path = _fs(atlas_url)
    if is_local(atlas_url):
        os.makedirs(path, exist_ok=True)
        tmp = os.path.join(path, f".{CATALOG}.{uuid.uuid4().hex}.tmp")
        try:
            with open(tmp, "wb") as fh:
                fh.write(data)
                fh.flush()
                os.fsync(fh.fileno())
            os.replace(tmp, os.path.join(path, CATALOG))
        finally:
            if os.path.exists(tmp):
                os.remove(tmp)
        try:  # make the rename itself durable
            dfd = os.open(path, os.O_RDONLY)
            try:
                os.fsync(dfd)
            finally:
                os.close(dfd)
        except OSError:
            pass
    else:
        fs.pipe_file(f"{path}/{CATALOG}", data)


def remove_stale(atlas_url: str, catalog: dict) -> list[str]:
    """Remove stores under ``stars/`` that the (already committed) catalog does not name."""
    fs, path = _fs(atlas_url)
    keep = {r["store"] for r in catalog.get("stars", [])}
    removed = []
    spath = f"{path}/{STARS}"
    if not fs.exists(spath):
        return removed
    for entry in fs.ls(spath, detail=False):
        name = f"{STARS}/{entry.rstrip('/').rsplit('/', 1)[-1]}"
        if name.endswith(".zarr") and name not in keep:
            fs.rm(entry, recursive=True)
            removed.append(name)
    return removed


def store_exists(atlas_url: str, name: str) -> bool:
    fs, path = _fs(join(atlas_url, name))
    return fs.exists(f"{path}/zarr.json")


# ---------------------------------------------------------------- reading


_open_lock = threading.Lock()
_star_cache: dict = {}


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

    def star(self, star_id: str) -> xr.Dataset:
        """The star's store opened lazily (``xarray.open_zarr``, consolidated), cached per process."""
        rec = self.record(star_id)
        url = store_url(self.url, rec["store"])
        with _open_lock:
            ds = _star_cache.get(url)
            if ds is None:
                ds = xr.open_zarr(url, consolidated=True)
                ds.encoding["striae_store"] = url
                _star_cache[url] = ds
        return ds

    def level(self, star_id: str, j: int) -> xr.Dataset:
        """Envelope level ``j`` (1, 2, ...) of a star as a lazy Dataset."""
        url = store_url(self.url, self.record(star_id)["store"])
        return xr.open_zarr(url, group=f"lod{int(j)}", consolidated=True)


def open_atlas(path) -> Atlas:
    """Open an atlas folder or URL; InputError if it has no readable catalog."""
    url = normalise(path)
    cat = read_catalog(url)
    if cat is None:
        raise InputError(url, f"no {CATALOG} here: not a built atlas")
    return Atlas(url, cat)


def json_number(x):
    """A finite float for JSON, else None."""
    try:
        v = float(x)
    except (TypeError, ValueError):
        return None
    return v if np.isfinite(v) else None
