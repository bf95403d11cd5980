"""Legend and units in headless chromium: the legend lists every glyph drawn (and only
those), and with the axis in nm the cursor readout speaks nm."""

from __future__ import annotations

import json
from urllib.parse import quote

import pytest

from atlas.app.legend import ITEMS
from atlas.presentation import PALETTE
from tests.browser.conftest import open_view, wait_for

pytestmark = [pytest.mark.browser, pytest.mark.slow, pytest.mark.timeout(120)]

#: What the strips and the overview draw, read from the page's own data sources.
DRAWN = """(p) => {
  const doc = Bokeh.documents[0], out = new Set(['overview', 'page']);
  for (let i = 0; i < 12; i++) {
    const f = doc.get_model_by_name('strip-' + i);
    if (!f || !f.visible) { continue; }
    const s = doc.get_model_by_name('spectrum-' + i).data;
    if (s.x.length) {
      let band = false;
      for (let k = 0; k < s.lo.length; k++) { if (s.lo[k] !== s.hi[k]) { band = true; break; } }
      out.add(band ? 'envelope' : 'spectrum');
    }
    for (const t of doc.get_model_by_name('markers-' + i).data.telluric) { out.add(t ? 'telluric' : 'stellar'); }
    for (const c of doc.get_model_by_name('found-' + i).data.colour) {
      out.add(c === p.unexplained ? 'feature_unexplained' : 'feature_known');
    }
    if (doc.get_model_by_name('marks-' + i).data.x0.length) { out.add('mark'); }
    if (f.outline_line_color === p.focus) { out.add('focus'); }
  }
  return Array.from(out).sort();
}"""

LISTED = """() => {
  const found = [];
  function walk(root) {
    for (const el of root.querySelectorAll('*')) {
      if (el.classList && el.classList.contains('striae-legend-item')) { found.push(el.dataset.glyph); }
      if (el.shadowRoot) { walk(el.shadowRoot); }
    }
  }
  walk(document);
  return Array.from(new Set(found)).sort();
}"""

READOUT = """() => Bokeh.documents[0].get_model_by_name('readout').text"""


def test_the_legend_lists_every_glyph_drawn(server, viewer_page, tmp_path):
    page = viewer_page
    marks = quote(json.dumps([[5016.0, 5021.0, "a mark"]]))
    open_view(page, server["url"], f"?star=test-star-a&per_page=3&lo=5010&hi=5030&marks={marks}")
    p = {"unexplained": PALETTE["feature_unexplained"], "focus": PALETTE["focus"]}
    drawn = wait_for(lambda: (lambda d: d if "mark" in d and "focus" in d else None)(page.evaluate(DRAWN, p)))
    assert drawn, page.evaluate(DRAWN, p)
    listed = wait_for(lambda: (lambda li: li if li == drawn else None)(page.evaluate(LISTED)))
    page.screenshot(path=str(tmp_path / "legend.png"))
    assert listed == drawn, (page.evaluate(LISTED), drawn)
    assert set(drawn) <= set(ITEMS) and {"stellar", "feature_unexplained", "mark"} <= set(drawn)
    assert page.errors == []


def test_in_nm_the_readout_says_nm(server, viewer_page):
    page = viewer_page
    open_view(page, server["url"], "?star=test-star-a&per_page=2&unit=nm")
    box = page.evaluate("""() => {
        const views = Object.values(Bokeh.index);
        function walk(v, acc) { acc.push(v); for (const c of (v.child_views || [])) walk(c, acc); return acc; }
        for (const root of views) { for (const v of walk(root, [])) {
            if (v.model && v.model.name === 'strip-0' && v.el) {
              const r = v.el.getBoundingClientRect(); return {x: r.left + r.width / 2, y: r.top + r.height / 2}; } } }
        return null; }""")
    assert box
    page.mouse.move(box["x"], box["y"])
    page.mouse.move(box["x"] + 5, box["y"])
    text = wait_for(lambda: (lambda t: t if " nm air" in t else None)(page.evaluate(READOUT)))
    assert text, page.evaluate(READOUT)
    assert "Å" not in text
    assert page.errors == []
