"""Fixtures shared by every test folder."""

from __future__ import annotations

import os
import subprocess
import sys
from pathlib import Path

import pytest

REPO = Path(__file__).resolve().parents[1]

# Tests never touch the network: astropy must use its bundled IERS tables.
os.environ.setdefault("MPLBACKEND", "Agg")


@pytest.fixture
def run_striae(tmp_path):
    """Run the ``striae`` command in a subprocess; returns CompletedProcess (text)."""

    def _run(*args, check=False, timeout=300, cwd=None, env=None):
        full_env = dict(os.environ)
        full_env.update(env or {})
        return subprocess.run(
            [sys.executable, "-m", "atlas", *map(str, args)],
            capture_output=True,
            text=True,
            timeout=timeout,
            cwd=cwd or tmp_path,
            env=full_env,
            check=check,
        )

    return _run


def assert_one_line_error(proc, *fragments):
    """A user mistake: exit 2, exactly one line on stderr naming the problem, no traceback."""
    assert proc.returncode == 2, (proc.returncode, proc.stderr)
    lines = [ln for ln in proc.stderr.splitlines() if ln.strip()]
    assert len(lines) == 1, proc.stderr
    assert lines[0].startswith("striae: "), lines[0]
    assert "Traceback" not in proc.stderr
    for frag in fragments:
        assert frag in lines[0], (frag, lines[0])
