"""Checking an atlas: every file of every star store against its manifest and the catalog.

A sealed store has a manifest (the crc32c of each of its files) whose own sha256 the
catalog records as ``store_sha256``.  :func:`verify_star` reads every file once and
names each one that is missing or whose bytes differ; a store without a manifest (built
before checksums) is checked by decoding every chunk of every array instead, which
finds what the codecs can (zarr's crc32c checksum where present).
"""

from __future__ import annotations

import hashlib
import json
from dataclasses import dataclass, field

from atlas.store.layout import fs_of, join
from atlas.store.write import DIGEST, MANIFEST, file_digest


@dataclass
class StarCheck:
    """The result of checking one star: ``damaged`` lists files (relative to the store)."""

    star_id: str
    store: str
    files: int = 0
    bytes: int = 0
    damaged: list = field(default_factory=list)
    how: str = "manifest"

    @property
    def ok(self) -> bool:
        return not self.damaged


def _batches(rels: list[str], size: int = 64):
    for i in range(0, len(rels), size):
        yield rels[i:i + size]


def verify_star(atlas_url: str, record: dict) -> StarCheck:
    """Check one star's store (every file's bytes), naming each damaged file."""
    url = join(atlas_url, record["store"])
    check = StarCheck(record["id"], record["store"])
    fs, path = fs_of(url)
    try:
        raw = fs.cat_file(f"{path}/{MANIFEST}")
    except FileNotFoundError:
        if not fs.exists(f"{path}/zarr.json"):
            check.damaged.append("(the whole store is missing)")
            return check
        return _decode_all(url, check)
    want = record.get("store_sha256")
    if want and hashlib.sha256(raw).hexdigest() != want:
        check.damaged.append(MANIFEST)
    try:
        doc = json.loads(raw)
        files = doc["files"]
        if doc.get("algorithm") != DIGEST:
            raise ValueError(doc.get("algorithm"))
    except (ValueError, KeyError, TypeError, AttributeError):
        check.damaged.append(MANIFEST)
        return _decode_all(url, check)
    for batch in _batches(sorted(files)):
        blobs = fs.cat([f"{path}/{r}" for r in batch], on_error="return")
        for r in batch:
            b = blobs.get(f"{path}/{r}")
            check.files += 1
            if not isinstance(b, bytes | bytearray):
                check.damaged.append(f"{r} (missing)")
                continue
            check.bytes += len(b)
            if file_digest(b) != files[r]:
                check.damaged.append(r)
    return check


def _decode_all(url: str, check: StarCheck) -> StarCheck:
    """No manifest: decode every chunk of every array (the codecs' own checks)."""
    import zarr

    check.how = "decoded"
    try:
        root = zarr.open_group(url, mode="r", use_consolidated=True)
        groups = [("", root)] + [(f"{k}/", g) for k, g in root.groups()]
    except Exception as exc:  # unreadable metadata
        check.damaged.append(f"zarr.json ({type(exc).__name__})")
        return check
    for prefix, g in groups:
        for name, arr in g.arrays():
            for sel in _chunk_slices(arr):
                check.files += 1
                try:
                    arr[sel]
                except Exception as exc:
                    idx = ".".join(str(s.start // c) for s, c in zip(sel, arr.chunks, strict=True))
                    check.damaged.append(f"{prefix}{name}/c/{idx.replace('.', '/')} ({type(exc).__name__})")
    return check


def _chunk_slices(arr):
    import itertools

    ranges = [range(0, max(n, 1), c) for n, c in zip(arr.shape, arr.chunks, strict=True)]
    for starts in itertools.product(*ranges):
        yield tuple(slice(s, s + c) for s, c in zip(starts, arr.chunks, strict=True))
