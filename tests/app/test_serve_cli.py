"""``striae serve`` refuses a bad ATLAS with one line and exit code 2."""

from __future__ import annotations

import json
import signal
import socket
import subprocess
import sys
import time

import psutil
import pytest

from tests.conftest import assert_one_line_error


def test_missing_atlas(run_striae, tmp_path):
    assert_one_line_error(run_striae("serve", tmp_path / "nope"), "nope", "no such atlas folder")


def test_folder_without_catalog(run_striae, tmp_path):
    assert_one_line_error(run_striae("serve", tmp_path), "no atlas.json")


def test_catalog_of_another_format(run_striae, tmp_path):
    (tmp_path / "atlas.json").write_text(json.dumps({"format": 7, "stars": []}))
    assert_one_line_error(run_striae("serve", tmp_path), "atlas.json", "format")


def test_unreadable_catalog(run_striae, tmp_path):
    (tmp_path / "atlas.json").write_text("{not json")
    assert_one_line_error(run_striae("serve", tmp_path), "atlas.json")


@pytest.mark.parametrize("args,where", [(["--port", "0"], "--port"), (["--procs", "0"], "--procs")])
def test_bad_options(run_striae, built_atlas, args, where):
    assert_one_line_error(run_striae("serve", built_atlas, *args), where)


def _free_port() -> int:
    with socket.socket() as sock:
        sock.bind(("127.0.0.1", 0))
        return sock.getsockname()[1]


@pytest.mark.slow
def test_stopping_the_parent_stops_every_server_process(built_atlas):
    port = _free_port()
    proc = subprocess.Popen(
        [sys.executable, "-m", "atlas", "serve", str(built_atlas), "--port", str(port),
         "--procs", "2"],
        stdout=subprocess.DEVNULL, stderr=subprocess.DEVNULL, start_new_session=True,
    )
    try:
        parent = psutil.Process(proc.pid)
        deadline = time.monotonic() + 60
        while len(parent.children()) < 2 and time.monotonic() < deadline:
            time.sleep(0.2)
        workers = parent.children()
        assert len(workers) == 2, "the server did not fork two workers"
        proc.send_signal(signal.SIGTERM)
        proc.wait(timeout=30)
        gone, alive = psutil.wait_procs(workers, timeout=30)
        assert not alive, f"workers still running after SIGTERM to the parent: {alive}"
    finally:
        try:
            import os

            os.killpg(proc.pid, signal.SIGKILL)
        except ProcessLookupError:
            pass
