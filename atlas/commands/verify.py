"""``striae verify``: read every stored byte of an atlas, name what is damaged, optionally repair."""

from __future__ import annotations

import json
import sys

from atlas.errors import InputError

HELP = "check every star store of an atlas against its checksums (and --repair damaged stars)"
EXAMPLE = (
    "striae verify my_atlas\n"
    "         striae verify my_atlas --repair      # rebuild damaged stars from their source files\n"
    "         striae verify s3://bucket/atlas --json"
)


def add_arguments(parser) -> None:
    parser.add_argument("atlas", metavar="ATLAS", help="atlas folder or URL")
    parser.add_argument("--repair", action="store_true",
                        help="rebuild each damaged star from its source file, when that file is"
                        " still where the build found it with the same bytes")
    parser.add_argument("--json", action="store_true", help="print the result as JSON")
    parser.add_argument("--lock-timeout", type=float, default=None, metavar="S", dest="lock_timeout",
                        help="seconds to wait for another build's commit (with --repair; default 600)")
    parser.add_argument("--quiet", action="store_true", help="no progress bar")


def run(args) -> int:
    from tqdm import tqdm

    from atlas import store
    from atlas.store.repair import check_writable, repair

    atlas = store.open_atlas(args.atlas)
    if args.repair:
        check_writable(atlas.url)
    checks = []
    for rec in tqdm(atlas.stars, unit="star", desc="verifying", file=sys.stderr,
                    disable=True if args.quiet else None):
        checks.append(store.verify_star(atlas.url, rec))
    damaged = [c for c in checks if not c.ok]
    outcome = {}
    if args.repair and damaged:
        timeout = store.LOCK_TIMEOUT_S if args.lock_timeout is None else args.lock_timeout
        if not timeout >= 0:
            raise InputError("--lock-timeout", f"must be 0 or more seconds, not {args.lock_timeout!r}")
        outcome = repair(atlas.url, atlas.catalog, [c.star_id for c in damaged], timeout)
    if args.json:
        print(json.dumps({"atlas": atlas.url, "stars": [
            {"id": c.star_id, "store": c.store, "files": c.files, "bytes": c.bytes,
             "checked_by": c.how, "damaged": c.damaged, "repair": outcome.get(c.star_id)}
            for c in checks]}, indent=1))
    else:
        for c in checks:
            if c.ok:
                print(f"ok       {c.star_id}: {c.files} files, {c.bytes / 2**20:.1f} MiB")
            else:
                shown = ", ".join(c.damaged[:5]) + (f" and {len(c.damaged) - 5} more" if len(c.damaged) > 5 else "")
                print(f"DAMAGED  {c.star_id} ({c.store}): {shown}")
                if c.star_id in outcome:
                    print(f"         {outcome[c.star_id]}")
        print(f"{len(checks) - len(damaged)} of {len(checks)} star(s) intact")
    unrepaired = [c for c in damaged if outcome.get(c.star_id) != "repaired"]
    return 1 if unrepaired else 0
