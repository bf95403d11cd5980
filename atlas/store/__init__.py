"""The atlas on disk, the only code that reads or writes one.

``ATLAS/atlas.json`` is the catalog and the commit point; ``ATLAS/stars/<name>.zarr``
holds one star each (Zarr v3, consolidated metadata, a crc32c checksum on every chunk, a
manifest of every file's crc32c, itself hashed with sha256 into the catalog).  Writing goes to new, claimed, content-named stores;
the catalog is committed under a lock with a merge (:func:`commit`), so concurrent builds
keep each other's stars and a killed build leaves the previous atlas as it was.

| module | job |
| --- | --- |
| ``layout`` | names, ids, paths, fsspec back-ends, :class:`StarRecord` |
| ``write`` | one star store: claim, block-by-block write, features, seal |
| ``catalog`` | read/write ``atlas.json``, the lock, the merge, stale-store clean-up |
| ``read`` | :func:`open_atlas`, :class:`Atlas` (stars, levels, windows, features) |
| ``verify`` | :func:`verify_star`: every file against the manifest |
"""

from atlas.store.catalog import (
    LOCK_TIMEOUT_S,
    atlas_lock,
    merge,
    read_catalog,
    remove_stale,
    write_catalog,
)
from atlas.store.layout import (
    CATALOG,
    FORMAT,
    ID_RE,
    NUMBER_KEYS,
    RECORD_KEYS,
    STARS,
    StarRecord,
    check_id,
    fresh_store_name,
    is_local,
    is_read_only,
    join,
    json_number,
    normalise,
    slugify,
    store_exists,
    store_name,
    store_url,
    unique_id,
)
from atlas.store.read import Atlas, DamagedStar, clear_cache, open_atlas
from atlas.store.verify import StarCheck, verify_star
from atlas.store.write import (
    claim,
    discard,
    release,
    seal,
    write_features,
    write_group,
    write_lines,
    write_star,
    write_star_blocks,
)


def commit(atlas_url: str, header: dict, ours: list[tuple[dict, bool]], base_stores: set[str],
           lock_timeout_s: float = LOCK_TIMEOUT_S) -> dict:
    """Merge this build's stars into the catalog as it is now and commit it, under the lock.

    ``header`` holds ``format``, ``tool_version``, ``built_utc`` and ``options``; ``ours``
    pairs of (record, kept); ``base_stores`` the stores the catalog named when the build
    began.  Removes the stores no longer named (except those a live build is writing).
    Returns the committed catalog.
    """
    with atlas_lock(atlas_url, lock_timeout_s):
        theirs = read_catalog(atlas_url)
        stars = merge(theirs, base_stores, ours, lambda s: store_exists(atlas_url, s))
        catalog = {**header, "stars": stars}
        write_catalog(atlas_url, catalog)
        remove_stale(atlas_url, catalog)
    return catalog


__all__ = [
    "CATALOG", "FORMAT", "ID_RE", "LOCK_TIMEOUT_S", "NUMBER_KEYS", "RECORD_KEYS", "STARS",
    "Atlas", "DamagedStar", "StarCheck", "StarRecord", "atlas_lock", "check_id", "claim",
    "clear_cache", "commit", "discard", "release", "fresh_store_name", "is_local", "is_read_only", "join",
    "json_number", "merge", "normalise", "open_atlas", "read_catalog", "remove_stale", "seal",
    "slugify", "store_exists", "store_name", "store_url", "unique_id", "verify_star",
    "write_catalog", "write_features", "write_group", "write_lines", "write_star", "write_star_blocks",
]
