"""Every chunk carries a checksum; verify finds any flipped byte and repair rebuilds the star."""

from __future__ import annotations

import json
import shutil

import pytest
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

from atlas import store
from atlas.build import build_atlas
from atlas.cli import main
from tests.build._data import star_files


@pytest.fixture(scope="module")
def built(tmp_path_factory):
    folder = tmp_path_factory.mktemp("verify")
    files = star_files(folder, 2, n=8000)
    atlas = folder / "atlas"
    rep = build_atlas(files, atlas, progress=False)
    assert rep.committed and not rep.failed
    return atlas


def _chunks(atlas):
    """Every chunk file of every store (Zarr v3 keeps chunks under a ``c`` folder)."""
    return sorted(p for p in (atlas / "stars").rglob("*") if p.is_file() and "/c/" in p.as_posix())


def test_every_stored_array_has_a_crc32c_codec(built):
    import zarr

    rec = store.open_atlas(built).stars[0]
    g = zarr.open_group(str(built / rec["store"]), mode="r")
    groups = [g] + [sub for _, sub in g.groups()]
    names = [type(c).__name__ for grp in groups for _, a in grp.arrays() for c in a.metadata.codecs]
    assert names.count("Crc32cCodec") == sum(1 for grp in groups for _ in grp.arrays())


def test_an_intact_atlas_verifies_and_records_each_store_hash(built, capsys):
    cat = json.loads((built / "atlas.json").read_text())
    assert all(len(r["store_sha256"]) == 64 for r in cat["stars"])
    assert main(["verify", str(built), "--quiet"]) == 0
    out = capsys.readouterr().out
    assert "2 of 2 star(s) intact" in out


def test_the_manifest_names_every_file_of_each_store(built):
    from atlas.store.write import MANIFEST, WRITER

    for rec in store.open_atlas(built).stars:
        folder = built / rec["store"]
        doc = json.loads((folder / MANIFEST).read_text())
        on_disk = {p.relative_to(folder).as_posix() for p in folder.rglob("*") if p.is_file()}
        assert set(doc["files"]) == on_disk - {MANIFEST, WRITER}
        assert any("/c/" in f for f in doc["files"]) and "zarr.json" in doc["files"]


@settings(max_examples=25, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture])
@given(pick=st.integers(0, 10**6), offset=st.integers(0, 10**9), bit=st.integers(0, 7))
def test_a_flipped_byte_in_any_chunk_is_found_and_named(built, tmp_path_factory, pick, offset, bit):
    atlas = tmp_path_factory.mktemp("flip") / "atlas"
    shutil.copytree(built, atlas)
    chunks = _chunks(atlas)
    target = chunks[pick % len(chunks)]
    data = bytearray(target.read_bytes())
    data[offset % len(data)] ^= 1 << bit
    target.write_bytes(bytes(data))
    a = store.open_atlas(atlas)
    checks = [store.verify_star(a.url, r) for r in a.stars]
    damaged = [(c.store, d) for c in checks for d in c.damaged]
    rel = target.relative_to(atlas).as_posix()
    assert damaged == [(rel.split(".zarr/")[0] + ".zarr", rel.split(".zarr/")[1])]


def test_a_damaged_chunk_is_refused_when_read_and_repair_rebuilds_the_star(built, tmp_path, capsys):
    atlas = tmp_path / "atlas"
    shutil.copytree(built, atlas)
    rec = store.open_atlas(atlas).stars[0]
    chunk = next(p for p in _chunks(atlas) if p.as_posix().startswith(str(atlas / rec["store"]))
                 and "/flux/c/" in p.as_posix() and "/lod" not in p.as_posix())
    data = bytearray(chunk.read_bytes())
    data[len(data) // 2] ^= 0xFF
    chunk.write_bytes(bytes(data))
    store.clear_cache()
    from atlas.lod import clear_cache

    clear_cache()
    a = store.open_atlas(atlas)
    with pytest.raises(store.DamagedStar) as err:
        a.window(rec["id"], 0, 0.0, 1e9, 100, flux="raw")
    assert err.value.message == f"star {rec['id']}: its stored data is damaged; run striae verify"
    assert main(["verify", str(atlas), "--quiet"]) == 1
    assert f"DAMAGED  {rec['id']}" in capsys.readouterr().out
    assert main(["verify", str(atlas), "--repair", "--quiet"]) == 0
    assert "repaired" in capsys.readouterr().out
    store.clear_cache()
    a = store.open_atlas(atlas)
    assert [r["id"] for r in a.stars] == [r["id"] for r in store.open_atlas(built).stars]
    assert a.window(rec["id"], 0, 0.0, 1e9, 100)["wavelength"].size > 0
    assert main(["verify", str(atlas), "--quiet"]) == 0
    assert not (atlas / rec["store"]).exists()  # the damaged store is gone


def test_repair_says_why_when_the_source_file_is_gone(built, tmp_path, capsys):
    atlas = tmp_path / "atlas"
    shutil.copytree(built, atlas)
    cat = json.loads((atlas / "atlas.json").read_text())
    cat["stars"][0]["source_path"] = str(tmp_path / "moved-away.csv")
    (atlas / "atlas.json").write_text(json.dumps(cat))
    chunk = next(p for p in _chunks(atlas) if p.as_posix().startswith(str(atlas / cat["stars"][0]["store"])))
    chunk.write_bytes(b"x" + chunk.read_bytes()[1:])
    assert main(["verify", str(atlas), "--repair", "--quiet"]) == 1
    assert "not repaired: its source file" in capsys.readouterr().out
