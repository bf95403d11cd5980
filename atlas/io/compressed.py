"""Whole-file compression (gzip, bzip2), recognised by magic bytes, not by name.

A compressed spectrum (``.fits.gz``, ``.fits.bz2``, ``.csv.gz``, ``.txt.gz`` or any
name) is unpacked into a private temporary folder, read there by the usual
picker, and the result points back at the compressed file (``source_path``,
``source_sha256`` of the bytes on disk).  Tile-compressed FITS (``.fz``) needs
none of this: it is a FITS file whose images astropy decompresses itself.

Magic bytes: gzip ``1f 8b`` (RFC 1952, sect. 2.3.1); bzip2 ``BZh`` followed by the
block-size digit ``1``-``9`` (common practice: the bzip2 file header).
"""

from __future__ import annotations

import bz2
import contextlib
import gzip
import os
import shutil
import tempfile
import zlib

from atlas.errors import InputError

#: Name endings dropped from the unpacked copy (so ``a.csv.gz`` is read as ``a.csv``).
COMPRESSED_SUFFIXES = (".gz", ".gzip", ".bz2", ".bzip2")


def kind(path) -> str | None:
    """``gzip``, ``bzip2`` or None from the first bytes of a file."""
    try:
        with open(path, "rb") as fh:
            head = fh.read(4)
    except OSError:
        return None
    if head[:2] == b"\x1f\x8b":
        return "gzip"
    if head[:3] == b"BZh" and head[3:4].isdigit() and head[3:4] != b"0":
        return "bzip2"
    return None


def _inner_name(path) -> str:
    name = os.path.basename(os.fspath(path))
    for suffix in COMPRESSED_SUFFIXES:
        if name.lower().endswith(suffix) and len(name) > len(suffix):
            return name[: -len(suffix)]
    return name


@contextlib.contextmanager
def unpacked(path):
    """The path of an unpacked copy of a compressed file (removed afterwards)."""
    p = os.fspath(path)
    opener = gzip.open if kind(p) == "gzip" else bz2.open
    with tempfile.TemporaryDirectory(prefix="striae-unpack-") as folder:
        target = os.path.join(folder, _inner_name(p))
        try:
            with opener(p, "rb") as src, open(target, "wb") as dst:
                shutil.copyfileobj(src, dst, 1 << 20)
        except (OSError, EOFError, zlib.error, ValueError) as exc:
            what = "gzip" if opener is gzip.open else "bzip2"
            raise InputError(p, f"corrupt {what} file: cannot unpack it ({exc})") from None
        if os.path.getsize(target) == 0:
            raise InputError(p, "empty file once unpacked (0 bytes)")
        try:
            yield target
        except InputError as exc:
            if exc.where == target:  # name the file the user gave, not our copy
                raise InputError(p, exc.reason) from None
            raise
