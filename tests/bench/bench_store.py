"""Benchmark of the store's integrity: verify against a plain read, checksums against none.

Prints figures with their targets; never fails on them (the machine is shared and noisy).
Run: .venv/bin/python tests/bench/bench_store.py  (or ``make bench``).  The spectra are
invented benchmark data written to a temporary folder.

1. ``atlas.store.verify_star`` (every file read and hashed against the manifest) per GB of
   stored bytes, against reading the same stores with ``xarray.open_zarr(...).load()``
   (every group), timed in this run.  Target: ratio <= 1.3.
2. Build throughput with chunk checksums (crc32c) and the manifest against the same
   without either, measured twice: (a) the storage step of one star alone (cut,
   normalise, envelopes, store, seal: the strictest measure) and (b) the whole build of
   one star from its file (read, store, measurements, features, seal: what a user waits
   for).  Target: ratio >= 0.9 (throughput with / without).
"""

from __future__ import annotations

import shutil
import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import xarray as xr

sys.path.insert(0, str(Path(__file__).resolve().parents[2]))

from atlas import store  # noqa: E402
from atlas.build import BuildOptions, prepare  # noqa: E402
from atlas.build import star as star_build  # noqa: E402
from atlas.spectrum import make_spectrum  # noqa: E402
from atlas.store import write as store_write  # noqa: E402

N_SAMPLES = 4_000_000
ROUNDS = 7
#: samples and alternating rounds of the whole-star build (b)
N_WHOLE, ROUNDS_WHOLE = 1_000_000, 3


def _spectrum(n: int, seed: int):
    rng = np.random.default_rng(seed)
    wave = 3800.0 * np.exp(np.arange(n) * (0.4 / 299792.458))
    flux = 1000.0 * (1 - 0.5 * np.exp(-0.5 * ((wave % 7.0) - 3.5) ** 2 / 0.01)) + rng.normal(0, 5, n)
    return make_spectrum(wave, flux, uncertainty=np.full(n, 5.0), medium="vacuum")


def _store_one(folder: Path, seq, plan, name: str, checksums: bool) -> float:
    store_write.CHECKSUMS = checksums
    t0 = time.perf_counter()
    assert store.claim(str(folder), name)
    star_build.write_star_arrays(str(folder), name, seq, plan, {"name": name})
    if checksums:
        store.seal(str(folder), name)
    dt = time.perf_counter() - t0
    store_write.CHECKSUMS = True
    return dt


def _whole_star(folder: Path, path: str, sha: str, k: int, checksums: bool) -> float:
    """One star built from its file (:func:`atlas.build.star.build_star`), timed."""
    seal = store.seal
    store_write.CHECKSUMS = checksums
    if not checksums:
        store.seal = lambda *_a: None
    try:
        t0 = time.perf_counter()
        star_build.build_star(path, BuildOptions(), str(folder / f"whole-{checksums}-{k}"), sha, frozenset())
        return time.perf_counter() - t0
    finally:
        store.seal = seal
        store_write.CHECKSUMS = True


def _whole_build_ratio(folder: Path) -> None:
    from astropy.io import fits

    from atlas.spectrum import sha256_of

    sp = _spectrum(N_WHOLE, 5)
    cols = [fits.Column(name="WAVE", format="D", unit="Angstrom", array=sp["wavelength"].values),
            fits.Column(name="FLUX", format="D", array=sp["flux"].values),
            fits.Column(name="ERR", format="D", array=sp["uncertainty"].values)]
    table = fits.BinTableHDU.from_columns(cols)
    table.header["TCTYP1"] = "WAVE"
    path = str(folder / "whole.fits")
    fits.HDUList([fits.PrimaryHDU(), table]).writeto(path)
    sha = sha256_of(path)
    with_s, without_s = [], []
    for k in range(ROUNDS_WHOLE):  # alternate, best of each
        without_s.append(_whole_star(folder, path, sha, k, False))
        with_s.append(_whole_star(folder, path, sha, k, True))
    print(f"whole star build ({N_WHOLE:,} samples, from its file) with checksums {min(with_s):.2f} s, "
          f"without {min(without_s):.2f} s; throughput ratio {min(without_s) / min(with_s):.2f} (target >= 0.9)")


def _read_all(url: str) -> None:
    import zarr

    g = zarr.open_group(url, mode="r", use_consolidated=True)
    xr.open_zarr(url, consolidated=True).load()
    for name, _ in g.groups():
        xr.open_zarr(url, group=name, consolidated=True).load()


def main() -> None:
    seq, plan, _ = prepare(_spectrum(N_SAMPLES, 3), BuildOptions())
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        with_s, without_s = [], []
        for k in range(ROUNDS):  # alternate, best of ROUNDS each
            with_s.append(_store_one(folder, seq, plan, f"stars/with-{k}.zarr", True))
            without_s.append(_store_one(folder, seq, plan, f"stars/without-{k}.zarr", False))
        name = "stars/with-0.zarr"
        rec = {"id": "bench", "store": name, "store_sha256": None}
        nbytes = sum(p.stat().st_size for p in (folder / name).rglob("*") if p.is_file())
        read_s, verify_s = [], []
        for _ in range(ROUNDS):
            t0 = time.perf_counter()
            _read_all(str(folder / name))
            read_s.append(time.perf_counter() - t0)
            t0 = time.perf_counter()
            check = store.verify_star(str(folder), rec)
            verify_s.append(time.perf_counter() - t0)
            assert check.ok and check.how == "manifest"
        gb = nbytes / 1e9
        print(f"store of {N_SAMPLES:,} samples: {nbytes / 2**20:.1f} MiB on disk, {plan.n_strips} strips")
        print(f"verify: {min(verify_s) / gb:.2f} s per GB; open_zarr().load() of the same store: "
              f"{min(read_s) / gb:.2f} s per GB; ratio {min(verify_s) / min(read_s):.2f} (target <= 1.3)")
        print(f"storage step alone with checksums {min(with_s):.3f} s, without {min(without_s):.3f} s; "
              f"throughput ratio {min(without_s) / min(with_s):.2f} (target >= 0.9)")
        shutil.rmtree(folder / "stars", ignore_errors=True)
        _whole_build_ratio(folder)


if __name__ == "__main__":
    main()
