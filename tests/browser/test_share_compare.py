"""Marks, shared links and the comparison in headless chromium: a marked view reopens
exactly in a fresh browser, a note with markup stays text, the comparison's plots move
together and the URL follows."""

from __future__ import annotations

import json
import time
from urllib.parse import parse_qs

import pytest

pytestmark = [pytest.mark.browser, pytest.mark.slow, pytest.mark.timeout(180)]

NOTE = "wing <script>alert(1)</script> <b>x</b>"

READ = """(names) => {
  const doc = Bokeh.documents[0];
  const out = {};
  for (const n of names) {
    const m = doc.get_model_by_name(n);
    if (!m) { out[n] = null; continue; }
    if (m.data) { out[n] = Object.fromEntries(Object.entries(m.data).map(([k, v]) => [k, Array.from(v)])); }
    else if (m.x_range) { out[n] = {start: m.x_range.start, end: m.x_range.end, id: m.x_range.id}; }
  }
  return out;
}"""

RECT = """(name) => {
  function walk(v, acc) { acc.push(v); for (const c of (v.child_views || [])) walk(c, acc); return acc; }
  for (const root of Object.values(Bokeh.index)) {
    for (const v of walk(root, [])) {
      if (v.model && v.model.name === name && v.el) {
        const r = v.el.getBoundingClientRect();
        return {x: r.left, y: r.top, w: r.width, h: r.height};
      }
    }
  }
  return null;
}"""


def query(page):
    return {k: v[0] for k, v in parse_qs(page.evaluate("() => window.location.search")[1:]).items()}


def test_a_marked_view_reopens_exactly_in_a_fresh_browser(server, chromium, view_tools, tmp_path):
    ctx = chromium.new_context(viewport={"width": 1280, "height": 900})
    page = ctx.new_page()
    dialogs, errors = [], []
    page.on("dialog", lambda d: (dialogs.append(d.message), d.dismiss()))
    page.on("pageerror", lambda e: errors.append(str(e)))
    view_tools.open_view(page, server["url"], "?star=test-star-a&lo=5004&hi=5020")
    box = page.locator(".striae-mark-add input")
    box.fill(f"5006-5009 {NOTE}")
    box.press("Enter")
    q = view_tools.wait_for(lambda: (lambda qq: qq if "marks" in qq else None)(query(page)))
    assert q, query(page)
    # the note is drawn as canvas text and listed as plain text; nothing ran
    data = view_tools.wait_for(lambda: (lambda d: d if d["marks-0"]["note"] else None)(page.evaluate(READ, ["marks-0"])))
    assert data["marks-0"]["note"] == [NOTE]
    assert page.get_by_text(NOTE, exact=False).count() >= 1
    page.screenshot(path=str(tmp_path / "marked.png"))
    link = page.evaluate("() => window.location.href")
    ctx.close()
    assert dialogs == [] and errors == []

    fresh = chromium.new_context(viewport={"width": 1280, "height": 900})
    p2 = fresh.new_page()
    p2.on("dialog", lambda d: (dialogs.append(d.message), d.dismiss()))
    p2.goto(link)
    p2.wait_for_function("() => window.Bokeh && Bokeh.documents.length > 0 && "
                         "Bokeh.documents[0].get_model_by_name('marks-0') && "
                         "Bokeh.documents[0].get_model_by_name('marks-0').data.note.length > 0",
                         timeout=90_000)
    q2 = query(p2)
    assert (q2["star"], float(q2["lo"]), float(q2["hi"])) == ("test-star-a", 5004.0, 5020.0)
    got = p2.evaluate(READ, ["marks-0", "strip-0"])
    assert got["marks-0"]["note"] == [NOTE]
    assert (got["marks-0"]["x0"][0], got["marks-0"]["x1"][0]) == pytest.approx((5006.0, 5009.0))
    assert (got["strip-0"]["start"], got["strip-0"]["end"]) == pytest.approx((5004.0, 5020.0))
    assert dialogs == []
    fresh.close()


def test_the_comparison_plots_move_together_and_the_url_follows(server, chromium, view_tools, tmp_path):
    ctx = chromium.new_context(viewport={"width": 1280, "height": 1000})
    page = ctx.new_page()
    errors = []
    page.on("pageerror", lambda e: errors.append(str(e)))
    view_tools.open_view(page, server["url"], "?star=test-star-a&compare=test-star-b&frame=rest&lo=6020&hi=6060")
    names = ["compare-fig-a", "compare-fig-b", "compare-fig-diff", "compare-a", "compare-b"]
    before = view_tools.wait_for(lambda: (lambda d: d if d["compare-b"] and d["compare-b"]["x"] else None)(
        page.evaluate(READ, names)))
    assert before, "the comparison did not draw"
    assert len({before[n]["id"] for n in names[:3]}) == 1  # one shared wavelength range
    assert (before["compare-fig-a"]["start"], before["compare-fig-a"]["end"]) == pytest.approx((6020, 6060))
    r = page.evaluate(RECT, "compare-fig-b")
    assert r, "no comparison plot on the page"
    time.sleep(0.5)
    y = r["y"] + r["h"] / 2
    page.mouse.move(r["x"] + r["w"] * 0.6, y)
    page.mouse.down()
    for k in range(1, 11):
        page.mouse.move(r["x"] + r["w"] * (0.6 - 0.02 * k), y)
        time.sleep(0.03)
    page.mouse.up()
    q = view_tools.wait_for(lambda: (lambda qq: qq if float(qq.get("lo", 6020)) > 6020.5 else None)(query(page)))
    assert q, ("the pan did not reach the URL", query(page))
    after = page.evaluate(READ, names)
    a, b = after["compare-fig-a"], after["compare-fig-diff"]
    assert a["start"] > 6020.5 and (a["start"], a["end"]) == pytest.approx((b["start"], b["end"]))
    assert (float(q["lo"]), float(q["hi"])) == pytest.approx((a["start"], a["end"]), abs=1e-3)
    # the server sent the second star's points for the new window
    xb = view_tools.wait_for(lambda: (lambda d: d if min(d["compare-b"]["x"]) > 6020.4 else None)(
        page.evaluate(READ, names)))
    assert xb, "the second star was not redrawn for the new window"
    page.screenshot(path=str(tmp_path / "compare.png"), full_page=True)
    assert errors == []
    ctx.close()


FIND_LINK = """() => {
  function find(root) {
    for (const e of root.querySelectorAll('*')) {
      if (e.tagName === 'INPUT' && e.placeholder === 'link to this view') { return e; }
      if (e.shadowRoot) { const f = find(e.shadowRoot); if (f) { return f; } }
    }
    return null;
  }
  const el = find(document);
  if (!el) { return null; }
  const r = el.getBoundingClientRect();
  return {value: el.value, shown: r.width > 0 && r.height > 0,
          selected: el.selectionStart === 0 && el.selectionEnd === el.value.length && el.value.length > 0};
}"""


def test_copy_link_copies_the_whole_address_or_shows_it_selected(server, chromium, view_tools):
    ctx = chromium.new_context(viewport={"width": 1400, "height": 900})
    ctx.grant_permissions(["clipboard-read", "clipboard-write"], origin=server["url"].rstrip("/"))
    page = ctx.new_page()
    dialogs = []
    page.on("dialog", lambda d: (dialogs.append(d.message), d.dismiss()))
    view_tools.open_view(page, server["url"], "?star=test-star-b&lo=6010&hi=6030&frame=rest")
    href = page.evaluate("() => window.location.href")
    assert "star=test-star-b" in href and "lo=6010" in href
    page.get_by_role("button", name="Copy link").click()
    got = view_tools.wait_for(lambda: page.evaluate("() => navigator.clipboard.readText()") == href, timeout=10)
    assert got, (page.evaluate("() => navigator.clipboard.readText()"), href)
    # without a clipboard API (as on plain http) the link is shown, selected
    page.evaluate("() => { Object.defineProperty(navigator, 'clipboard', {value: undefined}); }")
    page.get_by_role("button", name="Copy link").click()
    shown = view_tools.wait_for(lambda: (lambda r: r if r and r["shown"] and r["selected"] else None)(
        page.evaluate(FIND_LINK)), timeout=10)
    assert shown and shown["value"] == href, page.evaluate(FIND_LINK)
    assert dialogs == []
    ctx.close()


def test_marking_with_the_mouse_then_writing_a_note(server, chromium, view_tools):
    ctx = chromium.new_context(viewport={"width": 1400, "height": 900})
    page = ctx.new_page()
    view_tools.open_view(page, server["url"], "?star=test-star-a&per_page=2")
    page.get_by_role("button", name="✎ mark with the mouse").click()
    page.wait_for_timeout(800)
    r = page.evaluate(RECT, "strip-0")
    y = r["y"] + r["h"] * 0.5
    page.keyboard.down("Shift")
    page.mouse.move(r["x"] + r["w"] * 0.3, y)
    page.mouse.down()
    for k in range(1, 11):
        page.mouse.move(r["x"] + r["w"] * (0.3 + 0.02 * k), y)
        time.sleep(0.03)
    page.mouse.up()
    page.keyboard.up("Shift")
    q = view_tools.wait_for(lambda: (lambda qq: qq if "marks" in qq else None)(query(page)))
    assert q, query(page)
    (a, b, note), = json.loads(q["marks"])
    strip = page.evaluate(READ, ["strip-0"])["strip-0"]
    span = strip["end"] - strip["start"]
    assert a < b and note == ""
    assert strip["start"] + 0.15 * span < a < strip["start"] + 0.45 * span  # where the drag began
    field = page.get_by_label("Note of the chosen mark")
    field.fill("drawn by hand")
    field.press("Enter")
    page.get_by_role("button", name="save note").click()
    q = view_tools.wait_for(lambda: (lambda qq: qq if "drawn by hand" in qq.get("marks", "") else None)(query(page)))
    assert q, query(page)
    ctx.close()
