"""``striae serve`` refuses a bad ATLAS with one line and exit code 2."""

from __future__ import annotations

import json

import pytest


def assert_one_line_error(proc, *fragments):
    """Exit 2, one line on stderr starting ``striae:``, no traceback (as tests/conftest.py)."""
    assert proc.returncode == 2, (proc.returncode, proc.stderr)
    lines = [ln for ln in proc.stderr.splitlines() if ln.strip()]
    assert len(lines) == 1 and lines[0].startswith("striae: "), proc.stderr
    assert "Traceback" not in proc.stderr
    for frag in fragments:
        assert frag in lines[0], (frag, lines[0])


def test_missing_atlas(run_striae, tmp_path):
    assert_one_line_error(run_striae("serve", tmp_path / "nope"), "nope", "no such atlas folder")


def test_folder_without_catalog(run_striae, tmp_path):
    assert_one_line_error(run_striae("serve", tmp_path), "no atlas.json")


def test_catalog_of_another_format(run_striae, tmp_path):
    (tmp_path / "atlas.json").write_text(json.dumps({"format": 7, "stars": []}))
    assert_one_line_error(run_striae("serve", tmp_path), "atlas.json", "format")


def test_unreadable_catalog(run_striae, tmp_path):
    (tmp_path / "atlas.json").write_text("{not json")
    assert_one_line_error(run_striae("serve", tmp_path), "atlas.json")


@pytest.mark.parametrize("args,where", [(["--port", "0"], "--port"), (["--procs", "0"], "--procs")])
def test_bad_options(run_striae, built_atlas, args, where):
    assert_one_line_error(run_striae("serve", built_atlas, *args), where)
