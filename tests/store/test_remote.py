"""Atlases on a static web host (http, read-only) and on an S3 endpoint, served by real
servers on loopback started here: Python's http.server and moto's S3 server."""

from __future__ import annotations

import functools
import http.server
import threading

import numpy as np
import pytest

from atlas import store
from atlas.build import build_atlas
from atlas.cli import main
from atlas.errors import InputError
from tests.build._data import star_files


@pytest.fixture(scope="module")
def local(tmp_path_factory):
    folder = tmp_path_factory.mktemp("remote")
    files = star_files(folder, 2, n=8000)
    atlas = folder / "site" / "atlas"
    assert build_atlas(files, atlas, progress=False).committed
    return files, atlas


@pytest.fixture(scope="module")
def web(local):
    """The atlas's parent folder on http://127.0.0.1:PORT/ (a static host)."""
    _, atlas = local
    handler = functools.partial(_Quiet, directory=str(atlas.parent))
    server = http.server.ThreadingHTTPServer(("127.0.0.1", 0), handler)
    threading.Thread(target=server.serve_forever, daemon=True).start()
    yield f"http://127.0.0.1:{server.server_address[1]}/atlas"
    server.shutdown()


class _Quiet(http.server.SimpleHTTPRequestHandler):
    def log_message(self, *args):
        pass


@pytest.fixture(scope="module")
def s3(monkeypatch_module):
    from moto.server import ThreadedMotoServer

    server = ThreadedMotoServer(ip_address="127.0.0.1", port=0)
    server.start()
    host, port = server.get_host_and_port()
    for k, v in {"AWS_ENDPOINT_URL": f"http://{host}:{port}", "AWS_ACCESS_KEY_ID": "test",
                 "AWS_SECRET_ACCESS_KEY": "test", "AWS_DEFAULT_REGION": "us-east-1"}.items():
        monkeypatch_module.setenv(k, v)
    import s3fs

    s3fs.S3FileSystem.clear_instance_cache()
    s3fs.S3FileSystem().mkdir("striae-test")
    yield "s3://striae-test"
    server.stop()


@pytest.fixture(scope="module")
def monkeypatch_module():
    mp = pytest.MonkeyPatch()
    yield mp
    mp.undo()


def _first_strip(url: str, star_id: str) -> dict:
    from atlas.app.data import AtlasData

    return AtlasData(url).window(star_id, 0, 0.0, 1e9, 400)


def _same(a: dict, b: dict):
    assert a["level"] == b["level"]
    np.testing.assert_array_equal(a["wavelength"], b["wavelength"])
    np.testing.assert_array_equal(a["flux"], b["flux"])


def test_an_atlas_on_a_static_web_host_shows_the_same_first_strip(local, web):
    _, atlas = local
    ids = store.open_atlas(atlas).ids
    assert store.open_atlas(web).ids == ids
    for sid in ids:
        _same(_first_strip(web, sid), _first_strip(str(atlas), sid))
    assert all(store.verify_star(web, r).ok for r in store.open_atlas(web).stars)


def test_building_into_a_web_host_is_refused_in_one_line(local, web, capsys):
    files, _ = local
    assert main(["build", str(files[0]), "--out", web + "2", "--quiet"]) == 2
    err = capsys.readouterr().err.strip().splitlines()
    assert err[-1].startswith(f"striae: {web}2: an http(s) atlas is read-only")


def test_build_into_s3_and_read_the_same_first_strip(local, s3):
    files, atlas = local
    url = f"{s3}/night"
    rep = build_atlas(files, url, progress=False)
    assert rep.committed and not rep.failed
    remote = store.open_atlas(url)
    assert remote.ids == store.open_atlas(atlas).ids
    for sid in remote.ids:
        _same(_first_strip(url, sid), _first_strip(str(atlas), sid))
    assert all(store.verify_star(url, r).ok for r in remote.stars)
    # a second build commits under the S3 lock object; its catalog is its own inputs
    rep2 = build_atlas(files[:1], url, progress=False, force=True)
    assert rep2.committed and len(store.open_atlas(url).stars) == 1


def test_the_s3_lock_is_a_conditional_create(s3):
    from atlas.store.catalog import put_if_absent
    from atlas.store.layout import fs_of

    fs, path = fs_of(f"{s3}/lockcheck")
    assert put_if_absent(fs, f"{path}/obj", b"one") is True
    assert put_if_absent(fs, f"{path}/obj", b"two") is False
    assert fs.cat_file(f"{path}/obj") == b"one"


def test_a_missing_back_end_is_one_line():
    with pytest.raises(InputError) as err:
        store.open_atlas("nosuchscheme-xyz://bucket/atlas")
    assert "nosuchscheme-xyz://bucket/atlas" == err.value.where


def test_striae_serve_opens_an_atlas_on_a_web_host(web, tmp_path):
    """``striae serve http://...`` starts and its page answers (the app reads over HTTP)."""
    import socket
    import subprocess
    import sys
    import time
    import urllib.request

    with socket.socket() as s:
        s.bind(("127.0.0.1", 0))
        port = s.getsockname()[1]
    log = open(tmp_path / "serve.log", "w")
    proc = subprocess.Popen([sys.executable, "-m", "atlas", "serve", web, "--port", str(port)],
                            stdout=log, stderr=subprocess.STDOUT)
    try:
        deadline, body = time.monotonic() + 120, ""
        while time.monotonic() < deadline and proc.poll() is None:
            try:
                with urllib.request.urlopen(f"http://127.0.0.1:{port}/", timeout=60) as r:
                    body = r.read().decode("utf-8", "replace")
                    break
            except OSError:
                time.sleep(0.3)
        assert "Bokeh" in body, (tmp_path / "serve.log").read_text()[-2000:]
        assert "could not be made" not in body
    finally:
        proc.terminate()
        proc.wait(20)
        log.close()
    assert "Traceback" not in (tmp_path / "serve.log").read_text()
