"""Building on dask.distributed: a local cluster of forked single-threaded workers, or an
existing cluster (``--scheduler``); the same per-star function as a serial build."""

from __future__ import annotations

import sys

from atlas.build.star import build_star_safe
from atlas.errors import InputError


def one_blas_thread() -> int:
    """Set every OpenBLAS loaded in this process to one thread; returns how many were set.

    A forked worker keeps the OpenBLAS thread pools numpy and scipy made in the parent
    (one thread per core), so ``OMP_NUM_THREADS=1`` comes too late for it; two workers
    on two cores then each ran two BLAS threads, and a 20-star build took about 15 %
    longer here.  Finds the libraries in ``/proc/self/maps``; elsewhere it does nothing.
    """
    import ctypes

    try:
        with open("/proc/self/maps") as fh:
            paths = sorted({ln.split()[-1] for ln in fh if "openblas" in ln.lower() and ".so" in ln})
    except OSError:
        return 0
    names = ("openblas_set_num_threads", "openblas_set_num_threads64_",
             "scipy_openblas_set_num_threads", "scipy_openblas_set_num_threads64_")
    done = 0
    for path in paths:
        try:
            lib = ctypes.CDLL(path)
        except OSError:
            continue
        for name in names:
            fn = getattr(lib, name, None)
            if fn is not None:
                fn(1)
                done += 1
                break
    return done


def run_dask(todo, options, atlas_url, in_use, workers, scheduler, done) -> dict:
    """Build ``todo`` ((path, sha) pairs) on dask workers; ``done(path, result)`` as each ends."""
    import logging

    from dask.distributed import Client, LocalCluster, as_completed

    cluster = None
    if scheduler:
        try:
            client = Client(scheduler, timeout="20s")
        except (OSError, TimeoutError) as exc:
            raise InputError("--scheduler", f"cannot reach {scheduler}: {exc}") from None
    else:
        import dask

        # Workers keep one thread each (no BLAS/OpenMP threads either), but not the low
        # MALLOC_TRIM_THRESHOLD_ dask sets by default: with it, every large numpy
        # allocation goes back to the kernel and is faulted in again, which made each
        # star about 1.5x slower here than in a plain process.
        environ = {k: v for k, v in dict(dask.config.get("distributed.nanny.pre-spawn-environ", {})).items()
                   if k != "MALLOC_TRIM_THRESHOLD_"}
        cfg = {"distributed.nanny.pre-spawn-environ": environ,
               # the workers' sampling profiler (every 10 ms, for the dashboard) took the
               # GIL from the build often enough to cost several per cent here
               "distributed.worker.profile.enabled": False}
        if sys.platform.startswith("linux"):
            # Forked workers start with this process's modules already imported; spawned
            # ones import everything again (measured here: cluster start 0.7 s instead
            # of 1.2 s, plus 0.75 s of imports, shut-down 0.03 s instead of 0.4 s).
            # zarr, fsspec and OpenBLAS reset their threads in a forked child.
            cfg["distributed.worker.multiprocessing-method"] = "fork"
            import atlas.io  # noqa: F401  (what build_star imports, so the workers inherit it)
            import atlas.measure.card  # noqa: F401
        with dask.config.set(cfg):
            cluster = LocalCluster(
                n_workers=int(workers),
                threads_per_worker=1,
                processes=True,
                dashboard_address=None,  # nobody is told its address: not started at all
                silence_logs=logging.ERROR,
            )
        client = Client(cluster)
        client.run(one_blas_thread)
    try:
        futs = {}
        for p, s in todo:
            f = client.submit(build_star_safe, p, options, atlas_url, s, in_use, pure=False)
            futs[f] = p
        results = {}
        for f in as_completed(list(futs)):
            try:
                results[futs[f]] = f.result()
            except Exception as exc:  # a worker died: report it like a bad file
                results[futs[f]] = {"error": f"cannot build: worker failed ({type(exc).__name__})"}
            done(futs[f], results[futs[f]])
        return results
    finally:
        client.close()
        if cluster is not None:
            cluster.close()
