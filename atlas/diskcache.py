"""A small on-disk cache of computed arrays (class templates), so each process need not redo them.

Entries live in ``$XDG_CACHE_HOME/striae`` (default ``~/.cache/striae``) as ``.npz``
files named by the sha256 of the caller's key *and* of the code and data that made
them (the source of :mod:`atlas.synth`, the line list, numpy's and scipy's versions,
the tool version), so a change to any of these is a miss, never a stale hit.
A write goes to a temporary file renamed into place (readers never see half an entry);
an entry that cannot be read is computed again; a folder that cannot be written is
simply not used.  Nothing is ever downloaded.
"""

from __future__ import annotations

import contextlib
import functools
import hashlib
import os
import tempfile
from pathlib import Path

import numpy as np

#: Files (relative to the package) whose content decides every cached value.
_SOURCES = ("synth", "lines", "physics")


def cache_dir() -> Path:
    """Where entries are kept: ``$XDG_CACHE_HOME/striae`` or ``~/.cache/striae``."""
    base = os.environ.get("XDG_CACHE_HOME") or os.path.join(os.path.expanduser("~"), ".cache")
    return Path(base) / "striae"


@functools.lru_cache(maxsize=1)
def code_fingerprint() -> str:
    """sha256 over the source and data files that cached values depend on, and the versions."""
    import scipy

    from atlas import __version__

    root = Path(__file__).resolve().parent
    h = hashlib.sha256(f"{__version__} numpy {np.__version__} scipy {scipy.__version__}".encode())
    for sub in _SOURCES:
        for p in sorted((root / sub).rglob("*")):
            if p.is_file() and p.suffix in (".py", ".csv", ".json", ".txt", ".gz"):
                h.update(str(p.relative_to(root)).encode())
                h.update(p.read_bytes())
    return h.hexdigest()


def entry_path(name: str, key) -> Path:
    """The file of one entry: ``<name>-<sha256 of key and code>.npz``."""
    h = hashlib.sha256(code_fingerprint().encode())
    for part in key:
        if isinstance(part, np.ndarray):
            h.update(part.dtype.str.encode() + str(part.shape).encode())
            h.update(np.ascontiguousarray(part).tobytes())
        else:
            h.update(repr(part).encode())
        h.update(b"\0")
    return cache_dir() / f"{name}-{h.hexdigest()[:32]}.npz"


def cached_arrays(name: str, key, compute) -> dict[str, np.ndarray]:
    """``compute()`` (a dict of arrays) from the cache if present, else computed and stored."""
    path = entry_path(name, key)
    try:
        with np.load(path, allow_pickle=False) as z:
            return {k: z[k] for k in z.files}
    except (OSError, ValueError, KeyError, EOFError):
        pass  # no entry, or one that cannot be read: compute it again
    out = compute()
    try:
        path.parent.mkdir(parents=True, exist_ok=True)
        fd, tmp = tempfile.mkstemp(prefix=".tmp-", suffix=".npz", dir=path.parent)
        try:
            with os.fdopen(fd, "wb") as fh:
                np.savez(fh, **out)
            os.replace(tmp, path)
        except BaseException:
            with contextlib.suppress(OSError):
                os.unlink(tmp)
            raise
    except OSError:
        pass  # a read-only or full disk only costs the time
    return out

