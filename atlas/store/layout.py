"""The atlas layout: names, ids, paths and the star record.

``ATLAS/atlas.json`` is the catalog (the commit point); ``ATLAS/stars/<name>.zarr`` holds
one star each.  ``ATLAS`` may be a local folder or an fsspec URL (``s3://``, ``http(s)://``
read-only, ``memory://`` for tests).
"""

from __future__ import annotations

import dataclasses
import os
import re
import unicodedata
import uuid

import fsspec
import numpy as np

from atlas.errors import InputError

FORMAT = 1
CATALOG = "atlas.json"
STARS = "stars"

#: The keys of every star record in ``atlas.json`` (../shared/DESIGN.md plus our own).
RECORD_KEYS = (
    "id", "name", "store", "source", "source_sha256", "wavelength_min_A", "wavelength_max_A",
    "medium", "samples", "strips",
    "barycentric_kms", "rv_kms", "rv_err_kms", "teff_k", "spectral_class", "snr",
    "resolving_power", "colour_srgb", "rv_obs_kms", "store_sha256", "source_path",
    "class_range", "class_criteria", "colour_basis", "rv_method", "vsini_kms",
)
#: Record keys that hold a number or null.
NUMBER_KEYS = ("barycentric_kms", "rv_kms", "rv_err_kms", "rv_obs_kms", "teff_k", "snr",
               "resolving_power", "wavelength_min_A", "wavelength_max_A", "vsini_kms")

ID_RE = re.compile(r"[a-z0-9][a-z0-9-]{0,63}")
_STORE_RE = re.compile(r"stars/[a-z0-9][a-z0-9-]{0,80}\.zarr")

#: The fsspec back-end each URL scheme needs, and the package that brings it.
_BACKENDS = {"s3": "s3fs", "s3a": "s3fs", "http": "aiohttp", "https": "aiohttp",
             "gs": "gcsfs", "gcs": "gcsfs"}


@dataclasses.dataclass
class StarRecord:
    """One star of the catalog; ``as_dict`` gives the JSON record (every key of RECORD_KEYS)."""

    id: str
    name: str
    store: str
    source: str
    source_sha256: str
    wavelength_min_A: float | None = None
    wavelength_max_A: float | None = None
    medium: str | None = None
    samples: int | None = None
    strips: int | None = None
    barycentric_kms: float | None = None
    rv_kms: float | None = None
    rv_err_kms: float | None = None
    teff_k: float | None = None
    spectral_class: str | None = None
    snr: float | None = None
    resolving_power: float | None = None
    colour_srgb: str | None = None
    rv_obs_kms: float | None = None
    store_sha256: str | None = None
    source_path: str | None = None
    class_range: str | None = None
    class_criteria: list | None = None
    colour_basis: str | None = None
    rv_method: str | None = None
    vsini_kms: float | None = None

    @classmethod
    def from_dict(cls, d: dict) -> StarRecord:
        """A record from a dict (unknown keys ignored, missing optional keys None)."""
        return cls(**{k: d.get(k) for k in RECORD_KEYS})

    def as_dict(self) -> dict:
        d = dataclasses.asdict(self)
        for k in NUMBER_KEYS:
            d[k] = json_number(d[k])
        return d

    @property
    def key(self) -> tuple:
        """What makes two records the same star: its file name and bytes."""
        return (self.source, self.source_sha256)


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


def scheme(url: str) -> str:
    s = os.fspath(url)
    return s.split("://", 1)[0].lower() if "://" in s else "file"


def fs_of(url: str):
    """``(filesystem, path)`` for an atlas URL or path; a missing back-end is one line."""
    try:
        fs, path = fsspec.core.url_to_fs(os.fspath(url))
    except ImportError:
        pkg = _BACKENDS.get(scheme(url), "an fsspec back-end for it")
        hint = "pip install 'striae[remote]'" if pkg in ("s3fs", "aiohttp") else f"pip install {pkg}"
        raise InputError(os.fspath(url), f"{scheme(url)}:// needs the package {pkg} ({hint})") from None
    except ValueError as exc:
        raise InputError(os.fspath(url), f"not a usable address ({exc})") from None
    return fs, path.rstrip("/")


def is_local(url: str) -> bool:
    return scheme(url) in ("file", "local")


def is_read_only(url: str) -> bool:
    """http(s) atlases are served from a static host: readable, never written."""
    return scheme(url) in ("http", "https")


def normalise(url) -> str:
    """A local path for local folders (``file://`` URLs included), else the URL unchanged."""
    url = os.fspath(url)
    if "://" not in url:
        return url
    return fs_of(url)[1] if is_local(url) else url.rstrip("/")


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
    """A content-named store path not used by the current catalog nor present on disk
    (a salt is added if it is: another build may be writing that very path)."""
    name = store_name(slug, key)
    while name in in_use or path_exists(join(atlas_url, name)):
        name = store_name(slug, uuid.uuid4().hex)
    return name


def path_exists(url: str) -> bool:
    fs, path = fs_of(url)
    return fs.exists(path)


def store_exists(atlas_url: str, name: str) -> bool:
    fs, path = fs_of(join(atlas_url, name))
    return fs.exists(f"{path}/zarr.json")


def json_number(x):
    """A finite float for JSON, else None."""
    try:
        v = float(x)
    except (TypeError, ValueError):
        return None
    return v if np.isfinite(v) else None
