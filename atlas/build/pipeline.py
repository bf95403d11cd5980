"""Many stars: plan -> execute (serial or dask) -> assign ids and commit -> a report.

:func:`plan_build` decides which stars need building (a star whose file bytes, options
and tool version are unchanged keeps its store); :func:`execute` runs
:func:`atlas.build.star.build_star_safe` for the rest, in this process or on a
dask.distributed cluster; :func:`atlas.store.commit` merges the records into the catalog
as it is at that moment, under the atlas's lock, making ids unique.  Nothing here prints:
the report says what happened and ``atlas/commands/build.py`` tells the user.
"""

from __future__ import annotations

import datetime as _dt
import glob
import os
from dataclasses import dataclass, field

from atlas import __version__, store
from atlas.build.star import BuildOptions, build_star_safe
from atlas.errors import InputError
from atlas.spectrum import sha256_of


def expand_inputs(patterns, base: str | None = None) -> list[str]:
    """Files named or matched by glob patterns (relative to ``base``), sorted, without repeats."""
    out: list[str] = []
    for pat in patterns:
        p = os.path.expanduser(str(pat))
        if base is not None and not os.path.isabs(p):
            p = os.path.join(base, p)
        if glob.has_magic(p):
            hits = sorted(h for h in glob.glob(p) if os.path.isfile(h))
            if not hits:
                raise InputError(str(pat), "no file matches this pattern")
            out.extend(hits)
        else:
            if not os.path.exists(p):
                raise InputError(str(pat), "no such file")
            if os.path.isdir(p):
                raise InputError(str(pat), "is a folder; give the spectrum files (e.g. folder/*.fits)")
            out.append(p)
    seen, uniq = set(), []
    for p in out:
        key = os.path.realpath(p)
        if key not in seen:
            seen.add(key)
            uniq.append(p)
    return uniq


def _now() -> str:
    return _dt.datetime.now(_dt.UTC).strftime("%Y-%m-%dT%H:%M:%SZ")


@dataclass
class BuildReport:
    """What a build did: ids built and kept, files failed (path, reason), one line per
    built star (``lines``), whether it committed and the catalog it committed."""

    built: list = field(default_factory=list)
    kept: list = field(default_factory=list)
    failed: list = field(default_factory=list)
    lines: list = field(default_factory=list)
    committed: bool = False
    catalog: dict | None = None


@dataclass
class BuildPlan:
    """Per input: ``(path, sha256 or '', reused record or None)``; the stores the catalog
    named when the build began; the recorded options."""

    items: list
    base_stores: frozenset
    options: dict

    @property
    def todo(self) -> list[tuple[str, str]]:
        return [(p, s) for p, s, r in self.items if r is None and s]


def plan_build(inputs, atlas_url: str, options: BuildOptions, force: bool, report: BuildReport) -> BuildPlan:
    """Hash every input and find the stars that can be kept as they are."""
    old = store.read_catalog(atlas_url)
    opts = options.as_dict()
    reusable: dict = {}
    if old and not force and old.get("options") == opts and old.get("tool_version") == __version__:
        for rec in old["stars"]:
            reusable.setdefault((rec.get("source"), rec.get("source_sha256")), []).append(rec)
    items = []
    for path in inputs:
        try:
            sha = sha256_of(path)
        except OSError as exc:
            report.failed.append((path, f"cannot read: {exc.strerror or exc}"))
            continue
        cands, rec = reusable.get((os.path.basename(path), sha)), None
        while cands:
            c = cands.pop(0)
            if store.store_exists(atlas_url, c["store"]):
                rec = c
                break
        items.append((path, sha, rec))
    base = frozenset(r["store"] for r in (old or {}).get("stars", []))
    return BuildPlan(items, base, opts)


def execute(plan: BuildPlan, atlas_url: str, options: BuildOptions, workers: int = 1,
            scheduler: str | None = None, progress: bool | None = None, on_star=None) -> dict:
    """Build every star the plan needs; ``{path: result}`` (a record or ``{"error": ...}``)."""
    import sys

    from tqdm import tqdm

    todo = plan.todo
    bar = tqdm(total=len(todo), unit="star", desc="building", file=sys.stderr,
               disable=(not progress) if progress is not None else None)

    def done(path, result):
        bar.update(1)
        if on_star is not None:
            on_star(path, result)

    try:
        if todo and (workers > 1 or scheduler):
            from atlas.build.cluster import run_dask

            return run_dask(todo, options, atlas_url, plan.base_stores, workers, scheduler, done)
        results = {}
        for p, s in todo:
            results[p] = build_star_safe(p, options, atlas_url, s, plan.base_stores)
            done(p, results[p])
        return results
    finally:
        bar.close()


def describe(res: dict) -> str:
    """The line said for a star built: samples, strips and the build's notes."""
    r = res["record"]
    extra = "; ".join(res["notes"])
    return f"from {r['source']}: {r['samples']} samples, {res['describe']}" + (f" ({extra})" if extra else "")


def build_atlas(inputs: list[str], atlas_url: str, options: BuildOptions | None = None, *,
                force: bool = False, workers: int = 1, scheduler: str | None = None,
                progress: bool | None = None, lock_timeout_s: float = store.LOCK_TIMEOUT_S,
                on_star=None) -> BuildReport:
    """Build (or update) the atlas at ``atlas_url`` from spectrum files; returns a report.

    Stars whose file bytes, options and tool version are unchanged keep their store
    (``force`` rebuilds all).  Files that fail are in ``report.failed`` and left out; the
    catalog is committed (merged with whatever another build committed meanwhile) when at
    least one star is good.  ``on_star(path, result)`` is called as each star finishes.
    """
    options = options or BuildOptions()
    atlas_url = store.normalise(atlas_url)
    if store.is_read_only(atlas_url):
        raise InputError(atlas_url, "an http(s) atlas is read-only: build into a folder or s3:// and copy it")
    report = BuildReport()
    plan = plan_build(inputs, atlas_url, options, force, report)
    results = execute(plan, atlas_url, options, workers, scheduler, progress, on_star)
    ours = []
    for path, _sha, rec in plan.items:
        if rec is not None:
            ours.append((rec, True))
            continue
        res = results.get(path)
        if res is None or "error" in res:
            report.failed.append((path, res["error"] if res else "not built"))
            continue
        ours.append(({**res["record"], "id": res["slug"]}, False))
        report.lines.append((path, describe(res)))
    if not ours:
        return report
    header = {"format": store.FORMAT, "tool_version": __version__, "built_utc": _now(),
              "options": plan.options}
    built = {r["store"] for r, kept in ours if not kept}
    try:
        catalog = store.commit(atlas_url, header, ours, set(plan.base_stores), lock_timeout_s)
    except BaseException:
        store.discard(atlas_url, built)  # never committed: nobody else will name them
        raise
    store.release(atlas_url, built)
    report.committed, report.catalog = True, catalog
    for r in catalog["stars"]:
        if r["store"] in built:
            report.built.append(r["id"])
        elif any(r["store"] == k["store"] for k, kept in ours if kept):
            report.kept.append(r["id"])
    return report
