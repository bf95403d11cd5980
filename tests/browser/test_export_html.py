"""The exported standalone HTML opens from file:// in Chromium: plots drawn, nothing run.

Chromium is Debian's (/usr/bin/chromium), driven by Playwright with no download.
"""

from __future__ import annotations

import os
import shutil

import pytest

pytestmark = [
    pytest.mark.browser,
    pytest.mark.timeout(180),
    pytest.mark.skipif(not os.path.exists("/usr/bin/chromium"), reason="no /usr/bin/chromium"),
]

CHROMIUM_ARGS = [
    "--no-sandbox", "--disable-gpu", "--disable-background-networking",
    "--disable-component-update", "--no-first-run", "--disable-quic", "--disable-sync",
]
NOTE = "<script>alert(1)</script>"


@pytest.fixture(scope="session")
def browser_type_launch_args(browser_type_launch_args):
    return {**browser_type_launch_args, "executable_path": "/usr/bin/chromium",
            "args": CHROMIUM_ARGS, "headless": True}


@pytest.fixture(scope="module")
def exported_html(tmp_path_factory):

    from atlas.build import BuildOptions, build_atlas
    from atlas.export import export_html
    from tests.export.conftest import write_spectrum

    root = tmp_path_factory.mktemp("export-html")
    spec = write_spectrum(root / "alpha.fits", name="Test Star Alpha", n=12_000)
    build_atlas([str(spec)], str(root / "atlas"), BuildOptions(strip_kms=1000.0),
                progress=False)
    out = root / "view.html"
    export_html(root / "atlas", "test-star-alpha", out, lo=6540.0, hi=6600.0,
                marks=[[6560.0, 6566.0, NOTE]])
    return out


def test_exported_html_renders_offline_with_no_errors_and_no_dialog(page, exported_html):
    errors, dialogs, requests = [], [], []
    page.on("console", lambda m: errors.append(m.text) if m.type == "error" else None)
    page.on("pageerror", lambda e: errors.append(str(e)))
    page.on("dialog", lambda d: (dialogs.append(d.message), d.dismiss()))
    page.on("request", lambda r: requests.append(r.url))
    page.goto(exported_html.resolve().as_uri())
    canvas = page.locator("canvas").first  # Playwright's CSS engine pierces Bokeh's shadow DOM
    canvas.wait_for(state="attached", timeout=60_000)
    page.wait_for_function(
        "() => { const f = (r) => [...r.querySelectorAll('*')].flatMap(e => "
        "e.shadowRoot ? [e, ...f(e.shadowRoot)] : [e]); "
        "return f(document).filter(e => e.tagName === 'CANVAS' && e.width > 100 && e.height > 100).length >= 3; }",
        timeout=60_000,
    )
    # The note shows as text in the header and never runs.
    assert page.get_by_text(NOTE, exact=False).count() >= 1
    page.wait_for_timeout(500)
    assert dialogs == []
    assert errors == []
    assert all(u.startswith(("file:", "data:", "blob:", "about:")) for u in requests), requests
    shutil.copy(exported_html, exported_html.with_suffix(".seen.html"))
    page.screenshot(path=str(exported_html.with_suffix(".png")), full_page=True)
