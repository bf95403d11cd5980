"""``striae serve --procs 2`` asks nothing of any host but the machine serving the atlas.

With two processes a session's websocket can reach a process that never rendered its
page; Panel then pointed its stylesheets at a CDN.  Several fresh browser contexts open
the view so that sessions land on both processes.
"""

from __future__ import annotations

import pytest

pytestmark = [pytest.mark.browser, pytest.mark.slow, pytest.mark.timeout(240)]

LOCAL = ("http://127.0.0.1:", "data:", "blob:", "about:")


def test_every_request_stays_on_the_machine_with_two_processes(server_procs2, chromium, view_tools):
    seen, off = [], []
    for _ in range(5):
        ctx = chromium.new_context()
        pg = ctx.new_page()
        pg.on("request", lambda r: (seen.append(r.url),
                                    off.append(r.url) if not r.url.startswith(LOCAL) else None))
        view_tools.open_view(pg, server_procs2["url"])
        ctx.close()
    assert any("static/extensions/panel" in u for u in seen), "expected Panel's own files from the server"
    assert off == [], sorted(set(off))[:10]
