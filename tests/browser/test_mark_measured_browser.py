"""A mark measured in headless chromium: the EW the page shows agrees with
``striae measure ATLAS STAR --ew LO:HI`` to 1 %."""

from __future__ import annotations

import json
import os
import re
import subprocess
import sys
from urllib.parse import quote

import pytest

from tests.browser.conftest import open_view, wait_for

pytestmark = [pytest.mark.browser, pytest.mark.slow, pytest.mark.timeout(180)]

SHOWN = """() => {
  let found = null;
  function walk(root) {
    for (const el of root.querySelectorAll('*')) {
      if (!found && el.childElementCount === 0 && /^mark 1: EW/.test(el.textContent || '')) { found = el.textContent; }
      if (el.shadowRoot) { walk(el.shadowRoot); }
    }
  }
  walk(document);
  return found;
}"""


def test_a_marks_ew_in_the_page_agrees_with_striae_measure(server, built_browser_atlas, viewer_page, tmp_path):
    from atlas.app.data import open_view_atlas

    df = open_view_atlas(built_browser_atlas).features("test-star-a")
    w = float(df.sort_values("ew_mA")["wavelength_A"].iloc[-1])
    a, b = round(w - 0.6, 4), round(w + 0.6, 4)
    page = viewer_page
    marks = quote(json.dumps([[a, b, "strong"]]))
    open_view(page, server["url"], f"?star=test-star-a&medium=vacuum&marks={marks}")
    shown = wait_for(lambda: page.evaluate(SHOWN), timeout=30)
    page.screenshot(path=str(tmp_path / "mark.png"))
    assert shown, "the page shows no measured mark"
    ew_page = float(re.search(r"EW ([0-9.]+)", shown).group(1))
    env = dict(os.environ, PYTHONPATH=os.getcwd())
    out = subprocess.run([sys.executable, "-m", "atlas", "measure", str(built_browser_atlas), "test-star-a",
                          "--ew", f"{a}:{b}", "--json"], capture_output=True, text=True, env=env, timeout=150)
    assert out.returncode == 0, out.stderr
    ew_cli = json.loads(out.stdout)["ew"][0]["ew_mA"]
    assert ew_page == pytest.approx(ew_cli, rel=0.01), (shown, ew_cli)
    assert page.errors == []
