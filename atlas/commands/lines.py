"""``striae lines``: print the line list (or a user's), filtered by species and range."""

from __future__ import annotations

import math
import sys

from atlas.errors import InputError

HELP = "print the line list: species, air and vacuum wavelengths, strengths, sources"
EXAMPLE = "striae lines --species 'Fe I,Ca II' --range 3900:4000 --air"


def add_arguments(parser) -> None:
    parser.add_argument(
        "--species",
        metavar="S",
        help="only these species, comma-separated (e.g. 'Fe II' or 'Fe,Ca II'; "
        "an element name alone matches all its ions)",
    )
    parser.add_argument(
        "--range",
        dest="wave_range",
        metavar="A:B",
        help="only lines between A and B Å (in the chosen medium), e.g. 6500:6600",
    )
    parser.add_argument("--csv", action="store_true", help="print CSV with every column")
    parser.add_argument(
        "--list",
        dest="list_path",
        metavar="FILE",
        help="read this CSV line list instead of the shipped one",
    )
    medium = parser.add_mutually_exclusive_group()
    medium.add_argument(
        "--air",
        dest="medium",
        action="store_const",
        const="air",
        help="select and sort by air wavelengths (default)",
    )
    medium.add_argument(
        "--vacuum",
        dest="medium",
        action="store_const",
        const="vacuum",
        help="select and sort by vacuum wavelengths",
    )
    parser.set_defaults(medium="air")


def parse_range(text: str | None) -> tuple[float | None, float | None]:
    """``A:B`` (Å) -> (lo, hi); either side may be empty. Bad text raises InputError('--range')."""
    if text is None:
        return None, None
    parts = text.split(":")
    if len(parts) != 2:
        raise InputError("--range", f"expected A:B in Å (e.g. 6500:6600), got {text!r}")
    vals = []
    for p in parts:
        p = p.strip()
        if not p:
            vals.append(None)
            continue
        try:
            v = float(p)
        except ValueError:
            raise InputError("--range", f"{p!r} is not a number (expected A:B in Å)") from None
        if not math.isfinite(v) or v <= 0:
            raise InputError("--range", f"wavelengths must be positive numbers, got {p!r}")
        vals.append(v)
    lo, hi = vals
    if lo is not None and hi is not None and lo >= hi:
        raise InputError("--range", f"start {lo:g} must be below end {hi:g}")
    return lo, hi


def _cell(v, digits):
    return "" if v != v else f"{v:.{digits}f}"  # NaN -> empty


def run(args) -> int:
    from atlas.lines import COLUMNS, load_lines, select

    lo, hi = parse_range(args.wave_range)
    lines = load_lines(args.list_path)
    if args.species is not None:
        wanted = [w.strip() for w in args.species.split(",") if w.strip()]
        if not wanted:
            raise InputError("--species", "give one or more species, e.g. 'Fe II' or 'Fe,Ca II'")
        for w in wanted:
            if select(lines, species=w).empty:
                raise InputError(
                    "--species",
                    f"no {w!r} in the line list; write species like 'Fe I', 'Ca II', 'TiO' "
                    "or an element alone such as 'Fe'",
                )
    rows = select(lines, species=args.species, lo_A=lo, hi_A=hi, medium=args.medium)
    if args.csv:
        out = rows.loc[:, list(COLUMNS)].copy()
        out["telluric"] = out["telluric"].map({True: "true", False: "false"})
        sys.stdout.write(out.to_csv(index=False, lineterminator="\n", float_format="%.3f"))
        return 0
    first = "air_A" if args.medium == "air" else "vacuum_A"
    second = "vacuum_A" if first == "air_A" else "air_A"
    head = f"{first:>10} {second:>10}  {'species':<8} {'lower_eV':>8} {'loggf':>7} str  kind       source"
    print(head)
    for r in rows.sort_values(first, kind="stable").itertuples(index=False):
        d = r._asdict()
        print(
            f"{d[first]:10.3f} {d[second]:10.3f}  {d['species']:<8} {_cell(d['lower_eV'], 3):>8} "
            f"{_cell(d['loggf'], 3):>7} {d['strength']:>3}  {d['kind']:<10} {d['source']}"
        )
    print(f"{len(rows)} lines ({'air' if first == 'air_A' else 'vacuum'} wavelengths first, Å)")
    return 0
