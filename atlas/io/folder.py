"""Command-line inputs (files, glob patterns, folders) -> readable spectrum files and refusals.

:func:`expand` is what ``striae inspect`` and ``striae build`` use: a folder gives
every file in it (in its sub-folders too with ``recursive``), a glob pattern its
matches (``**`` reaches sub-folders with ``recursive``), a file itself.  Each file
is sniffed by the picker (:func:`atlas.io.detect`, headers only); those no
reader takes, or that are broken, come back as ``(path, reason)`` so the command
can report each in one line and go on with the rest.  Hidden files and folders
(names starting with ``.``) inside a folder are skipped.  A pattern matching
nothing or a path that does not exist is the user's typing mistake:
``InputError`` naming it.
"""

from __future__ import annotations

import glob
import os

from atlas.errors import InputError


def _folder_files(folder: str, recursive: bool) -> list[str]:
    if not recursive:
        names = sorted(os.listdir(folder))
        return [
            os.path.join(folder, n)
            for n in names
            if not n.startswith(".") and os.path.isfile(os.path.join(folder, n))
        ]
    out = []
    for root, dirs, files in os.walk(folder):
        dirs[:] = sorted(d for d in dirs if not d.startswith("."))
        out.extend(os.path.join(root, f) for f in sorted(files) if not f.startswith("."))
    return out


def _candidates(pattern, base, recursive) -> list[str]:
    p = os.path.expanduser(str(pattern))
    if base is not None and not os.path.isabs(p):
        p = os.path.join(base, p)
    if glob.has_magic(p):
        hits = sorted(glob.glob(p, recursive=recursive))
        if not hits:
            raise InputError(str(pattern), "no file matches this pattern")
        out = []
        for h in hits:
            if os.path.isdir(h):
                out.extend(_folder_files(h, recursive))
            elif os.path.isfile(h):
                out.append(h)
        return out
    if not os.path.exists(p):
        raise InputError(str(pattern), "no such file or folder")
    if os.path.isdir(p):
        return _folder_files(p, recursive)
    return [p]


def _inside(path: str, folders: list[str]) -> bool:
    real = os.path.realpath(path)
    return any(real == f or real.startswith(f + os.sep) for f in folders)


def expand(
    inputs, *, recursive: bool = False, base: str | None = None, exclude=()
) -> tuple[list[str], list[tuple[str, str]]]:
    """(readable files, [(path, reason), ...] for the others), each in input order, no repeats.

    ``base`` is the folder relative paths start from (a recipe's folder);
    ``exclude`` are folders whose files are left out (the atlas being built).
    """
    from atlas.io import detect

    skip = [
        os.path.realpath(os.path.expanduser(str(e))) for e in exclude if e and "://" not in str(e)
    ]
    seen: set[str] = set()
    readable: list[str] = []
    unreadable: list[tuple[str, str]] = []
    for pattern in inputs:
        for path in _candidates(pattern, base, recursive):
            key = os.path.realpath(path)
            if key in seen or _inside(path, skip):
                continue
            seen.add(key)
            try:
                detect(path)
            except InputError as exc:
                unreadable.append((path, exc.reason if exc.where == path else exc.message))
                continue
            readable.append(path)
    return readable, unreadable
