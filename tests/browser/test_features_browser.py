"""The features panel in headless chromium: the feature key steps the window to each found
feature in turn, and the link carries the chosen one."""

from __future__ import annotations

import pytest

from tests.browser.conftest import open_view, wait_for
from tests.browser.test_viewer_browser import query, slots

pytestmark = [pytest.mark.browser, pytest.mark.slow, pytest.mark.timeout(120)]

READ_TABLE = """() => {
  const s = Bokeh.documents[0].get_model_by_name('features');
  return s ? {i: Array.from(s.data.i), wave: Array.from(s.data.wave),
              selected: Array.from(s.selected.indices)} : null;
}"""


def test_the_feature_key_moves_the_window_to_each_feature_in_turn(server, viewer_page, tmp_path):
    page = viewer_page
    open_view(page, server["url"], "?star=test-star-a&per_page=3")
    table = wait_for(lambda: (lambda t: t if t and len(t["i"]) >= 3 else None)(page.evaluate(READ_TABLE)))
    assert table, "the features table did not arrive"
    windows = []
    for k in range(3):
        page.keyboard.press("f")
        q = wait_for(lambda k=k: (lambda qq: qq if qq.get("feature") == str(k) else None)(query(page)))
        assert q, ("the link does not carry feature", k, query(page))
        w = table["wave"][table["i"].index(k)]
        zoomed = wait_for(lambda w=w: next((s for s in slots(page) if s["start"] < w < s["end"]
                                        and s["end"] - s["start"] < 20), None))
        assert zoomed, ("no strip zoomed around feature", k, w)
        windows.append((round(zoomed["start"], 3), round(zoomed["end"], 3)))
        assert page.evaluate(READ_TABLE)["selected"] == [table["i"].index(k)]
    page.screenshot(path=str(tmp_path / "features.png"), full_page=True)
    assert len(set(windows)) == 3, windows
    page.keyboard.press("Shift+F")
    assert wait_for(lambda: query(page).get("feature") == "1")
    assert page.errors == []
