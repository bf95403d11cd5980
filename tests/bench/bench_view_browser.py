"""Viewer benchmark in Chromium: first canvas, page step, concurrent sessions.

Prints figures beside their targets (one run, ratios measured within this run); never
fails on speed.

* first canvas after the request: ``striae serve`` against a bare Panel page holding one
  Bokeh plot served the same way (``panel.serve`` in a process of its own), median of 5
  fresh browser contexts each; target ratio <= 1.5;
* page step: PageDown pressed in the page until the first strip's new range is drawn (the
  next animation frame after the document changed), p50 of 15; target <= 150 ms;
* 64 concurrent sessions against ``striae serve --procs 2``: 64 page requests at once (each
  opens a server session); errors and p95 latency; target 0 and <= 300 ms.

    .venv/bin/python tests/bench/bench_view_browser.py [--samples 1000000]
"""

from __future__ import annotations

import argparse
import os
import socket
import statistics
import subprocess
import sys
import tempfile
import textwrap
import threading
import time
import urllib.request
from pathlib import Path

REPO = Path(__file__).resolve().parents[2]
sys.path.insert(0, str(REPO))



def build(folder: Path, n: int, sid: str, env: dict) -> tuple[Path, str]:
    """An invented spectrum of ``n`` samples (1 km/s steps, absorption dips every 40 Å)
    written as CSV and built with ``striae build``; returns (atlas folder, star id)."""
    import numpy as np

    wave = 4000.0 * np.exp(np.arange(n) / 299_792.458)
    flux = 1000.0 * (1.0 + 0.1 * np.sin(wave / 300.0))
    for w0 in np.arange(4020.0, wave[-1], 40.0):
        flux *= 1.0 - 0.5 * np.exp(-0.5 * ((wave - w0) / 0.3) ** 2)
    flux += np.random.default_rng(1).normal(0.0, 5.0, n)
    csv = folder / f"{sid}.csv"
    with open(csv, "w") as fh:
        fh.write(f"# target: {sid}\n# medium: vacuum\nwavelength_A,flux\n")
        np.savetxt(fh, np.column_stack([wave, flux]), fmt=["%.6f", "%.3f"], delimiter=",")
    out = folder / "atlas"
    t = time.perf_counter()
    subprocess.run([sys.executable, "-m", "atlas", "build", str(csv), "--out", str(out)], check=True,
                   env=env, stdout=subprocess.DEVNULL)
    print(f"  built {sid}: {n:,} samples in {time.perf_counter() - t:.0f} s")
    import json

    return out, json.loads((out / "atlas.json").read_text())["stars"][0]["id"]

CHROMIUM = "/usr/bin/chromium"
ARGS = ["--no-sandbox", "--disable-gpu", "--disable-dev-shm-usage", "--disable-background-networking",
        "--no-first-run", "--disable-quic", "--disable-sync"]

BARE = textwrap.dedent("""
    import sys
    import numpy as np
    import panel as pn
    from bokeh.plotting import figure

    def page():
        x = np.linspace(0, 1, 2000)
        f = figure(height=300, sizing_mode="stretch_width")
        f.line(x, np.sin(40 * x))
        return pn.pane.Bokeh(f, sizing_mode="stretch_width")

    pn.serve({"/": page}, port=int(sys.argv[1]), address="127.0.0.1", show=False,
             websocket_origin=["127.0.0.1:" + sys.argv[1]])
""")

HAS_CANVAS = """() => {
  function walk(root) {
    if (root.querySelector('canvas')) { return true; }
    for (const el of root.querySelectorAll('*')) { if (el.shadowRoot && walk(el.shadowRoot)) { return true; } }
    return false;
  }
  return walk(document);
}"""

STEP = """async () => {
  const doc = Bokeh.documents[0];
  const f = doc.get_model_by_name('strip-0');
  const start = f.x_range.start;
  const t0 = window.__striae_t0;
  while (f.x_range.start === start) { await new Promise(r => requestAnimationFrame(r)); }
  await new Promise(r => requestAnimationFrame(r));
  return performance.now() - t0;
}"""


def free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


def start(cmd, url, env):
    proc = subprocess.Popen(cmd, stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, env=env,
                            start_new_session=True)
    end = time.monotonic() + 120
    while time.monotonic() < end:
        try:
            with urllib.request.urlopen(url, timeout=10) as r:
                r.read()
            return proc
        except OSError:
            time.sleep(0.3)
    proc.kill()
    raise RuntimeError(f"server did not start: {cmd}")


def stop(proc):
    import signal

    try:
        os.killpg(proc.pid, signal.SIGTERM)
    except ProcessLookupError:
        return
    try:
        proc.wait(10)
    except subprocess.TimeoutExpired:
        os.killpg(proc.pid, signal.SIGKILL)


def first_canvas_s(browser, url, n=5) -> list[float]:
    out = []
    for _ in range(n):
        ctx = browser.new_context(viewport={"width": 1400, "height": 900})
        page = ctx.new_page()
        t = time.perf_counter()
        page.goto(url)
        page.wait_for_function(HAS_CANVAS, polling="raf", timeout=60_000)
        out.append(time.perf_counter() - t)
        ctx.close()
    return out


def page_steps_ms(browser, url, n=15) -> list[float]:
    ctx = browser.new_context(viewport={"width": 1400, "height": 900})
    page = ctx.new_page()
    page.goto(url)
    page.wait_for_function("() => window.Bokeh && Bokeh.documents.length && "
                           "Bokeh.documents[0].get_model_by_name('strip-0')", timeout=60_000)
    time.sleep(2.0)
    page.evaluate("() => window.addEventListener('keydown', () => { window.__striae_t0 = performance.now(); },"
                  " {capture: true})")
    out = []
    for k in range(n):
        page.keyboard.press("PageDown" if k % 4 != 3 else "Home")
        out.append(float(page.evaluate(STEP)))
    ctx.close()
    return out


def concurrent_sessions(url, n=64) -> tuple[list[float], list[str]]:
    lat, errors = [], []
    lock = threading.Lock()
    go = threading.Event()

    def one():
        go.wait()
        t = time.perf_counter()
        try:
            with urllib.request.urlopen(url, timeout=120) as r:
                r.read()
                ok = r.status == 200
        except OSError as exc:
            ok, err = False, repr(exc)
        with lock:
            lat.append((time.perf_counter() - t) * 1e3)
            if not ok:
                errors.append(locals().get("err", "status"))

    threads = [threading.Thread(target=one) for _ in range(n)]
    for t in threads:
        t.start()
    go.set()
    for t in threads:
        t.join()
    return lat, errors


def main(argv=None):
    ap = argparse.ArgumentParser()
    ap.add_argument("--samples", type=int, default=1_000_000)
    args = ap.parse_args(argv)
    from playwright.sync_api import sync_playwright

    print("bench_view_browser: first canvas, page step, concurrent sessions (Chromium)")
    with tempfile.TemporaryDirectory(prefix="striae-bench-browser-") as tmp:
        home = Path(tmp) / "home"
        home.mkdir()
        env = dict(os.environ, PYTHONPATH=str(REPO), HOME=str(home), XDG_CONFIG_HOME=str(home),
                   XDG_CACHE_HOME=str(home))
        atlas_dir, sid = build(Path(tmp), args.samples, "big", env)
        bare_py = Path(tmp) / "bare.py"
        bare_py.write_text(BARE)
        p1, p2, p3 = free_port(), free_port(), free_port()
        viewer = start([sys.executable, "-m", "atlas", "serve", str(atlas_dir), "--port", str(p1)],
                       f"http://127.0.0.1:{p1}/", env)
        bare = start([sys.executable, str(bare_py), str(p2)], f"http://127.0.0.1:{p2}/", env)
        try:
            with sync_playwright() as pw:
                browser = pw.chromium.launch(executable_path=CHROMIUM, args=ARGS, headless=True)
                first_canvas_s(browser, f"http://127.0.0.1:{p2}/", 1)  # warm both servers once
                first_canvas_s(browser, f"http://127.0.0.1:{p1}/", 1)
                fb = first_canvas_s(browser, f"http://127.0.0.1:{p2}/")
                fv = first_canvas_s(browser, f"http://127.0.0.1:{p1}/")
                steps = page_steps_ms(browser, f"http://127.0.0.1:{p1}/?star={sid}&per_page=5")
                browser.close()
        finally:
            stop(viewer)
            stop(bare)
        mb, mv = statistics.median(fb), statistics.median(fv)
        print(f"  first canvas after the request: viewer median {mv * 1e3:.0f} ms, bare Panel page with "
              f"one Bokeh plot {mb * 1e3:.0f} ms: {mv / mb:.2f}x  [target <= 1.5x]")
        print(f"  page step, key press to drawn strips: p50 {statistics.median(steps):.0f} ms, "
              f"max {max(steps):.0f} ms over {len(steps)}  [target p50 <= 150 ms]")
        procs = start([sys.executable, "-m", "atlas", "serve", str(atlas_dir), "--port", str(p3),
                       "--procs", "2"], f"http://127.0.0.1:{p3}/", env)
        try:
            lat, errors = concurrent_sessions(f"http://127.0.0.1:{p3}/?star={sid}")
        finally:
            stop(procs)
        lat.sort()
        p95 = lat[int(0.95 * (len(lat) - 1))]
        print(f"  64 concurrent sessions (page requests at once) with --procs 2: {len(errors)} errors, "
              f"p50 {statistics.median(lat):.0f} ms, p95 {p95:.0f} ms  [target 0 errors, p95 <= 300 ms]")
        if errors:
            print("  first errors:", errors[:3])
        print(f"  (machine: {os.cpu_count()} cores, load average {os.getloadavg()[0]:.1f})")


if __name__ == "__main__":
    main()
