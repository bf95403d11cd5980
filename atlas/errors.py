"""The one exception type for problems with what the user gave us."""

from __future__ import annotations

import os


class InputError(Exception):
    """A user-facing input problem: a file or parameter, and what is wrong with it.

    The CLI catches it once and prints ``striae: WHERE: REASON`` with exit code 2.
    ``where`` is a file path or a parameter name such as ``--strip-kms``.
    """

    def __init__(self, where: str | os.PathLike | None, reason: str):
        self.where = None if where is None else os.fspath(where)
        self.reason = " ".join(str(reason).split())  # always one line
        super().__init__(self.message)

    @property
    def message(self) -> str:
        return f"{self.where}: {self.reason}" if self.where else self.reason
