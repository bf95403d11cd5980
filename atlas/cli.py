"""The ``striae`` command: one entry point, one subcommand module each.

Each module in ``atlas/commands/`` defines ``HELP`` (one line), ``EXAMPLE``,
``add_arguments(parser)`` and ``run(args) -> int``.  User mistakes raise
:class:`atlas.errors.InputError`, turned here into one line on stderr and exit 2.
"""

from __future__ import annotations

import argparse
import importlib
import sys

from atlas import __version__
from atlas.errors import InputError

#: Subcommands in the order ``--help`` lists them.
COMMANDS = ("demo", "build", "serve", "inspect", "measure", "lines", "export", "verify")


def _load(name: str):
    return importlib.import_module(f"atlas.commands.{name}")


def build_parser() -> argparse.ArgumentParser:
    parser = argparse.ArgumentParser(
        prog="striae",
        description="Build and browse atlases of long, high-resolution star spectra.",
        epilog="Example: striae build my_spectra/*.fits --out my_atlas && striae serve my_atlas",
    )
    parser.add_argument("--version", action="version", version=f"striae {__version__}")
    sub = parser.add_subparsers(dest="command", metavar="COMMAND")
    for name in COMMANDS:
        try:
            mod = _load(name)
        except ModuleNotFoundError as exc:
            if exc.name == f"atlas.commands.{name}":
                continue  # not written yet
            raise
        p = sub.add_parser(
            name,
            help=mod.HELP,
            description=mod.HELP,
            epilog=f"Example: {mod.EXAMPLE}",
            formatter_class=argparse.RawDescriptionHelpFormatter,
        )
        mod.add_arguments(p)
        p.set_defaults(_run=mod.run)
    return parser




def main(argv: list[str] | None = None) -> int:
    parser = build_parser()
    args = parser.parse_args(argv)
    if not getattr(args, "_run", None):
        parser.print_help()
        return 2
    try:
        return int(args._run(args) or 0)
    except InputError as exc:
        print(f"striae: {exc.message}", file=sys.stderr)
        return 2
    except KeyboardInterrupt:
        print("striae: interrupted", file=sys.stderr)
        return 130


if __name__ == "__main__":  # pragma: no cover
    sys.exit(main())
