"""The catalog ``atlas.json``: reading, the commit lock, the merge at commit, clean-up.

A build commits under a lock on the atlas (``fcntl`` on a lock file locally; a lock
object made by a conditional create, with a lease, on an object store).  Under the lock
the catalog is read again and this build's stars are merged into what other builds
committed meanwhile, ids are made unique, ``atlas.json`` is replaced in one step
(temporary file + ``os.replace`` locally; one PUT remotely), and then stores that the
new catalog does not name are removed, except those a live build is still writing.
"""

from __future__ import annotations

import contextlib
import json
import os
import socket
import time
import uuid

from atlas.errors import InputError
from atlas.store.layout import (
    CATALOG,
    FORMAT,
    STARS,
    StarRecord,
    fs_of,
    is_local,
    is_read_only,
    join,
    unique_id,
)

LOCK = ".atlas.lock"
#: How long a build waits for the lock by default (``--lock-timeout``), seconds.
LOCK_TIMEOUT_S = 600.0
#: A remote lock object older than this is taken for one left by a killed build.
LEASE_S = 3600.0


def read_catalog(atlas_url: str) -> dict | None:
    """The catalog of an atlas, or None if it has none yet."""
    fs, path = fs_of(atlas_url)
    cpath = f"{path}/{CATALOG}"
    try:
        raw = fs.cat_file(cpath)
    except FileNotFoundError:
        return None
    except OSError as exc:
        raise InputError(join(atlas_url, CATALOG), f"cannot read the catalog ({exc})") from None
    try:
        cat = json.loads(raw.decode("utf-8"))
    except (ValueError, UnicodeDecodeError) as exc:
        raise InputError(join(atlas_url, CATALOG), f"cannot read the catalog ({exc})") from None
    if not isinstance(cat, dict) or cat.get("format") != FORMAT or not isinstance(cat.get("stars"), list):
        raise InputError(join(atlas_url, CATALOG), f"not a format-{FORMAT} atlas catalog")
    return cat


def write_catalog(atlas_url: str, catalog: dict) -> None:
    """Write ``atlas.json`` atomically (temporary file + ``os.replace``; one PUT remotely)."""
    if is_read_only(atlas_url):
        raise InputError(atlas_url, "an http(s) atlas is read-only: build into a folder or s3:// and copy it")
    data = (json.dumps(catalog, indent=1, allow_nan=False) + "\n").encode("utf-8")
    fs, path = fs_of(atlas_url)
    if not is_local(atlas_url):
        fs.pipe_file(f"{path}/{CATALOG}", data)
        return
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
    with contextlib.suppress(OSError):  # make the rename itself durable
        dfd = os.open(path, os.O_RDONLY)
        try:
            os.fsync(dfd)
        finally:
            os.close(dfd)


def put_if_absent(fs, path: str, data: bytes) -> bool:
    """Create the object ``path`` only if it does not exist; False when it did.

    On S3 this is a conditional PUT (``If-None-Match: *``), so of two writers exactly one
    wins; on back-ends without conditional writes it is a check-then-write.
    """
    try:
        fs.pipe_file(path, data, mode="create")
        return True
    except FileExistsError:
        return False
    except TypeError:  # a back-end without the mode argument
        if fs.exists(path):
            return False
        fs.pipe_file(path, data)
        return True


@contextlib.contextmanager
def atlas_lock(atlas_url: str, timeout_s: float = LOCK_TIMEOUT_S, poll_s: float = 0.05):
    """Hold the atlas's commit lock; InputError naming ``--lock-timeout`` if it cannot be had."""
    if is_read_only(atlas_url):
        raise InputError(atlas_url, "an http(s) atlas is read-only: build into a folder or s3:// and copy it")
    deadline = time.monotonic() + max(0.0, float(timeout_s))
    if is_local(atlas_url):
        import fcntl

        path = fs_of(atlas_url)[1]
        os.makedirs(path, exist_ok=True)
        with open(os.path.join(path, LOCK), "a+b") as fh:
            while True:
                try:
                    fcntl.flock(fh.fileno(), fcntl.LOCK_EX | fcntl.LOCK_NB)
                    break
                except BlockingIOError:
                    if time.monotonic() >= deadline:
                        raise _timed_out(timeout_s) from None
                    time.sleep(poll_s)
            try:
                yield
            finally:
                fcntl.flock(fh.fileno(), fcntl.LOCK_UN)
        return
    fs, path = fs_of(atlas_url)
    lock = f"{path}/{LOCK}"
    me = json.dumps({"owner": uuid.uuid4().hex, "host": socket.gethostname(), "at": time.time()}).encode()
    while not put_if_absent(fs, lock, me):
        _break_expired(fs, lock)
        if time.monotonic() >= deadline:
            raise _timed_out(timeout_s)
        time.sleep(max(poll_s, 0.2))
    try:
        yield
    finally:
        with contextlib.suppress(FileNotFoundError):
            if fs.cat_file(lock) == me:
                fs.rm_file(lock)


def _timed_out(timeout_s: float) -> InputError:
    return InputError("--lock-timeout", f"another build held the atlas for more than {timeout_s:g} s; "
                      "nothing was committed (try again, or give a longer --lock-timeout)")


def _break_expired(fs, lock: str) -> None:
    with contextlib.suppress(FileNotFoundError, ValueError, OSError):
        doc = json.loads(fs.cat_file(lock))
        if time.time() - float(doc.get("at", 0)) > LEASE_S:
            fs.rm_file(lock)


def merge(theirs: dict | None, base_stores: set[str], ours: list[tuple[dict, bool]],
          exists) -> list[dict]:
    """The catalog's stars after this build: ours plus what others committed since we began.

    ``theirs`` is the catalog as it is now, ``base_stores`` the stores the catalog named
    when this build began, ``ours`` pairs of (record, kept) with the id each would like
    (a kept star its old id, a built one its slug).  A star another build committed
    meanwhile (its store not in ``base_stores``) stays unless this build has the same file;
    a kept record whose store another build replaced takes that build's record instead.
    ``exists(store)`` says whether a store is on disk.  Returns records with unique ids.
    """
    now = [StarRecord.from_dict(r) for r in (theirs or {}).get("stars", [])]
    by_key = {r.key: r for r in now}
    named = {r.store for r in now}
    mine, keys = [], set()
    for rec, kept in ours:
        r = StarRecord.from_dict(rec)
        if kept and r.store not in named and not exists(r.store):
            r = by_key.get(r.key)
            if r is None:
                continue  # its store is gone and nothing replaced it
        mine.append((r, kept))
        keys.add(r.key)
    others = [r for r in now if r.store not in base_stores and r.key not in keys
              and r.store not in {m.store for m, _ in mine}]
    taken = {r.id for r in others}
    out = list(others)
    for r, _kept in sorted(mine, key=lambda m: not m[1]):  # kept stars keep their ids first
        r.id = unique_id(r.id, taken)
        taken.add(r.id)
        out.append(r)
    order = {id(r): i for i, (r, _) in enumerate(mine)}
    out.sort(key=lambda r: order.get(id(r), -1))  # others first, then ours in input order
    return [r.as_dict() for r in out]


def remove_stale(atlas_url: str, catalog: dict) -> list[str]:
    """Remove stores under ``stars/`` the committed catalog does not name and no live build
    is writing (call under the lock)."""
    from atlas.store.write import writer_alive

    fs, path = fs_of(atlas_url)
    keep = {r["store"] for r in catalog.get("stars", [])}
    removed = []
    spath = f"{path}/{STARS}"
    if not fs.exists(spath):
        return removed
    for entry in fs.ls(spath, detail=False):
        name = f"{STARS}/{entry.rstrip('/').rsplit('/', 1)[-1]}"
        if name.endswith(".zarr") and name not in keep and not writer_alive(atlas_url, name):
            fs.rm(entry, recursive=True)
            removed.append(name)
    return removed
