"""The on-disk cache of class templates (atlas.diskcache): same values, misses on change, safe on damage."""

from __future__ import annotations

import numpy as np
import pytest

from atlas import diskcache
from atlas.synth.model import default_lines
from atlas.synth.templates import template_grid


@pytest.fixture
def cache(tmp_path, monkeypatch):
    monkeypatch.setenv("XDG_CACHE_HOME", str(tmp_path))
    return tmp_path / "striae"


def test_cached_templates_equal_freshly_made_ones(cache):
    w = np.linspace(6540.0, 6590.0, 800)
    first = template_grid(w, R=8000, classes=["A0", "G5"])
    files = list(cache.glob("templates-*.npz"))
    assert len(files) == 1
    again = template_grid(w, R=8000, classes=["A0", "G5"])
    assert np.array_equal(first["flux"].values, again["flux"].values)
    fresh = template_grid(w, R=8000, classes=["A0", "G5"], lines=default_lines())
    assert np.array_equal(first["flux"].values, fresh["flux"].values)  # the uncached path


def test_another_grid_or_resolving_power_is_another_entry(cache):
    w = np.linspace(6540.0, 6590.0, 400)
    template_grid(w, R=8000, classes=["A0"])
    template_grid(w, R=9000, classes=["A0"])
    template_grid(w * 1.0001, R=8000, classes=["A0"])
    assert len(list(cache.glob("templates-*.npz"))) == 3


def test_a_damaged_entry_is_made_again(cache):
    calls = []

    def make():
        calls.append(1)
        return {"a": np.arange(5.0)}

    assert np.array_equal(diskcache.cached_arrays("t", ("k",), make)["a"], np.arange(5.0))
    (path,) = cache.glob("t-*.npz")
    path.write_bytes(b"not an npz file")
    assert np.array_equal(diskcache.cached_arrays("t", ("k",), make)["a"], np.arange(5.0))
    assert len(calls) == 2
    assert np.array_equal(diskcache.cached_arrays("t", ("k",), make)["a"], np.arange(5.0))
    assert len(calls) == 2  # the rewritten entry is used
    assert not list(cache.glob(".tmp-*"))


def test_an_unwritable_cache_folder_only_costs_time(tmp_path, monkeypatch):
    blocker = tmp_path / "file"
    blocker.write_text("x")
    monkeypatch.setenv("XDG_CACHE_HOME", str(blocker))  # a file, so no folder can be made in it
    out = diskcache.cached_arrays("t", ("k",), lambda: {"a": np.ones(3)})
    assert np.array_equal(out["a"], np.ones(3))


def test_a_code_change_changes_every_key(cache, monkeypatch):
    before = diskcache.entry_path("templates", ("k",))
    monkeypatch.setattr(diskcache, "code_fingerprint", lambda: "another")
    assert diskcache.entry_path("templates", ("k",)) != before
