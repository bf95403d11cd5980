"""The flux axis: fitted to what a strip shows (so a zoom on a weak line fills the strip),
or fixed at 0 .. 1.05 for normalised flux."""

from __future__ import annotations

import numpy as np
import pytest

from atlas.presentation import FIXED_NORMALISED, flux_axis, y_limits


def test_fit_follows_the_samples_and_one_wild_sample_does_not_flatten_them():
    y = np.full(2000, 1.0)
    y[1000:1010] = 0.9
    lo, hi = y_limits(np.r_[y, 50.0], normalised=False, room_above=0.0)
    assert hi < 1.1 and lo > 0.8  # 99.9th percentile: one spike of 50 is left out


def test_fixed_is_zero_to_one_point_oh_five_for_normalised_flux_only():
    y = np.linspace(0.9, 1.0, 50)
    assert flux_axis(y, True, "fixed") == FIXED_NORMALISED == (0.0, 1.05)
    assert flux_axis(y, False, "fixed") == flux_axis(y, False, "fit")


def _y_span(viewer, strip):
    slot = next(s for s in viewer.strips.slots if s.strip == strip)
    return slot.fig.y_range.end - slot.fig.y_range.start


def test_zooming_on_a_weak_stretch_narrows_the_flux_axis(make_viewer):
    viewer = make_viewer(star="test-star-a", flux="raw")
    strip = viewer.vm.page_strips()[0]
    whole = _y_span(viewer, strip)
    s0, s1 = viewer.vm.strip_display_range(strip)
    slot = next(s for s in viewer.strips.slots if s.strip == strip)
    y = np.asarray(slot.src.data["lo"], dtype=float)
    x = np.asarray(slot.src.data["x"], dtype=float)
    # the flattest stretch of 2 % of the strip: no line there
    n = max(4, len(x) // 50)
    k = int(np.argmin([np.nanmax(y[i:i + n]) - np.nanmin(y[i:i + n]) for i in range(0, len(x) - n, n)]))
    lo, hi = float(x[k * n]), float(x[k * n + n - 1])
    viewer.state.param.update(lo=max(lo, s0 + 1e-3), hi=min(hi, s1 - 1e-3))
    assert viewer.vm.zoom_strip() == strip
    assert _y_span(viewer, strip) < 0.5 * whole
    viewer.state.param.update(flux="normalized", yaxis="fixed")
    slot = next(s for s in viewer.strips.slots if s.strip == strip)
    assert (slot.fig.y_range.start, slot.fig.y_range.end) == pytest.approx((0.0, 1.05))


def test_the_link_carries_the_flux_axis(make_viewer):
    from atlas.app.state import parse_query, to_query

    viewer = make_viewer(star="test-star-a", yaxis="fixed")
    q = to_query(viewer.state)
    assert q["yaxis"] == "fixed"
    assert parse_query({"yaxis": "sideways"}, {"test-star-a": 3})[1][0].startswith("yaxis:")
