"""The flux axis in headless chromium: a zoomed strip's flux axis fits what it shows."""

from __future__ import annotations

import numpy as np
import pytest

from tests.browser.conftest import open_view, wait_for

pytestmark = [pytest.mark.browser, pytest.mark.slow, pytest.mark.timeout(120)]

READ = """() => {
  const doc = Bokeh.documents[0];
  const f = doc.get_model_by_name('strip-0'), s = doc.get_model_by_name('spectrum-0');
  return {y0: f.y_range.start, y1: f.y_range.end, x0: f.x_range.start, x1: f.x_range.end,
          x: Array.from(s.data.x), y: Array.from(s.data.lo)};
}"""


def test_autoscale_narrows_the_flux_axis_of_a_zoomed_strip(server, viewer_page, tmp_path):
    page = viewer_page
    open_view(page, server["url"], "?star=test-star-a&per_page=2&flux=raw")
    whole = wait_for(lambda: (lambda r: r if len(r["x"]) > 100 else None)(page.evaluate(READ)))
    assert whole
    x, y = np.array(whole["x"]), np.array(whole["y"])
    n = len(x) // 50
    k = int(np.argmin([np.ptp(y[i:i + n]) for i in range(0, len(x) - n, n)]))
    lo, hi = x[k * n] + 1e-3, x[k * n + n - 1] - 1e-3
    open_view(page, server["url"], f"?star=test-star-a&per_page=2&flux=raw&lo={lo:.4f}&hi={hi:.4f}")
    zoomed = wait_for(lambda: (lambda r: r if r["x1"] - r["x0"] < 0.1 * (whole["x1"] - whole["x0"])
                                          else None)(page.evaluate(READ)))
    assert zoomed, "the strip did not zoom"
    page.screenshot(path=str(tmp_path / "fitted.png"))
    assert zoomed["y1"] - zoomed["y0"] < 0.5 * (whole["y1"] - whole["y0"]), (zoomed, whole)
    assert page.errors == []
