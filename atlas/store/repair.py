"""Rebuilding damaged stars from their source files and committing them in their place."""

from __future__ import annotations

import os

from atlas.errors import InputError
from atlas.spectrum import sha256_of


def source_of(record: dict) -> tuple[str | None, str]:
    """The star's source file if it is still there with the same bytes, and why not if not."""
    path = record.get("source_path")
    if not path:
        return None, "the catalog does not say where its source file was"
    if not os.path.isfile(path):
        return None, f"its source file {path} is gone"
    try:
        if sha256_of(path) != record.get("source_sha256"):
            return None, f"its source file {path} has changed since the build"
    except OSError as exc:
        return None, f"cannot read its source file {path}: {exc.strerror or exc}"
    return path, ""


def repair(atlas_url: str, catalog: dict, damaged_ids: list[str], lock_timeout_s: float) -> dict:
    """Rebuild each damaged star whose source file is unchanged; commit them under their ids.

    Returns ``{id: "repaired" | reason not repaired}``.
    """
    from atlas import store
    from atlas.build.star import BuildOptions, build_star_safe

    options = BuildOptions.from_dict(catalog.get("options"))
    records = {r["id"]: r for r in catalog["stars"]}
    outcome, fresh = {}, {}
    for sid in damaged_ids:
        rec = records[sid]
        path, why = source_of(rec)
        if path is None:
            outcome[sid] = f"not repaired: {why}"
            continue
        in_use = frozenset(r["store"] for r in catalog["stars"])
        res = build_star_safe(path, options, atlas_url, rec["source_sha256"], in_use)
        if "error" in res:
            outcome[sid] = f"not repaired: {res['error']}"
            continue
        fresh[sid] = {**res["record"], "id": sid}
        outcome[sid] = "repaired"
    if fresh:
        ours = [(fresh.get(r["id"], r), r["id"] not in fresh) for r in catalog["stars"]]
        header = {k: v for k, v in catalog.items() if k != "stars"}
        names = {r["store"] for r in fresh.values()}
        try:
            store.commit(atlas_url, header, ours, {r["store"] for r in catalog["stars"]}, lock_timeout_s)
        except BaseException:
            store.discard(atlas_url, names)
            raise
        store.release(atlas_url, names)
    return outcome


def check_writable(atlas_url: str) -> None:
    from atlas.store.layout import is_read_only

    if is_read_only(atlas_url):
        raise InputError("--repair", "an http(s) atlas is read-only: repair the original copy")
