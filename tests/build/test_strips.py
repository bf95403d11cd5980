"""Cutting into strips: nothing lost or altered, equal velocity widths, the automatic width."""

from __future__ import annotations

import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from atlas.errors import InputError
from atlas.strips import (
    auto_strip_kms,
    check_overlap,
    gather,
    padding_mask,
    plan_equal_A,
    plan_orders,
    plan_velocity,
    velocity_width_kms,
)


def _random_wave(seed, n, start, span_kms):
    rng = np.random.default_rng(seed)
    # Irregular, sorted, with repeated values now and then.
    lnw = np.sort(rng.uniform(0.0, span_kms / 299792.458, n))
    if n > 3:
        lnw[1] = lnw[0]
    return start * np.exp(lnw)


def _assert_lossless(wave, plan):
    n = wave.size
    idx = gather(np.arange(n), plan, fill=-1, dtype=np.int64)
    seen = np.zeros(n, dtype=bool)
    seen[idx[idx >= 0]] = True
    assert seen.all(), f"{np.count_nonzero(~seen)} samples in no strip"
    vals = gather(wave, plan, fill=np.nan)
    pad = padding_mask(plan)
    assert np.array_equal(vals[~pad], wave[idx[~pad]])  # copied unchanged
    assert np.isnan(vals[pad]).all()
    # each strip is a contiguous run in wavelength order
    assert np.array_equal(idx[~pad], np.concatenate([np.arange(a, b) for a, b in zip(plan.start, plan.stop, strict=True)]))


@settings(max_examples=60, deadline=None)
@given(
    seed=st.integers(0, 2**32 - 1),
    n=st.integers(1, 4000),
    start=st.floats(900.0, 30000.0),
    span_kms=st.floats(1.0, 3e5),
    strip_kms=st.floats(0.5, 5e4),
    overlap=st.floats(0.0, 0.49),
)
def test_velocity_strips_lose_nothing_and_have_equal_widths(seed, n, start, span_kms, strip_kms, overlap):
    wave = _random_wave(seed, n, start, span_kms)
    plan = plan_velocity(wave, strip_kms, overlap)
    _assert_lossless(wave, plan)
    widths = velocity_width_kms(plan.lo_A, plan.hi_A)
    np.testing.assert_allclose(widths, strip_kms, rtol=1e-9, atol=0)
    # interior samples lie inside their strip's nominal edges (edges patched only by rounding)
    vals = gather(wave, plan)
    lo = np.nanmin(vals, axis=1)
    hi = np.nanmax(vals, axis=1)
    assert np.all(lo >= plan.lo_A * (1 - 1e-12)) and np.all(hi <= plan.hi_A * (1 + 1e-12))


@settings(max_examples=40, deadline=None)
@given(
    seed=st.integers(0, 2**32 - 1),
    n=st.integers(1, 3000),
    start=st.floats(900.0, 30000.0),
    width_A=st.floats(0.05, 500.0),
    overlap=st.floats(0.0, 0.49),
)
def test_equal_angstrom_strips_lose_nothing(seed, n, start, width_A, overlap):
    wave = _random_wave(seed, n, start, 5e4)
    plan = plan_equal_A(wave, width_A, overlap)
    _assert_lossless(wave, plan)
    np.testing.assert_allclose(plan.hi_A - plan.lo_A, width_A, rtol=1e-9)


def test_strip_edges_are_shared_between_stars_with_the_same_width():
    a = plan_velocity(5000.0 * np.exp(np.arange(50_000) * 1e-5), 300.0, 0.03)
    b = plan_velocity(5100.0 * np.exp(np.arange(50_000) * 7e-6), 300.0, 0.03)
    common = np.intersect1d(a.lo_A, b.lo_A)
    assert common.size > 10


def test_orders_are_kept_as_strips():
    plan = plan_orders(np.array([5, 0, 3]), np.array([1.0, 2.0, 3.0]), np.array([1.5, 2.5, 3.5]))
    assert plan.n_strips == 2 and list(plan.count) == [5, 3] and plan.pixel == 5


@pytest.mark.parametrize("step_kms", [0.3, 1.0, 2.7, 10.0, 45.0])
def test_auto_width_holds_4000_to_8000_samples(step_kms):
    wave = 4000.0 * np.exp(np.arange(200_000) * step_kms / 299792.458)
    kms = auto_strip_kms(wave)
    samples = kms / step_kms
    assert 4000 <= samples <= 8000, (kms, samples)


def test_ten_million_samples_cut_without_loss():
    wave = 3500.0 * np.exp(np.arange(10_000_000) * 1e-6)
    plan = plan_velocity(wave, auto_strip_kms(wave), 0.03)
    assert plan.start[0] == 0 and plan.stop[-1] == wave.size
    assert np.all(plan.stop[:-1] >= plan.start[1:])  # consecutive strips meet or overlap


@pytest.mark.parametrize("bad", [-0.1, 0.5, 0.7, "x", float("nan")])
def test_bad_overlap_is_an_input_error(bad):
    with pytest.raises(InputError, match="--overlap"):
        check_overlap(bad)


@pytest.mark.parametrize("bad", [0.0, -5.0, float("inf")])
def test_bad_strip_width_is_an_input_error(bad):
    with pytest.raises(InputError, match="--strip-kms"):
        plan_velocity(np.array([5000.0, 5001.0]), bad)
