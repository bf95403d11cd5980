"""``striae serve``: browse an atlas in the web browser."""

from __future__ import annotations

import os

from atlas.errors import InputError

HELP = "serve an atlas in the web browser (read-only; the view lives in the URL)"
EXAMPLE = "striae serve build/demo-atlas --port 5006 --show"


def add_arguments(parser):
    parser.add_argument("atlas", metavar="ATLAS", help="atlas folder (holding atlas.json)")
    parser.add_argument("--port", type=int, default=5006, help="TCP port (default 5006)")
    parser.add_argument("--address", default="127.0.0.1",
                        help="address to listen on (default 127.0.0.1, this machine only)")
    parser.add_argument("--procs", type=int, default=1,
                        help="server processes sharing the port (default 1)")
    parser.add_argument("--show", action="store_true", help="open a browser tab")


def run(args) -> int:
    if not (0 < args.port < 65536):
        raise InputError("--port", f"must be 1 .. 65535, not {args.port}")
    if not (1 <= args.procs <= max(1, (os.cpu_count() or 1) * 4)):
        raise InputError("--procs", f"must be 1 .. {max(1, (os.cpu_count() or 1) * 4)}, not {args.procs}")
    from atlas.app.data import open_view_atlas

    data = open_view_atlas(args.atlas)  # InputError for a missing or malformed atlas
    if not data.star_ids:
        raise InputError(os.path.join(args.atlas, "atlas.json"), "the atlas holds no stars")
    from atlas.app.serve import serve

    print(f"striae: serving {args.atlas} ({len(data.star_ids)} stars) on "
          f"http://{args.address}:{args.port}/  (Ctrl-C stops)", flush=True)
    serve(args.atlas, port=args.port, address=args.address, procs=args.procs, show=args.show)
    return 0
