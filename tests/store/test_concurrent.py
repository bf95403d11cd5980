"""Builds racing into one atlas keep every star of both; a build that cannot get the lock stops."""

from __future__ import annotations

import multiprocessing
import random
import shutil

import pytest

from atlas import store
from atlas.build import build_atlas
from atlas.errors import InputError
from tests.build._data import star_files

ROUNDS = 20


def _build(files, atlas, delays_s, both_built, conn):
    import time

    def meet(_path, _result):
        # both builds have read the catalog and written their star before either commits
        # (a real race, not two builds one after the other), then commit in random order
        both_built.wait(60)
        time.sleep(delays_s[1])

    time.sleep(delays_s[0])
    try:
        rep = build_atlas(files, atlas, progress=False, on_star=meet)
        conn.send(("ok", sorted(rep.built)))
    except BaseException as exc:  # reported to the test, never swallowed
        conn.send(("error", repr(exc)))


@pytest.mark.slow
def test_two_builds_racing_keep_every_star_of_both(tmp_path):
    base, a, b = star_files(tmp_path, 3, n=6000)
    template = tmp_path / "template"
    build_atlas([base], template, progress=False)
    ctx = multiprocessing.get_context("fork")
    rng = random.Random(13)
    for k in range(ROUNDS):
        atlas = tmp_path / f"atlas{k}"
        shutil.copytree(template, atlas)
        pipes, procs = [], []
        both_built = ctx.Barrier(2)
        for files in ([base, a], [base, b]):
            here, there = ctx.Pipe()
            delays = (rng.uniform(0, 0.6), rng.uniform(0, 0.3))
            p = ctx.Process(target=_build, args=(files, atlas, delays, both_built, there))
            p.start()
            pipes.append(here)
            procs.append(p)
        for p in procs:
            p.join(120)
        outcomes = [c.recv() for c in pipes]
        assert all(o[0] == "ok" for o in outcomes), outcomes
        cat = store.open_atlas(atlas)
        sources = sorted(r["source"] for r in cat.stars)
        assert sources == sorted(p.name for p in (base, a, b)), (k, sources)
        named = {r["store"].split("/")[1] for r in cat.stars}
        assert {p.name for p in (atlas / "stars").iterdir()} == named, k  # nothing stale, nothing lost
        for rec in cat.stars:
            assert store.verify_star(cat.url, rec).ok, (k, rec["id"])
            assert cat.window(rec["id"], 0, 0.0, 1e9, 200)["wavelength"].size > 0


def test_a_build_that_cannot_get_the_lock_stops_and_commits_nothing(tmp_path):
    first, second = star_files(tmp_path, 2, n=6000)
    atlas = tmp_path / "atlas"
    build_atlas([first], atlas, progress=False)
    before = (atlas / "atlas.json").read_bytes()
    stores = sorted(p.name for p in (atlas / "stars").iterdir())
    with store.atlas_lock(str(atlas)), pytest.raises(InputError) as err:
        build_atlas([first, second], atlas, progress=False, lock_timeout_s=0.3)
    assert err.value.where == "--lock-timeout"
    assert (atlas / "atlas.json").read_bytes() == before
    assert sorted(p.name for p in (atlas / "stars").iterdir()) == stores  # its own stores removed


def test_lock_timeout_on_the_command_line_is_one_line(tmp_path, capsys):
    from atlas.cli import main

    (f,) = star_files(tmp_path, 1, n=6000)
    atlas = tmp_path / "atlas"
    with store.atlas_lock(str(atlas)):
        code = main(["build", str(f), "--out", str(atlas), "--quiet", "--lock-timeout", "0.2"])
    err = capsys.readouterr().err.strip().splitlines()
    assert code == 2
    assert err[-1].startswith("striae: --lock-timeout: another build held the atlas")
    assert not (atlas / "atlas.json").exists()


def test_a_build_after_another_lists_only_its_own_files(tmp_path):
    """One after the other (no overlap), the later build's file list is the atlas (README, Building)."""
    base, a, b = star_files(tmp_path, 3, n=6000)
    atlas = tmp_path / "atlas"
    build_atlas([base, a], atlas, progress=False)
    build_atlas([base, b], atlas, progress=False)
    cat = store.open_atlas(atlas)
    assert sorted(r["source"] for r in cat.stars) == [base.name, b.name]
    named = {r["store"].split("/")[1] for r in cat.stars}
    assert {p.name for p in (atlas / "stars").iterdir()} == named
