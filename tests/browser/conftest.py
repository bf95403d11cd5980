"""Browser tests: a real ``striae serve`` on a loopback port, driven by Debian's chromium."""

from __future__ import annotations

import importlib.util
import os
import signal
import socket
import subprocess
import sys
import time
import urllib.request
from pathlib import Path

import pytest

CHROMIUM = "/usr/bin/chromium"
ARGS = ["--no-sandbox", "--disable-gpu", "--disable-background-networking",
        "--disable-component-update", "--no-first-run", "--disable-quic", "--disable-sync"]

if not os.path.exists(CHROMIUM):
    pytest.skip(f"{CHROMIUM} is absent: browser tests need Debian's chromium (make chromium)",
                allow_module_level=True)


def _fixture_module():
    path = Path(__file__).resolve().parents[1] / "app" / "atlas_fixture.py"
    spec = importlib.util.spec_from_file_location("_striae_browser_atlas_fixture", path)
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod


def _free_port() -> int:
    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        return s.getsockname()[1]


@pytest.fixture(scope="session")
def fixture_mod():
    return _fixture_module()


def _serve(root: Path, atlas_dir: Path, *extra: str):
    """Start ``striae serve`` on a free loopback port (stdout and stderr to serve.log);
    returns (process, url, log path, log file) once the page answers."""
    for sub in ("cache", "config", "data"):
        (root / sub).mkdir(exist_ok=True)
    port = _free_port()
    env = dict(os.environ, HOME=str(root), XDG_CACHE_HOME=str(root / "cache"),
               XDG_CONFIG_HOME=str(root / "config"), XDG_DATA_HOME=str(root / "data"))
    log_path = root / "serve.log"
    log = open(log_path, "w")
    # a process group of its own: with --procs N the server forks workers, and stopping
    # only the parent would leave them running
    proc = subprocess.Popen([sys.executable, "-m", "atlas", "serve", str(atlas_dir), "--port", str(port),
                             *extra], stdout=log, stderr=subprocess.STDOUT, env=env, start_new_session=True)
    url = f"http://127.0.0.1:{port}/"
    deadline = time.monotonic() + 150
    while True:
        try:
            with urllib.request.urlopen(url, timeout=60) as r:
                if r.status == 200:
                    break
        except OSError:
            pass
        if proc.poll() is not None or time.monotonic() > deadline:
            _stop(proc, log)
            pytest.fail(f"striae serve did not start: {log_path.read_text()[-2000:]}")
        time.sleep(0.3)
    return proc, url, log_path, log


def _stop(proc, log):
    """Stop the server and its worker processes (its own process group)."""
    for sig in (signal.SIGTERM, signal.SIGKILL):
        try:
            os.killpg(proc.pid, sig)
        except ProcessLookupError:
            break
        try:
            proc.wait(timeout=10)
            time.sleep(0.5)  # give forked workers their SIGTERM too
        except subprocess.TimeoutExpired:
            continue
    try:
        os.killpg(proc.pid, signal.SIGKILL)  # any worker left behind
    except ProcessLookupError:
        pass
    log.close()


@pytest.fixture(scope="session")
def built_browser_atlas(tmp_path_factory, fixture_mod):
    """The small test atlas (two stars), built once for every browser test."""
    return fixture_mod.build_test_atlas(tmp_path_factory.mktemp("browser"))


@pytest.fixture(scope="session")
def server(tmp_path_factory, built_browser_atlas):
    """Serve the test atlas with ``striae serve``; yields the base URL, the atlas and the
    server's log (its stdout and stderr)."""
    root = tmp_path_factory.mktemp("serve1")
    proc, url, log_path, log = _serve(root, built_browser_atlas)
    yield {"url": url, "atlas": built_browser_atlas, "log": log_path}
    _stop(proc, log)


@pytest.fixture(scope="module")
def server_procs2(tmp_path_factory, built_browser_atlas):
    """The same atlas served by two processes (``--procs 2``)."""
    root = tmp_path_factory.mktemp("serve2")
    proc, url, log_path, log = _serve(root, built_browser_atlas, "--procs", "2")
    yield {"url": url, "atlas": built_browser_atlas, "log": log_path}
    _stop(proc, log)


@pytest.fixture(scope="session")
def viewer_browser(playwright, tmp_path_factory):
    """Chromium with a fresh profile (pytest-playwright's ``playwright`` fixture drives it)."""
    profile = tmp_path_factory.mktemp("chromium-profile")
    ctx = playwright.chromium.launch_persistent_context(
        str(profile), executable_path=CHROMIUM, headless=True, args=ARGS,
        viewport={"width": 1280, "height": 800},
    )
    yield ctx
    ctx.close()


@pytest.fixture
def viewer_page(viewer_browser):
    """A fresh tab that records console errors and page errors."""
    pg = viewer_browser.new_page()
    pg.errors = []
    pg.on("console", lambda m: pg.errors.append(m.text) if m.type == "error" else None)
    pg.on("pageerror", lambda e: pg.errors.append(str(e)))
    yield pg
    pg.close()


@pytest.fixture(scope="module")
def chromium(playwright):
    """A plain (non-persistent) Chromium, for tests that need fresh contexts."""
    b = playwright.chromium.launch(executable_path=CHROMIUM, headless=True, args=ARGS)
    yield b
    b.close()


def open_view(page, url, query=""):
    """Open the viewer and wait until the first strip holds data and Bokeh is idle."""
    page.goto(url + query)
    page.wait_for_function("() => window.Bokeh && Bokeh.documents.length > 0 && "
                           "Bokeh.documents[0].get_model_by_name('spectrum-0') && "
                           "Bokeh.documents[0].get_model_by_name('spectrum-0').data.x.length > 0",
                           timeout=90_000)
    page.wait_for_function("() => Bokeh.documents[0].is_idle", timeout=90_000)
    page.wait_for_timeout(800)


def wait_for(pred, timeout=30.0):
    end = time.monotonic() + timeout
    while time.monotonic() < end:
        v = pred()
        if v:
            return v
        time.sleep(0.2)
    return pred()


@pytest.fixture(scope="session")
def view_tools():
    """Helpers shared by the browser tests (the import mode keeps test modules apart)."""
    import types

    return types.SimpleNamespace(open_view=open_view, wait_for=wait_for, serve=_serve, stop=_stop)
