"""Viewer benchmark: server time per view update, points sent, memory, concurrent sessions.

Prints figures next to their targets; never fails on speed.  Two invented spectra are
written through the build's own code (``atlas.build.prepare`` / ``star_arrays`` and
``atlas.store``), one of 10 million samples and one of 100 thousand, in a child process
so this process's memory holds only what the server holds.

    .venv/bin/python tests/bench/bench_view.py [--big 10000000] [--small 100000]
"""

from __future__ import annotations

import argparse
import os
import statistics
import subprocess
import sys
import tempfile
import threading
import time
import urllib.request
from pathlib import Path

import numpy as np

REPO = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(REPO))

C_KMS = 299_792.458

BUILD = r"""
import sys, numpy as np
from atlas import store
from atlas.build import BuildOptions, prepare, star_arrays, _strips_per_chunk
from atlas.spectrum import make_spectrum
out, n, sid = sys.argv[1], int(sys.argv[2]), sys.argv[3]
rng = np.random.default_rng(1)
wave = 4000.0 * np.exp(np.arange(n) * (0.6 / 299792.458))   # 0.6 km/s per sample
flux = 1000.0 * (1 + 0.05 * np.sin(np.arange(n) / 5e4))
for c in rng.uniform(wave[0], wave[-1], max(20, n // 2000)):  # invented absorption lines
    i = np.searchsorted(wave, c); sl = slice(max(0, i - 60), i + 60)
    flux[sl] *= 1 - 0.5 * np.exp(-0.5 * ((wave[sl] - c) / (c * 4 / 299792.458)) ** 2)
flux *= 1 + rng.normal(0, 0.01, n)
ds = make_spectrum(wave, flux, medium="vacuum", target=sid)
del wave, flux
opts = BuildOptions()
seq, plan, notes = prepare(ds, opts)
root, levels = star_arrays(seq, plan)
name = f"stars/{sid}-00000000.zarr"
store.write_star(out, name, root, levels, _strips_per_chunk(root.sizes["pixel"], root.sizes["strip"]))
rec = {k: None for k in store.RECORD_KEYS}
rec.update(id=sid, name=sid, store=name, source=f"{sid}.fits", source_sha256="0" * 64,
           wavelength_min_A=float(seq["wavelength"][0]), wavelength_max_A=float(seq["wavelength"][-1]),
           medium="vacuum", samples=n, strips=int(plan.n_strips), rv_kms=12.0, barycentric_kms=-3.0)
store.write_catalog(out, {"format": 1, "tool_version": "bench", "built_utc": "2026-01-01T00:00:00Z",
                          "options": opts.as_dict(), "stars": [rec]})
print(plan.n_strips, root.sizes["pixel"])
"""


def build(folder: Path, n: int, sid: str) -> tuple[Path, str]:
    out = folder / sid
    if not (out / "atlas.json").exists():
        t = time.perf_counter()
        r = subprocess.run([sys.executable, "-c", BUILD, str(out), str(n), sid], capture_output=True,
                           text=True, cwd=REPO)
        if r.returncode:
            sys.exit(f"bench_view: building the {sid} atlas failed:\n{r.stderr[-2000:]}")
        print(f"  built {sid}: {n:,} samples, strips x pixels = {r.stdout.split()} "
              f"in {time.perf_counter() - t:.1f} s")
    return out, sid


class _Ev:
    def __init__(self, x0, x1):
        self.x0, self.x1 = x0, x1


def view_updates(atlas_dir, sid, n_updates, rng, width_px=1100, cold=False):
    """Time zoom updates (one strip) and page steps (a page of strips) on one Viewer.

    ``cold``: empty atlas.lod's decoded-strip cache before each page step, so every strip
    is read from the store (as for a page nobody has looked at yet)."""
    from atlas import lod
    from atlas.app.data import open_view_atlas
    from atlas.app.state import ViewState
    from atlas.app.viewer import Viewer

    data = open_view_atlas(atlas_dir)
    state = ViewState()
    state.param.update(star=sid, per_page=5)
    v = Viewer(data, state)
    n_pages = v.vm.n_pages()
    zoom_ms, page_ms, sent, full = [], [], [], []
    n_strip_samples = data.record(sid)["samples"] / max(1, v.vm.n_strips())
    for _ in range(n_updates):
        p = int(rng.integers(1, n_pages + 1))
        if cold:
            lod.clear_cache()
        t = time.perf_counter()
        state.param.update(page=p, lo=None, hi=None)
        page_ms.append((time.perf_counter() - t) * 1e3 / max(1, len(v.vm.page_strips())))
        slot = v.strips.slots[int(rng.integers(0, len(v.vm.page_strips())))]
        a, b = slot.fig.x_range.start, slot.fig.x_range.end
        f = 10 ** rng.uniform(-3, -0.1)  # from 0.1% to 80% of the strip
        x0 = a + rng.uniform(0, 1 - f) * (b - a)
        t = time.perf_counter()
        v.strips.on_range(slot, _Ev(x0, x0 + f * (b - a)))
        zoom_ms.append((time.perf_counter() - t) * 1e3)
        shown = [s for s in v.strips.slots if s.fig.visible]
        sent.append(max(len(s.src.data["x"]) for s in shown))
        full.append(n_strip_samples)
    return {"zoom_ms": zoom_ms, "page_ms_per_strip": page_ms, "max_sent": max(sent),
            "full": float(np.mean(full)), "width": width_px}


def concurrent_sessions(atlas_dir, n_sessions, n_updates):
    """A real Panel/Bokeh server in this process on loopback; n_sessions page loads create
    server-side sessions; each session then gets n_updates view updates scheduled on its
    document (``add_next_tick_callback``, the server's own machinery) from its own thread."""
    import panel as pn
    from tornado.ioloop import IOLoop

    from atlas.app import serve as app_serve

    docs = []

    def app():
        box = {}
        layout = app_serve.create_session(atlas_dir, keep=box)
        docs.append((pn.state.curdoc, box["viewer"]))
        return layout

    loop_ready = threading.Event()
    holder = {}

    def run_server():
        import asyncio

        asyncio.set_event_loop(asyncio.new_event_loop())
        loop = IOLoop.current()
        server = pn.io.server.get_server({"/": app}, port=0, address="127.0.0.1", start=False,
                                         unused_session_lifetime_milliseconds=3_600_000,
                                         check_unused_sessions_milliseconds=3_600_000,
                                         websocket_origin=["127.0.0.1"])
        server.start()
        holder["server"], holder["loop"] = server, loop
        loop_ready.set()
        loop.start()

    th = threading.Thread(target=run_server, daemon=True)
    th.start()
    loop_ready.wait(60)
    port = holder["server"].port
    url = f"http://127.0.0.1:{port}/"
    t_open = []
    for _ in range(n_sessions):
        t = time.perf_counter()
        with urllib.request.urlopen(url, timeout=120) as r:
            r.read()
        t_open.append(time.perf_counter() - t)
    errors, lat = [], []
    lock = threading.Lock()

    def worker(doc, viewer, seed):
        rng = np.random.default_rng(seed)
        for _ in range(n_updates):
            done = threading.Event()
            box = {}

            def cb(viewer=viewer, box=box, done=done):
                try:
                    v = viewer
                    if rng.random() < 0.5:
                        v.controls.key("page+" if rng.random() < 0.7 else "page-")
                    else:
                        slot = v.strips.slots[0]
                        a, b = slot.fig.x_range.start, slot.fig.x_range.end
                        f = 10 ** rng.uniform(-2.5, -0.2)
                        x0 = a + rng.uniform(0, 1 - f) * (b - a)
                        v.strips.on_range(slot, _Ev(x0, x0 + f * (b - a)))
                except Exception as exc:  # counted, not raised
                    box["err"] = repr(exc)
                finally:
                    done.set()

            t = time.perf_counter()
            doc.add_next_tick_callback(cb)
            if not done.wait(120):
                box["err"] = "timeout"
            with lock:
                lat.append((time.perf_counter() - t) * 1e3)
                if "err" in box:
                    errors.append(box["err"])

    threads = [threading.Thread(target=worker, args=(d, v, i)) for i, (d, v) in enumerate(docs)]
    t = time.perf_counter()
    for w in threads:
        w.start()
    for w in threads:
        w.join()
    wall = time.perf_counter() - t
    holder["loop"].add_callback(holder["loop"].stop)
    return {"sessions": len(docs), "errors": errors, "lat": lat, "wall": wall, "open_s": t_open}


def main(argv=None):
    ap = argparse.ArgumentParser()
    ap.add_argument("--big", type=int, default=10_000_000)
    ap.add_argument("--small", type=int, default=100_000)
    ap.add_argument("--updates", type=int, default=80)
    ap.add_argument("--sessions", type=int, default=32)
    ap.add_argument("--session-updates", type=int, default=50)
    ap.add_argument("--dir", help="keep the bench atlases here (default: a temporary folder)")
    args = ap.parse_args(argv)
    import psutil

    tmp = tempfile.TemporaryDirectory(prefix="striae-bench-view-") if not args.dir else None
    folder = Path(args.dir or tmp.name)
    folder.mkdir(parents=True, exist_ok=True)
    print("bench_view: viewer updates, points sent, memory, concurrent sessions")
    big = build(folder, args.big, "big")
    small = build(folder, args.small, "small")
    rng = np.random.default_rng(3)
    rs = view_updates(*small, args.updates, rng)
    rb = view_updates(*big, args.updates, rng)
    cs = view_updates(*small, args.updates, rng, cold=True)
    cb = view_updates(*big, args.updates, rng, cold=True)
    med_b, med_s = statistics.median(rb["zoom_ms"]), statistics.median(rs["zoom_ms"])
    pb, ps = statistics.median(rb["page_ms_per_strip"]), statistics.median(rs["page_ms_per_strip"])
    print(f"  zoom update, one strip: median {med_b:.1f} ms ({args.big:,} samples) vs {med_s:.1f} ms "
          f"({args.small:,}); ratio {med_b / med_s:.2f}  [targets: ratio <= 1.5, median <= 30 ms]")
    print(f"  page step, per strip, random pages (all 17 small-atlas strips stay in the per-process strip"
          f" cache; most big-atlas strips are read from the store): median {pb:.1f} ms "
          f"({args.big:,}) vs {ps:.1f} ms ({args.small:,}); ratio {pb / ps:.2f}  [same targets]")
    cpb = statistics.median(cb["page_ms_per_strip"])
    cps = statistics.median(cs["page_ms_per_strip"])
    print(f"  page step, per strip, every strip read from the store: median {cpb:.1f} ms ({args.big:,}) "
          f"vs {cps:.1f} ms ({args.small:,}); ratio {cpb / cps:.2f}  [same targets]")
    print(f"  points sent per strip view: at most {rb['max_sent']} for a {rb['width']} px plot (the width assumed"
          f" before a browser reports one) "
          f"(2 x width = {2 * rb['width']}) vs {rb['full']:,.0f} samples in a whole strip array; "
          f"whole spectrum {args.big:,}  [target <= 2 x pixel width]")
    rss = psutil.Process().memory_info().rss / 2**20
    print(f"  server RSS with the {args.big:,}-sample atlas open and viewed: {rss:.0f} MB  [target <= 400 MB]")
    rc = concurrent_sessions(big[0], args.sessions, args.session_updates)
    lat = np.array(rc["lat"])
    print(f"  {rc['sessions']} concurrent sessions x {args.session_updates} updates on loopback: "
          f"errors {len(rc['errors'])} [target 0], latency p50 {np.percentile(lat, 50):.0f} ms, "
          f"p95 {np.percentile(lat, 95):.0f} ms, wall {rc['wall']:.1f} s; "
          f"page load (session creation) median {statistics.median(rc['open_s']):.2f} s")
    if rc["errors"]:
        print("  first errors:", rc["errors"][:3])
    print(f"  (machine: {os.cpu_count()} cores, load average {os.getloadavg()[0]:.1f})")
    if tmp:
        tmp.cleanup()
    return 0


if __name__ == "__main__":
    sys.exit(main())
