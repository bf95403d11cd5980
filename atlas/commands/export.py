"""``striae export``: a star, or a region of it, as print pages (PDF) or one HTML file.

Every value is checked by :mod:`atlas.export`; a mistake is one line naming the option.
Wavelengths given here (``--range``, ``--mark``) are in the chosen ``--unit``, in the
chosen ``--frame`` and ``--medium``.
"""

from __future__ import annotations

from atlas.errors import InputError
from atlas.viewspec import Bad, read_number

HELP = "write a star (or a region of it) as print-ready PDF pages or a standalone HTML page"
EXAMPLE = (
    "striae export my_atlas star-a --range 6540:6600 --frame rest --pdf halpha.pdf\n"
    "         striae export my_atlas star-a --unit nm --range 586:592 --lines 'Na I,Fe I' "
    "--mark '588.9:589.1:interstellar?' --html sodium.html\n"
    "         striae export my_atlas star-b --per-page 4 --paper letter --flux raw --pdf star-b.pdf"
)

#: API parameter names (atlas.export) -> the option a user typed.
OPTION_OF = {
    "lo/hi": "--range", "lo": "--range", "hi": "--range", "per_page": "--per-page",
    "star": "STAR", "frame": "--frame", "medium": "--medium", "unit": "--unit",
    "flux": "--flux", "lines": "--lines", "strength": "--strength", "marks": "--mark",
    "page": "--page", "paper": "--paper", "out": "OUT",
}


def add_arguments(parser) -> None:
    parser.add_argument("atlas", nargs="?", metavar="ATLAS", help="atlas folder (from striae build)")
    parser.add_argument("star", nargs="?", metavar="STAR", help="star id, as listed in the atlas")
    parser.add_argument("--range", metavar="A:B",
                        help="region to export, in --unit, --frame and --medium (default: all)")
    parser.add_argument("--frame", default="observed", metavar="F",
                        help="observed (default), barycentric or rest")
    parser.add_argument("--medium", default="air", metavar="M",
                        help="wavelengths in air (default) or vacuum")
    parser.add_argument("--unit", default="A", metavar="U", help="axis unit: A (default) or nm")
    parser.add_argument("--flux", default="normalized", metavar="K",
                        help="normalized (default) or raw")
    parser.add_argument("--per-page", default=None, metavar="N",
                        help="strips stacked per page (PDF default 6; HTML: strips of --page)")
    parser.add_argument("--page", default="1", metavar="N",
                        help="HTML without --range: which page of --per-page strips (default 1)")
    parser.add_argument("--paper", default="a4", metavar="P", help="PDF paper: a4 (default) or letter")
    parser.add_argument("--lines", default=None, metavar="SPECIES,...",
                        help="line markers of these species only, e.g. 'Fe I,H I'; 'none' for no markers")
    parser.add_argument("--strength", default="3", metavar="N",
                        help="weakest line strength class marked, 1 (strongest) to 4 (default 3)")
    parser.add_argument("--mark", action="append", default=[], metavar="A:B:NOTE",
                        help="shade A..B (in --unit) with a short note; repeat for more")
    parser.add_argument("--lines-file", default=None, metavar="CSV",
                        help="a line list with the shipped list's columns, used instead of it")
    parser.add_argument("--pdf", metavar="OUT", help="write PDF pages to OUT")
    parser.add_argument("--html", metavar="OUT", help="write one standalone HTML file to OUT")


def _float(text: str, where: str) -> float:
    """A finite number for a command-line value (the view spec's number reader, refusing)."""
    try:
        x = read_number(text, where)
    except Bad as err:
        raise InputError(where, err.reason) from None
    if x is None:
        raise InputError(where, "a number is missing")
    return x


def parse_range(text: str, scale: float) -> tuple[float, float]:
    """``A:B`` in the display unit to Å (``scale`` Å per unit)."""
    parts = str(text).split(":")
    if len(parts) != 2:
        raise InputError("--range", f"expected A:B, e.g. 6540:6600, not {str(text)[:40]!r}")
    a, b = (_float(p, "--range") for p in parts)
    if not a < b:
        raise InputError("--range", f"must run from low to high, not {a:g}:{b:g}")
    return a * scale, b * scale


def parse_mark(text: str, scale: float) -> list:
    """``A:B:note`` in the display unit to ``[lo_A, hi_A, note]`` (note may hold ':')."""
    parts = str(text).split(":", 2)
    if len(parts) < 2:
        raise InputError("--mark", f"expected A:B:note, not {str(text)[:40]!r}")
    a, b = (_float(p, "--mark") for p in parts[:2])
    if not a < b:
        raise InputError("--mark", f"must run from low to high, not {a:g}:{b:g}")
    return [a * scale, b * scale, parts[2] if len(parts) == 3 else ""]


def run(args) -> int:
    from atlas import export

    try:
        return _run(args, export)
    except InputError as exc:
        where = OPTION_OF.get(exc.where, exc.where) if exc.where else None
        raise InputError(where, exc.reason) from None


def _run(args, export) -> int:
    if not args.atlas:
        raise InputError("ATLAS", "no atlas folder given (striae export ATLAS STAR --pdf OUT)")
    if not args.star:
        raise InputError("STAR", "no star id given (striae export ATLAS STAR --pdf OUT)")
    if bool(args.pdf) == bool(args.html):
        raise InputError("--pdf/--html", "give exactly one of --pdf OUT or --html OUT")
    unit = export.make_view(star=args.star, unit=args.unit).unit
    scale = 10.0 if unit == "nm" else 1.0
    lo = hi = None
    if args.range is not None:
        lo, hi = parse_range(args.range, scale)
    marks = [parse_mark(m, scale) for m in args.mark]
    lines, markers = args.lines, True
    if lines is not None and lines.strip().lower() == "none":
        lines, markers = None, False
    common = dict(lo=lo, hi=hi, frame=args.frame, medium=args.medium, unit=args.unit,
                  flux=args.flux, lines=lines, strength=args.strength, marks=marks,
                  per_page=args.per_page, markers=markers, lines_path=args.lines_file)
    if args.pdf:
        res = export.export_pdf(args.atlas, args.star, args.pdf, paper=args.paper, **common)
        print(f"wrote {res['out']}: {res['pages']} page(s), {res['strips']} strip(s)")
    else:
        res = export.export_html(args.atlas, args.star, args.html, page=args.page, **common)
        print(f"wrote {res['out']}: {res['strips']} strip(s)")
    return 0
