"""A dask.distributed build (two local worker processes, or a cluster by address) equals the serial build."""

from __future__ import annotations

import json

import numpy as np
import pytest

from atlas.build import build_atlas
from atlas.store import open_atlas

from ._data import star_files


@pytest.mark.slow
def test_two_workers_build_the_same_atlas_as_serial(tmp_path):
    import logging

    from dask.distributed import LocalCluster

    files = star_files(tmp_path, 3, n=20_000)
    serial = build_atlas(files, tmp_path / "serial", progress=False)
    local = build_atlas(files, tmp_path / "local", workers=2, progress=False)  # --workers 2
    with LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=":0",
                      silence_logs=logging.ERROR) as cluster:  # --scheduler ADDRESS
        remote = build_atlas(files, tmp_path / "remote", scheduler=cluster.scheduler_address,
                             progress=False)
    assert serial.committed and local.committed and remote.committed
    for other in ("local", "remote"):
        _assert_same_atlas(tmp_path / "serial", tmp_path / other)


def _assert_same_atlas(pa, pb):
    a = json.loads((pa / "atlas.json").read_text())
    b = json.loads((pb / "atlas.json").read_text())
    a.pop("built_utc"), b.pop("built_utc")
    assert a == b
    sa, sb = open_atlas(pa), open_atlas(pb)
    for sid in sa.ids:
        da, db = sa.star(sid).load(), sb.star(sid).load()
        assert da.attrs == db.attrs
        for v in da.variables:
            np.testing.assert_array_equal(da[v].values, db[v].values)
        for j in range(1, da.attrs["lod_levels"] + 1):
            la, lb = sa.level(sid, j).load(), sb.level(sid, j).load()
            for v in la.data_vars:
                np.testing.assert_array_equal(la[v].values, lb[v].values)
