"""Browser tests: a real ``striae serve`` on a loopback port, driven by Debian's chromium."""

from __future__ import annotations

import importlib.util
import os
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


@pytest.fixture(scope="session")
def server(tmp_path_factory, fixture_mod):
    """Build a small atlas in tmp, serve it with ``striae serve``; yields the base URL."""
    root = tmp_path_factory.mktemp("browser")
    atlas_dir = fixture_mod.build_test_atlas(root)
    for sub in ("cache", "config", "data"):
        (root / sub).mkdir()
    port = _free_port()
    env = dict(os.environ, HOME=str(root), XDG_CACHE_HOME=str(root / "cache"),
               XDG_CONFIG_HOME=str(root / "config"), XDG_DATA_HOME=str(root / "data"))
    log = open(root / "serve.log", "w")
    proc = subprocess.Popen([sys.executable, "-m", "atlas", "serve", str(atlas_dir), "--port", str(port)],
                            stdout=log, stderr=subprocess.STDOUT, env=env)
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
            proc.kill()
            pytest.fail(f"striae serve did not start: {(root / 'serve.log').read_text()[-2000:]}")
        time.sleep(0.3)
    yield {"url": url, "atlas": atlas_dir, "log": root / "serve.log"}
    proc.terminate()
    try:
        proc.wait(timeout=10)
    except subprocess.TimeoutExpired:
        proc.kill()
    log.close()


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
