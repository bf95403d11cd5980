"""``striae build``: spectrum files (or a recipe) -> a static atlas (atlas.json + one Zarr store per star)."""

from __future__ import annotations

import os
import sys
import tomllib

from atlas.errors import InputError
from atlas.store.catalog import LOCK_TIMEOUT_S

HELP = "build an atlas from spectrum files, or from a recipe file (.toml)"
EXAMPLE = (
    "striae build night1/*.fits --out my_atlas\n"
    "         striae build build/demo.toml\n"
    "         striae build big/*.fits --out s3://bucket/atlas --workers 2 --strip-kms 400"
)

#: Recipe keys: ``inputs`` (list of globs relative to the recipe), ``out``, and an
#: ``[options]`` table with these keys (the command-line options, ``-`` as ``_``).
RECIPE_OPTIONS = (
    "strip_kms", "overlap", "equal_A", "merge_orders", "workers", "scheduler",
    "site", "radec", "time", "force", "continuum",
)


def add_arguments(parser) -> None:
    parser.add_argument("files", nargs="+", metavar="FILE",
                        help="spectrum files or glob patterns; or one recipe file ending in .toml")
    parser.add_argument("--out", metavar="ATLAS", help="atlas folder (or fsspec URL) to create or update")
    parser.add_argument("--force", action="store_true", default=None,
                        help="rebuild every star, even those whose file and options are unchanged")
    parser.add_argument("--strip-kms", type=str, metavar="V",
                        help="strip width in km/s (default: chosen per star so a strip holds ~6000 samples)")
    parser.add_argument("--overlap", type=str, metavar="F",
                        help="fraction of a strip shared with the next, 0 <= F < 0.5 (default 0.03)")
    parser.add_argument("--equal-A", type=str, metavar="W", dest="equal_A",
                        help="cut strips of equal width W in Å instead of equal velocity width")
    parser.add_argument("--merge-orders", action="store_true", default=None,
                        help="merge echelle orders into one spectrum before cutting (default: one strip per order)")
    parser.add_argument("--workers", type=str, metavar="N",
                        help="build on N local dask worker processes (default 1: serial)")
    parser.add_argument("--scheduler", metavar="ADDRESS",
                        help="build on an existing dask.distributed cluster (tcp://host:8786)")
    parser.add_argument("--site", metavar="LAT,LON,HEIGHT",
                        help="observing site for every file: degrees, degrees (east positive), metres;"
                        " write --site=-33.9,18.5,10 when the latitude is negative")
    parser.add_argument("--radec", metavar="RA,DEC", help="target coordinates: degrees, or sexagesimal (RA in hours)")
    parser.add_argument("--time", metavar="ISO", help="mid-exposure time, ISO 8601 UTC")
    parser.add_argument("--lock-timeout", type=str, metavar="S", dest="lock_timeout",
                        help="seconds to wait while another build commits into the same atlas"
                        " (default 600); then stop, committing nothing")
    parser.add_argument("--quiet", action="store_true", help="no progress bar")
    parser.add_argument("--recursive", action="store_true",
                        help="also take the files in sub-folders of a folder given as input")


def _load_recipe(path: str) -> dict:
    try:
        with open(path, "rb") as fh:
            recipe = tomllib.load(fh)
    except FileNotFoundError:
        raise InputError(path, "no such recipe file") from None
    except OSError as exc:
        raise InputError(path, f"cannot read the recipe: {exc.strerror or exc}") from None
    except tomllib.TOMLDecodeError as exc:
        raise InputError(path, f"not valid TOML: {exc}") from None
    unknown = set(recipe) - {"inputs", "out", "options"}
    if unknown:
        raise InputError(path, f"unknown key(s) {', '.join(sorted(unknown))}; expected inputs, out, [options]")
    inputs = recipe.get("inputs")
    if isinstance(inputs, str):
        inputs = [inputs]
    if not inputs or not isinstance(inputs, list) or not all(isinstance(x, str) for x in inputs):
        raise InputError(path, "'inputs' must be a list of file names or glob patterns")
    opts = recipe.get("options", {})
    if not isinstance(opts, dict):
        raise InputError(path, "[options] must be a table")
    bad = set(opts) - set(RECIPE_OPTIONS)
    if bad:
        raise InputError(path, f"unknown option(s) {', '.join(sorted(bad))}; known: {', '.join(RECIPE_OPTIONS)}")
    out = recipe.get("out")
    if out is not None and not isinstance(out, str):
        raise InputError(path, "'out' must be a folder name or URL")
    return {"inputs": inputs, "out": out, "options": opts}


def _number(value, where, kind=float):
    if value is None:
        return None
    try:
        return kind(value)
    except (TypeError, ValueError):
        raise InputError(where, f"must be a {'whole ' if kind is int else ''}number, not {value!r}") from None


def _continuum(settings, where):
    from atlas.continuum import ContinuumSettings

    if settings is None:
        return ContinuumSettings()
    if not isinstance(settings, dict):
        raise InputError(where, "[options.continuum] must be a table")
    fields = ContinuumSettings.__dataclass_fields__
    bad = set(settings) - set(fields)
    if bad:
        raise InputError(where, f"unknown continuum setting(s) {', '.join(sorted(bad))}; known: {', '.join(fields)}")
    vals = {}
    for k, v in settings.items():
        kind = int if k == "max_iter" else float
        x = _number(v, f"{where}: continuum.{k}", kind)
        if not x > 0:
            raise InputError(where, f"continuum.{k} must be positive, not {v!r}")
        vals[k] = x
    return ContinuumSettings(**vals)


def resolve(args) -> dict:
    """Merge a recipe (if given) and the command line (which wins) into build arguments."""
    from atlas.build import BuildOptions
    from atlas.commands.inspect import parse_radec, parse_site, parse_time
    from atlas.io.folder import expand

    files = list(args.files)
    recipe, base, where = {"options": {}}, None, {}
    if len(files) == 1 and files[0].lower().endswith(".toml"):
        rpath = files[0]
        recipe = _load_recipe(rpath)
        base = os.path.dirname(os.path.abspath(rpath))
        files = recipe["inputs"]
        where = dict.fromkeys(RECIPE_OPTIONS, rpath)
    elif any(f.lower().endswith(".toml") for f in files):
        raise InputError("FILE", "give one recipe file alone, or spectrum files without a recipe")
    ro = recipe["options"]

    def pick(name, flag):
        v = getattr(args, name, None)
        if v is not None:
            return v, flag
        return ro.get(name), where.get(name, flag)

    out = args.out
    if out is None and recipe.get("out"):
        out = recipe["out"]
        if "://" not in out and not os.path.isabs(out):
            out = os.path.join(base, out)
    if not out:
        raise InputError("--out", "required: the atlas folder to build (or an 'out' key in the recipe)")
    if "://" not in out and os.path.exists(out) and not os.path.isdir(out):
        raise InputError("--out", f"{out} exists and is not a folder")

    strip_kms, w1 = pick("strip_kms", "--strip-kms")
    overlap, w2 = pick("overlap", "--overlap")
    equal_A, w3 = pick("equal_A", "--equal-A")
    workers, w4 = pick("workers", "--workers")
    site, w5 = pick("site", "--site")
    radec, w6 = pick("radec", "--radec")
    time, w7 = pick("time", "--time")
    scheduler, _ = pick("scheduler", "--scheduler")
    merge, _ = pick("merge_orders", "--merge-orders")
    force, _ = pick("force", "--force")
    workers = _number(workers, w4, int) if workers is not None else 1
    if workers < 1:
        raise InputError(w4, f"{'' if w4 == '--workers' else 'options.workers: '}must be at least 1, not {workers}")
    came_from = {"--strip-kms": w1, "--overlap": w2, "--equal-A": w3, "--site": w5,
                 "--radec": w6, "--time": w7}
    try:
        options = BuildOptions(
            strip_kms=_number(strip_kms, w1),
            overlap=_number(overlap, w2) if overlap is not None else BuildOptions.overlap,
            equal_A=_number(equal_A, w3),
            merge_orders=bool(merge),
            site=parse_site(site) if site is not None else None,
            radec=parse_radec(radec) if radec is not None else None,
            time=parse_time(time) if time is not None else None,
            continuum=_continuum(ro.get("continuum"), where.get("continuum", "recipe")),
        )
    except InputError as exc:
        src = came_from.get(exc.where)
        if src is not None and src != exc.where:  # the bad value came from the recipe
            key = exc.where.lstrip("-").replace("-", "_")
            raise InputError(src, f"options.{key}: {exc.reason}") from None
        raise
    inputs, unreadable = expand(files, recursive=bool(getattr(args, "recursive", False)), base=base,
                                exclude=[out])
    if not inputs:
        for path, reason in unreadable[:-1]:
            print(f"striae: {path}: {reason}", file=sys.stderr)
        raise InputError(*(unreadable[-1] if unreadable else ("FILE", "no spectrum files to build")))
    lock_timeout = _number(getattr(args, "lock_timeout", None), "--lock-timeout")
    if lock_timeout is not None and not lock_timeout >= 0:
        raise InputError("--lock-timeout", f"must be 0 or more seconds, not {args.lock_timeout!r}")
    return {"inputs": inputs, "unreadable": unreadable, "out": out, "options": options, "workers": workers,
            "scheduler": scheduler, "force": bool(force),
            "lock_timeout_s": LOCK_TIMEOUT_S if lock_timeout is None else lock_timeout}


def run(args) -> int:
    from atlas.build import build_atlas

    r = resolve(args)
    for path, reason in r["unreadable"]:
        print(f"striae: {path}: {reason}", file=sys.stderr)
    opts = r["options"]
    if opts.equal_A is not None:
        how = f"strips of {opts.equal_A:g} Å"
    elif opts.strip_kms is not None:
        how = f"strips of {opts.strip_kms:g} km/s"
    else:
        how = "strip width chosen per star from its sampling"
    print(f"building {len(r['inputs'])} file(s) into {r['out']}: {how}, overlap {opts.overlap:g}"
          + (f", {r['workers']} workers" if r["workers"] > 1 else "")
          + (f", cluster {r['scheduler']}" if r["scheduler"] else ""))
    sys.stdout.flush()
    report = build_atlas(
        r["inputs"], r["out"], opts, force=r["force"], workers=r["workers"], scheduler=r["scheduler"],
        progress=False if args.quiet else None, lock_timeout_s=r["lock_timeout_s"], on_star=_said,
    )
    code = tell(report, r["out"])
    return 2 if r["unreadable"] else code


def _said(path: str, result: dict) -> None:
    """Said as each star finishes (above the progress bar)."""
    from tqdm import tqdm

    from atlas.build.pipeline import describe

    if "error" not in result:
        tqdm.write(f"built {result['slug']} {describe(result)}", file=sys.stdout)


def tell(report, out: str) -> int:
    """The build's outcome on the terminal; the exit code (2 when a file failed or nothing
    was committed)."""
    for path, reason in report.failed:
        print(f"striae: {path}: {reason}", file=sys.stderr)
    for rid in report.kept:
        print(f"kept {rid} (unchanged)")
    if not report.committed:
        print("nothing built: the atlas was left as it was")
        return 2
    print(f"atlas {out}: {len(report.catalog['stars'])} star(s)"
          f" ({len(report.built)} built, {len(report.kept)} unchanged)")
    return 2 if report.failed else 0
