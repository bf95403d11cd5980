"""A dask.distributed build (two local worker processes) equals the serial build."""

from __future__ import annotations

import json

import numpy as np
import pytest

from atlas.build import build_atlas
from atlas.store import open_atlas

from ._data import star_files
from .conftest import fast_b_lambda

pytest.importorskip("atlas.io")


def _patch_planck(fast):
    from atlas.physics import planck

    planck.b_lambda = fast


@pytest.mark.slow
def test_two_workers_build_the_same_atlas_as_serial(tmp_path):
    import logging

    from dask.distributed import Client, LocalCluster

    files = star_files(tmp_path, 3, n=20_000)
    serial = build_atlas(files, tmp_path / "serial", progress=False)
    with LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=":0",
                      silence_logs=logging.ERROR) as cluster, Client(cluster) as client:
        # The same speed-up as in-process (see conftest.py), on each worker process.
        client.run(_patch_planck, fast_b_lambda)
        parallel = build_atlas(files, tmp_path / "parallel", scheduler=cluster.scheduler_address,
                               progress=False)
    assert serial.committed and parallel.committed
    a = json.loads((tmp_path / "serial" / "atlas.json").read_text())
    b = json.loads((tmp_path / "parallel" / "atlas.json").read_text())
    a.pop("built_utc"), b.pop("built_utc")
    assert a == b
    sa, sb = open_atlas(tmp_path / "serial"), open_atlas(tmp_path / "parallel")
    for sid in sa.ids:
        da, db = sa.star(sid).load(), sb.star(sid).load()
        assert da.attrs == db.attrs
        for v in da.variables:
            np.testing.assert_array_equal(da[v].values, db[v].values)
        for j in range(1, da.attrs["lod_levels"] + 1):
            la, lb = sa.level(sid, j).load(), sb.level(sid, j).load()
            for v in la.data_vars:
                np.testing.assert_array_equal(la[v].values, lb[v].values)
