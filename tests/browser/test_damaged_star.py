"""A star whose stored chunks are damaged: the browser shows a notice naming it (never a
traceback or a server path) and every other star is still served."""

from __future__ import annotations

import shutil

import pytest

pytestmark = [pytest.mark.browser, pytest.mark.slow, pytest.mark.timeout(240)]


DEEP_TEXT = """() => {
  const out = [];
  function walk(root) {
    for (const e of root.querySelectorAll('*')) {
      if (e.shadowRoot) { out.push(e.shadowRoot.textContent); walk(e.shadowRoot); }
    }
  }
  out.push(document.body.innerText);
  walk(document);
  return out.join(' ');
}"""


def _damage_flux(store_dir):
    chunks = sorted(p for p in (store_dir / "flux" / "c").rglob("*") if p.is_file())
    assert chunks
    for p in chunks:
        data = bytearray(p.read_bytes())
        data[len(data) // 2] ^= 0x5A
        p.write_bytes(bytes(data))


@pytest.fixture(scope="module")
def damaged_server(tmp_path_factory, built_browser_atlas, view_tools):
    from atlas import store

    atlas = tmp_path_factory.mktemp("damaged") / "atlas"
    shutil.copytree(built_browser_atlas, atlas)
    first, second = store.open_atlas(atlas).stars[:2]
    _damage_flux(atlas / first["store"])
    root = tmp_path_factory.mktemp("serve-damaged")
    proc, url, log_path, log = view_tools.serve(root, atlas)
    yield {"url": url, "bad": first["id"], "good": second["id"], "log": log_path}
    view_tools.stop(proc, log)


def test_a_damaged_star_shows_a_notice_and_the_others_are_served(damaged_server, viewer_page, view_tools):
    s = damaged_server
    viewer_page.goto(s["url"] + f"?star={s['bad']}")
    notice = f"star {s['bad']}: its stored data is damaged; run striae verify"
    viewer_page.wait_for_function(f"(t) => ({DEEP_TEXT})().includes(t)", arg=notice, timeout=90_000)
    html = viewer_page.content()
    shadow = viewer_page.evaluate(DEEP_TEXT)
    for text in (html, shadow):
        assert "Traceback" not in text and "/site-packages/" not in text and ".py\"" not in text
    viewer_page.screenshot(path=str(s["log"].parent / "damaged.png"))
    view_tools.open_view(viewer_page, s["url"], f"?star={s['good']}")  # waits for the first strip's data
    n = viewer_page.evaluate("() => Bokeh.documents[0].get_model_by_name('spectrum-0').data.x.length")
    assert n > 0
