"""Output files of an export: checked before any work, written whole or not at all."""

from __future__ import annotations

import os
import tempfile
from pathlib import Path

from atlas.errors import InputError


def check_out(out, suffix: str):
    """Validate an output file path before any work: parent folder exists, writable.

    A binary file object (anything with ``write``, e.g. ``io.BytesIO``) is accepted as
    it is: the finished file's bytes are written to it in one call.
    """
    if hasattr(out, "write"):
        return out
    if out is None or str(out).strip() == "":
        raise InputError("out", "no output file given")
    p = Path(out)
    if p.is_dir():
        raise InputError(p, "is a folder; give a file name to write")
    parent = p.parent if str(p.parent) else Path(".")
    if not parent.is_dir():
        raise InputError(p, f"folder {os.fspath(parent)} does not exist")
    if not os.access(parent, os.W_OK | os.X_OK):
        raise InputError(p, f"cannot write in folder {os.fspath(parent)}")
    if p.exists() and not os.access(p, os.W_OK):
        raise InputError(p, "exists and cannot be overwritten")
    return p


class _Atomic:
    """A temporary file beside ``path``, moved into place only if the body succeeds.

    For a file object instead of a path, the temporary file lives in the system's
    temporary folder and its bytes are written to the object on success.
    """

    def __init__(self, path):
        self.path = path
        self.stream = None
        if hasattr(path, "write"):
            self.stream, self.path = path, Path(tempfile.gettempdir()) / "striae-export"

    def __enter__(self) -> str:
        try:
            fd, self.tmp = tempfile.mkstemp(prefix=f".{self.path.name}.", suffix=".part",
                                            dir=self.path.parent)
        except OSError as exc:
            raise InputError(self.path, f"cannot write: {exc.strerror or exc}") from None
        os.close(fd)
        return self.tmp

    def __exit__(self, exc_type, exc, tb):
        if exc_type is None and self.stream is not None:
            try:
                with open(self.tmp, "rb") as fh:
                    self.stream.write(fh.read())
            finally:
                _unlink(self.tmp)
            return False
        if exc_type is None:
            try:
                os.chmod(self.tmp, 0o644)
                os.replace(self.tmp, self.path)
            except OSError as e:
                _unlink(self.tmp)
                raise InputError(self.path, f"cannot write: {e.strerror or e}") from None
            return False
        _unlink(self.tmp)
        return False


def _unlink(path):
    try:
        os.unlink(path)
    except OSError:
        pass


def _name(out) -> str | None:
    return None if hasattr(out, "write") else os.fspath(out)
