"""Atlases for the app tests, made by the real build from small invented CSV spectra."""

from __future__ import annotations

import importlib.util
from pathlib import Path

import numpy as np
import pytest

_HERE = Path(__file__).parent


def _load(name):
    spec = importlib.util.spec_from_file_location(f"_striae_app_{name}", _HERE / f"{name}.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod


atlas_fixture = _load("atlas_fixture")


@pytest.fixture(scope="session")
def built_atlas(tmp_path_factory):
    """Two stars built by ``atlas.build.build_atlas``; returns the atlas folder."""
    return atlas_fixture.build_test_atlas(tmp_path_factory.mktemp("app-atlas"))


@pytest.fixture(scope="session")
def line_rows():
    from atlas.lines import load_lines

    return load_lines()


@pytest.fixture
def rng():
    return np.random.default_rng(7)


@pytest.fixture
def make_viewer(built_atlas):
    """A Viewer of the test atlas with the given state values (no server needed)."""

    def make(**state_values):
        from atlas.app.data import open_view_atlas
        from atlas.app.state import ViewState
        from atlas.app.viewer import Viewer

        state = ViewState()
        state.param.update(**state_values)
        return Viewer(open_view_atlas(built_atlas), state)

    return make
