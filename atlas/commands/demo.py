"""``striae demo``: write the invented demo stars (FITS, echelle FITS, CSV) bit for bit."""

from __future__ import annotations

import os
import sys
from pathlib import Path

from atlas.errors import InputError

HELP = "write the invented demo spectra (and optionally a PNG of their class sequence)"
EXAMPLE = "striae demo --out demo_spectra --plot demo_spectra/classes.png"


def add_arguments(parser) -> None:
    parser.add_argument("--out", default="demo_spectra", metavar="DIR",
                        help="folder to write the demo files and README.md into (default: demo_spectra)")
    parser.add_argument("--plot", default=None, metavar="PNG",
                        help="also draw the stars' normalised spectra, hot to cool, into this PNG file")


def _check_dir(out: Path) -> None:
    if out.exists() and not out.is_dir():
        raise InputError("--out", f"{out} exists and is not a folder")
    parent = out if out.exists() else out.parent if str(out.parent) else Path(".")
    while not parent.exists():
        parent = parent.parent
    if not os.access(parent, os.W_OK):
        raise InputError("--out", f"cannot write into {parent}")


def run(args) -> int:
    from atlas.synth import demo

    out = Path(args.out)
    _check_dir(out)
    png = None
    if args.plot:
        png = Path(args.plot)
        if png.suffix.lower() != ".png":
            raise InputError("--plot", f"{png} must end in .png")
        if png.exists() and png.is_dir():
            raise InputError("--plot", f"{png} is a folder")
        if png.parent != Path("") and png.parent.exists() and not os.access(png.parent, os.W_OK):
            raise InputError("--plot", f"cannot write into {png.parent}")

    def progress(obs):
        print(f"wrote {out / obs.file}", file=sys.stderr, flush=True)

    generated = demo.write_demo(out, progress=progress)
    print(f"wrote {out / 'README.md'}", file=sys.stderr)
    if png is not None:
        from atlas.synth.plot import class_plot

        png.parent.mkdir(parents=True, exist_ok=True)
        class_plot(generated, png)
        print(f"wrote {png}", file=sys.stderr)
    return 0
