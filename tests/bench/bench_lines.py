"""Benchmark of the predicted lines: prediction time per star on the dense list, and the
viewer's marker query per strip from a star's stored ``lines`` group.

Prints figures only; never fails on them.  Run: .venv/bin/python tests/bench/bench_lines.py
Targets (issue 14): prediction <= 1 s per star; marker query <= 5 ms per strip.
"""

from __future__ import annotations

import sys
import tempfile
import time
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(ROOT))

from atlas.app import markers  # noqa: E402
from atlas.app.data import AtlasData  # noqa: E402
from atlas.app.frames import Frame  # noqa: E402
from atlas.build import build_atlas  # noqa: E402
from atlas.lines.dense import load_merged_lines  # noqa: E402
from atlas.lines.predict import predict_depths  # noqa: E402
from atlas.store.read import clear_cache  # noqa: E402

STARS = (("O7 V", 37300.0, 4.0), ("B5 V", 15700.0, 4.2), ("A0 V", 9700.0, 4.2),
         ("G2 V", 5772.0, 4.44), ("K0 III", 4800.0, 2.5), ("M3 V", 3430.0, 4.8))


def best_of(fn, n=3):
    times = []
    for _ in range(n):
        t0 = time.perf_counter()
        out = fn()
        times.append(time.perf_counter() - t0)
    return min(times), out


def bench_prediction(lines):
    print(f"prediction on {len(lines):,} listed lines (best of 3; target <= 1 s per star):")
    for name, teff, logg in STARS:
        t, pred = best_of(lambda teff=teff, logg=logg: predict_depths(lines, teff, logg))
        print(f"  {name:7s} {teff:7.0f} K  {t * 1e3:7.1f} ms  {len(pred):6,d} lines deeper than 1 %")


def bench_markers():
    demo = ROOT / "demo_spectra" / "marrows_lamp_2025-03-02.fits"
    with tempfile.TemporaryDirectory() as tmp:
        atlas = Path(tmp) / "atlas"
        t0 = time.perf_counter()
        rep = build_atlas([demo], atlas, progress=False)
        print(f"built the demo G2 V star in {time.perf_counter() - t0:.1f} s (committed: {rep.committed})")
        clear_cache()
        data = AtlasData(atlas)
        sid = data.star_ids[0]
        t0 = time.perf_counter()
        star_lines = data.star_lines(sid)
        t_read = time.perf_counter() - t0
        rec = data.record(sid)
        # observed frame, vacuum: the strips' own wavelengths are the displayed ones
        frame = Frame("observed", "vacuum", rec.get("rv_kms"), rec.get("barycentric_kms"))
        t_place, placed = best_of(lambda: markers.place(star_lines, frame))
        lo, hi = data.strip_bounds(sid)
        per = []
        for a, b in zip(lo, hi, strict=True):
            t0 = time.perf_counter()
            markers.visible(placed, float(a), float(b), medium="vacuum", width_px=1200)
            per.append(time.perf_counter() - t0)
        per = np.array(per) * 1e3
        print(f"lines group: {len(star_lines):,} rows read in {t_read * 1e3:.1f} ms (once per star and process)")
        print(f"placing them in a frame: {t_place * 1e3:.1f} ms (once per star and frame)")
        print(f"marker query per strip over {len(per)} strips: median {np.median(per):.2f} ms, "
              f"max {per.max():.2f} ms (target <= 5 ms)")
        full = load_merged_lines()
        t_full, placed_full = best_of(lambda: markers.place(full, frame))
        per_full = []
        for a, b in zip(lo[:50], hi[:50], strict=True):
            t0 = time.perf_counter()
            markers.visible(placed_full, float(a), float(b), medium="vacuum", width_px=1200)
            per_full.append(time.perf_counter() - t0)
        print(f"for comparison, the whole list of {len(full):,} lines: placing {t_full * 1e3:.1f} ms "
              f"({t_full / t_place:.1f}x), per strip median {np.median(per_full) * 1e3:.2f} ms "
              f"({np.median(per_full) * 1e3 / np.median(per):.1f}x)")


def main() -> int:
    lines = load_merged_lines()
    bench_prediction(lines)
    bench_markers()
    return 0


if __name__ == "__main__":
    raise SystemExit(main())
