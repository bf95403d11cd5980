"""The viewer in headless chromium: opens cleanly, steps pages, zooms with bounded data,
and draws line markers where the star's radial velocity puts them."""

from __future__ import annotations

import time
from urllib.parse import parse_qs

import astropy.units as u
import numpy as np
import pytest

from tests.browser.conftest import open_view, wait_for

pytestmark = [pytest.mark.browser, pytest.mark.slow, pytest.mark.timeout(120)]

READ_SLOTS = """() => {
  const doc = Bokeh.documents[0];
  const out = [];
  for (let i = 0; i < 12; i++) {
    const f = doc.get_model_by_name('strip-' + i);
    if (!f || !f.visible) { continue; }
    const s = doc.get_model_by_name('spectrum-' + i);
    const m = doc.get_model_by_name('markers-' + i);
    out.push({slot: i, start: f.x_range.start, end: f.x_range.end, n: s.data.x.length,
              x: Array.from(s.data.x), y: Array.from(s.data.lo),
              mx: Array.from(m.data.x), species: Array.from(m.data.species),
              vac: Array.from(m.data.vacuum_A), tell: Array.from(m.data.telluric),
              width: f.inner_width});
  }
  return out;
}"""


def slots(page):
    return page.evaluate(READ_SLOTS)


def query(page):
    # read the address bar in the page (page.url is only refreshed when Playwright
    # processes events, which sleeping does not do)
    return {k: v[0] for k, v in parse_qs(page.evaluate("() => window.location.search")[1:]).items()}


def test_the_atlas_opens_without_console_errors(server, viewer_page, tmp_path):
    page = viewer_page
    open_view(page, server["url"])
    page.screenshot(path=str(tmp_path / "opened.png"))
    assert page.errors == []
    s = slots(page)
    assert len(s) == 5  # default strips per page
    # once the browser has reported the plot widths, no strip holds more than 2 points a pixel
    assert wait_for(lambda: all(x["n"] <= 2 * x["width"] for x in slots(page))), \
        [(x["n"], x["width"]) for x in slots(page)]
    assert query(page)["star"] == "test-star-a"


def test_page_steps_change_the_strips_shown(server, viewer_page, tmp_path):
    page = viewer_page
    open_view(page, server["url"], "?star=test-star-a&per_page=3")
    before = [(s["start"], s["end"]) for s in slots(page)]
    page.keyboard.press("PageDown")
    after = wait_for(lambda: (lambda s: s if s[0]["start"] > before[-1][0] else None)(slots(page)))
    assert after, "PageDown did not move to the next strips"
    assert wait_for(lambda: query(page).get("page") == "2"), query(page)
    page.screenshot(path=str(tmp_path / "page2.png"))
    page.keyboard.press("PageUp")
    assert wait_for(lambda: abs(slots(page)[0]["start"] - before[0][0]) < 1e-3)
    assert page.errors == []


def test_zooming_narrows_the_range_and_keeps_the_samples_bounded(server, viewer_page, tmp_path):
    page = viewer_page
    open_view(page, server["url"], "?star=test-star-a&per_page=4")
    s0 = slots(page)[1]
    full = s0["end"] - s0["start"]
    total_before = sum(s["n"] for s in slots(page))
    # Ctrl + wheel over the middle of the second strip
    target = page.evaluate("""() => {
        const views = Object.values(Bokeh.index);
        function walk(v, acc) { acc.push(v); for (const c of (v.child_views || [])) walk(c, acc); return acc; }
        for (const root of views) {
          for (const v of walk(root, [])) {
            if (v.model && v.model.name === 'strip-1' && v.el) {
              const r = v.el.getBoundingClientRect();
              return {x: r.left + r.width / 2, y: r.top + r.height / 2};
            }
          }
        }
        return null; }""")
    assert target, "could not find the second strip on the page"
    time.sleep(1.0)
    page.mouse.move(target["x"], target["y"])
    page.keyboard.down("Control")
    for _ in range(3):
        page.mouse.wheel(0, -300)
        time.sleep(0.1)
    page.keyboard.up("Control")
    q = wait_for(lambda: (lambda qq: qq if "lo" in qq and qq["lo"] not in ("null", "None") else None)(query(page)))
    assert q, ("the zoom did not reach the URL", query(page))
    zoomed = wait_for(lambda: (lambda s: s if s[1]["end"] - s[1]["start"] < 0.8 * full and s[1]["n"] > 0 else None)(slots(page)))
    assert zoomed
    z = zoomed[1]
    assert z["end"] - z["start"] < 0.8 * full
    assert float(q["lo"]) == pytest.approx(z["start"], abs=1e-3)
    # every strip stays within about two points per pixel of its width
    for s in zoomed:
        assert s["n"] <= 2 * max(s["width"], 1) + 2, s["slot"]
    assert sum(s["n"] for s in zoomed) <= max(total_before, 2 * sum(s["width"] for s in zoomed))
    # drawn points lie in (or just around) the visible range
    xs = np.array(z["x"])
    assert xs.min() >= z["start"] - 0.5 and xs.max() <= z["end"] + 0.5
    page.screenshot(path=str(tmp_path / "zoomed.png"))
    assert page.errors == []


def test_line_markers_sit_where_the_radial_velocity_puts_them(server, viewer_page, fixture_mod, tmp_path):
    page = viewer_page
    from airvacuumvald import vacuum_to_air  # Morton (2000, ApJS 130, 403) via the VALD formula

    from atlas.lines import load_lines

    rv, bary = fixture_mod.KNOWN["test-star-a"]
    # markers are the lines predicted for the star (its lines group); the invented spectrum
    # has absorption only at the shipped list's strong lines (strength <= 2), checked there
    cur = load_lines()
    injected = np.sort(cur.loc[~cur["telluric"] & (cur["strength"] <= 2), "vacuum_A"].to_numpy())
    open_view(page, server["url"], "?star=test-star-a&frame=observed&medium=air&strength=4&per_page=10")
    page.screenshot(path=str(tmp_path / "markers.png"))

    def d(v):  # relativistic Doppler factor, astropy.units.doppler_relativistic
        return (v * u.km / u.s).to_value(u.AA, equivalencies=u.doppler_relativistic(1 * u.AA))

    checked = 0
    for s in slots(page):
        for x, vac, tell in zip(s["mx"], s["vac"], s["tell"], strict=True):
            # Wright & Eastman (2014, PASP 126, 838): observed = rest x D(rv) / D(v_bary)
            expect = vacuum_to_air(vac if tell else vac * d(rv) / d(bary))
            assert x == pytest.approx(expect, abs=2e-3)
            # the invented spectrum has its absorption there (injected at rest x D(30 km/s))
            xs, ys = np.array(s["x"]), np.array(s["y"])
            near = np.abs(xs - x) < 0.6
            was_injected = np.min(np.abs(injected - vac)) < 0.01
            if not tell and was_injected and near.sum() >= 2 and s["start"] + 1 < x < s["end"] - 1:
                assert np.nanmin(ys[near]) < 0.8, (x, vac)
                checked += 1
    assert checked >= 5
    assert page.errors == []


def test_back_and_forward_restore_the_views_in_between(server, viewer_page, tmp_path):
    page = viewer_page
    open_view(page, server["url"], "?star=test-star-a&per_page=3")
    starts = {1: slots(page)[0]["start"]}
    for p in (2, 3):
        page.keyboard.press("PageDown")
        assert wait_for(lambda p=p: query(page).get("page") == str(p)), query(page)
        assert wait_for(lambda p=p: slots(page)[0]["start"] > starts[p - 1] + 1e-6)
        starts[p] = slots(page)[0]["start"]
    length = page.evaluate("() => history.length")

    def shows(p):
        return (query(page).get("page", "1") == str(p)
                and abs(slots(page)[0]["start"] - starts[p]) < 1e-6)

    page.evaluate("() => history.back()")
    assert wait_for(lambda: shows(2)), (query(page), slots(page)[0]["start"], starts)
    page.evaluate("() => history.back()")
    assert wait_for(lambda: shows(1)), (query(page), slots(page)[0]["start"], starts)
    page.screenshot(path=str(tmp_path / "back.png"))
    page.evaluate("() => history.forward()")
    assert wait_for(lambda: shows(2)), (query(page), slots(page)[0]["start"], starts)
    page.evaluate("() => history.forward()")
    assert wait_for(lambda: shows(3)), (query(page), slots(page)[0]["start"], starts)
    # restoring a view wrote no new history entry (else Forward would have nowhere to go)
    assert page.evaluate("() => history.length") == length
    assert page.errors == []
