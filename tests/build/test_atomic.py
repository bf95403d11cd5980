"""A build killed at any moment leaves the previous atlas readable and unchanged."""

from __future__ import annotations

import contextlib
import hashlib
import os
import signal
import subprocess
import sys
import time
from pathlib import Path

import numpy as np
import pytest

from atlas import store
from atlas.build import build_atlas
from atlas.lod import clear_cache, window
from atlas.store import open_atlas
from atlas.store.write import MANIFEST

from ._data import star_files


def _snapshot(atlas: Path) -> dict:
    """Bytes digest of atlas.json and of every file in the stores it names."""
    out = {"atlas.json": hashlib.sha256((atlas / "atlas.json").read_bytes()).hexdigest()}
    for rec in open_atlas(atlas).stars:
        for p in sorted((atlas / rec["store"]).rglob("*")):
            if p.is_file():
                out[str(p.relative_to(atlas))] = hashlib.sha256(p.read_bytes()).hexdigest()
    return out


def _readable(atlas: Path):
    clear_cache()
    a = open_atlas(atlas)
    for rec in a.stars:
        ds = a.star(rec["id"]).load()
        assert ds.sizes["strip"] == rec["strips"]
        r = window(ds, 0, 0.0, 1e9, 500)
        assert len(r["wavelength"]) <= 500


def _new_stores(atlas: Path, old: set) -> set:
    d = atlas / "stars"
    return {p.name for p in d.iterdir()} - old if d.exists() else set()


@pytest.mark.slow
def test_killed_build_leaves_the_old_atlas_as_it_was(tmp_path):
    files = star_files(tmp_path, 3, n=40_000)
    atlas = tmp_path / "atlas"
    build_atlas(files, atlas, progress=False)
    before = _snapshot(atlas)
    old_stores = {p.name for p in (atlas / "stars").iterdir()}
    _readable(atlas)

    env = dict(os.environ)
    cmd = [sys.executable, "-m", "atlas", "build", *map(str, files), "--out", str(atlas), "--force", "--quiet"]
    # Moments: while starting up; as the first new store appears; as the second appears
    # (the first complete, the second being written); as the first store's features are
    # written; with every store sealed, waiting for the commit lock (held here).
    moments = [("start", lambda: False, 1.0, False),
               ("first store", lambda: len(_new_stores(atlas, old_stores)) >= 1, None, False),
               ("second store", lambda: len(_new_stores(atlas, old_stores)) >= 2, None, False),
               ("features", lambda: _new_with(atlas, old_stores, "features/zarr.json") >= 1, None, False),
               ("waiting for the lock", lambda: _new_with(atlas, old_stores, MANIFEST) >= 3, None, True)]
    killed_before_commit = 0
    for name, ready, after_s, hold in moments:
        lock = store.atlas_lock(str(atlas)) if hold else contextlib.nullcontext()
        with lock:
            finished = _run_until(cmd, env, tmp_path, ready, after_s)
        if finished:  # the build won the race and committed: the new atlas must be whole
            _readable(atlas)
            continue
        killed_before_commit += 1
        assert _snapshot(atlas) == before, f"killed at {name}: the old atlas changed"
        _readable(atlas)
    assert killed_before_commit >= 4

    # A full build afterwards commits and removes every partial store left by the kills.
    rep = build_atlas(files, atlas, force=True, progress=False)
    assert rep.committed
    names = {r["store"].split("/")[1] for r in rep.catalog["stars"]}
    assert {p.name for p in (atlas / "stars").iterdir()} == names
    assert not list(atlas.glob(".atlas.json.*"))
    _readable(atlas)
    assert np.all([r["strips"] > 0 for r in rep.catalog["stars"]])


def _new_with(atlas: Path, old: set, rel: str) -> int:
    """New stores (not in ``old``) that already hold the file ``rel``."""
    return sum(1 for n in _new_stores(atlas, old) if (atlas / "stars" / n / rel).exists())


def _run_until(cmd, env, cwd, ready, after_s) -> bool:
    """Start a build, SIGKILL it at the moment; True if it had finished by itself first."""
    proc = subprocess.Popen(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, env=env, cwd=cwd)
    try:
        t0 = time.monotonic()
        while proc.poll() is None and time.monotonic() - t0 < 120:
            if ready() or (after_s is not None and time.monotonic() - t0 >= after_s):
                break
            time.sleep(0.005)
        return proc.poll() is not None
    finally:
        proc.send_signal(signal.SIGKILL)
        proc.wait()
