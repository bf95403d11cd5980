"""Reference archives fetched by ``make reference`` into ``.venv/ref`` (test-only).

Outside CI a missing archive skips with the reason; with ``CI=true`` it fails.
"""

from __future__ import annotations

import hashlib
import os
from pathlib import Path

import pytest

REF_DIR = Path(__file__).resolve().parents[2] / ".venv" / "ref"
LINETOOLS_WHEEL = "linetools-0.3.2-py3-none-any.whl"
LINETOOLS_SHA256 = "100a833d63f16e1c6b4bbd555c840bd070090037cb92c137305f1cbbad6867cc"


def reference(name: str, sha256: str) -> Path:
    """The verified archive ``name`` in ``.venv/ref``; fail in CI, skip elsewhere."""
    path = REF_DIR / name
    if not path.is_file():
        why = f"{path} missing: run `make reference` (pip download from PyPI)"
        if os.environ.get("CI", "").lower() in ("1", "true", "yes"):
            pytest.fail(why)
        pytest.skip(why)
    digest = hashlib.sha256(path.read_bytes()).hexdigest()
    assert digest == sha256, f"{path}: sha256 {digest} is not {sha256}"
    return path
