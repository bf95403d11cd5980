"""Fixtures for the measurement tests: the synthetic-spectrum helpers."""

from __future__ import annotations

import importlib.util
from pathlib import Path

import pytest


def load_synthetic():
    """The helper module tests/measure/_synthetic.py (also used by the benchmark)."""
    path = Path(__file__).with_name("_synthetic.py")
    spec = importlib.util.spec_from_file_location("striae_measure_synthetic", path)
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod


@pytest.fixture(scope="session")
def synth():
    return load_synthetic()


@pytest.fixture(scope="session")
def lines():
    from atlas.lines import load_lines

    return load_lines()
