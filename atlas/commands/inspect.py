"""``striae inspect``: what is in one or more spectrum files, before building an atlas."""

from __future__ import annotations

import json
import math
import sys

HELP = "show format, range, sampling, S/N, time, site and barycentric correction of spectrum files"
EXAMPLE = (
    "striae inspect spectra/star_a.fits spectra/star_b.csv\n"
    "         striae inspect --recursive night1/\n"
    "         striae inspect --json --site 28.76,-17.88,2330 --radec 10:08:22.3,+11:58:02 "
    "--time 2024-03-05T21:14:03 night1/star_c.fits\n"
    "         striae inspect --wave-unit nm --medium air --site=-29.26,-70.73,2400 table.csv"
)

#: Keys of each JSON record, in order (the first twelve are the documented core).
JSON_KEYS = (
    "file",
    "format",
    "target",
    "samples",
    "wavelength_min_A",
    "wavelength_max_A",
    "medium",
    "sampling_kms",
    "resolving_power",
    "snr",
    "obs_time_utc",
    "barycentric_kms",
    "orders",
    "resolving_power_header",
    "ra_deg",
    "dec_deg",
    "site",
    "barycentric_missing",
)


def add_arguments(parser) -> None:
    from atlas.io import FORMATS

    parser.add_argument(
        "files",
        nargs="+",
        metavar="FILE",
        help="spectrum files (FITS or text, also gzip/bzip2), glob patterns or folders",
    )
    parser.add_argument(
        "--recursive",
        action="store_true",
        help="also take the files in sub-folders of a folder (and let ** in patterns reach them)",
    )
    parser.add_argument(
        "--json",
        action="store_true",
        help="print JSON: one object for one file, a list for several",
    )
    parser.add_argument(
        "--format",
        choices=sorted(FORMATS),
        help="read every file as this format instead of guessing",
    )
    parser.add_argument(
        "--wave-unit",
        metavar="UNIT",
        help="wavelength unit where a file names none (A, nm, um, ...)",
    )
    parser.add_argument(
        "--medium", choices=("air", "vacuum"), help="override the files' wavelength medium"
    )
    parser.add_argument(
        "--site",
        metavar="LAT,LON,HEIGHT",
        help="observing site: latitude and longitude in degrees (east positive), height in metres;"
        " write --site=-33.9,18.5,10 when the latitude is negative",
    )
    parser.add_argument(
        "--radec",
        metavar="RA,DEC",
        help="target coordinates: degrees, or sexagesimal (RA in hours)",
    )
    parser.add_argument(
        "--time", metavar="ISO", help="mid-exposure time, ISO 8601 UTC (2024-03-05T21:14:03)"
    )


def parse_site(text):
    """(lat_deg, lon_deg, height_m) from ``LAT,LON,HEIGHT``; ``InputError`` on ``--site``."""
    from atlas.errors import InputError
    from atlas.io import meta

    parts = [s.strip() for s in str(text).split(",")]
    if len(parts) != 3:
        raise InputError(
            "--site", f"expected LAT,LON,HEIGHT (degrees, degrees, metres), got {text!r}"
        )
    try:
        return meta.site_geodetic(*(float(x) for x in parts))
    except ValueError as exc:
        reason = (
            str(exc) if "outside" in str(exc) or "height" in str(exc) else f"not numbers: {text!r}"
        )
        raise InputError("--site", reason) from None


def parse_radec(text):
    """(ra_deg, dec_deg) from ``RA,DEC`` in degrees or sexagesimal; ``InputError`` on ``--radec``."""
    from atlas.errors import InputError
    from atlas.io import meta

    parts = [s.strip() for s in str(text).split(",")]
    if len(parts) != 2 or not all(parts):
        raise InputError(
            "--radec", f"expected RA,DEC (degrees, or 10:08:22.3,+11:58:02), got {text!r}"
        )
    try:
        return meta.radec_deg(*parts)
    except ValueError as exc:
        raise InputError("--radec", str(exc)) from None


def parse_time(text) -> str:
    """ISO UTC text from ``--time``; ``InputError`` on ``--time``."""
    from atlas.errors import InputError
    from atlas.io import meta

    try:
        return meta.iso_utc(meta.parse_time(text))
    except ValueError as exc:
        raise InputError("--time", str(exc)) from None


def _barycentric(ds, site, radec, time):
    """(kms or None, missing list, available flag) from atlas.physics.barycentric."""
    try:
        from atlas.physics.barycentric import correction_for
    except ModuleNotFoundError as exc:
        if exc.name in ("atlas.physics", "atlas.physics.barycentric"):
            return None, [], False
        raise
    kms, missing = correction_for(ds, site=site, radec=radec, time=time)
    return (None if kms is None else float(kms)), list(missing), True


def _num(x):
    if x is None:
        return None
    x = float(x)
    return x if math.isfinite(x) else None


def describe(path, args, site, radec, time) -> dict:
    """One file's record (keys ``JSON_KEYS``) plus private ``_`` notes for the readable block."""
    import numpy as np

    from atlas.io import read
    from atlas.measure.sampling import implied_resolving_power, median_sampling_kms
    from atlas.measure.snr import der_snr
    from atlas.spectrum import is_echelle, medium_of

    ds = read(path, format=args.format, wave_unit=args.wave_unit, medium=args.medium)
    wave = ds["wavelength"].values
    good = ~ds["mask"].values
    sampling = median_sampling_kms(wave)
    bary, missing, available = _barycentric(ds, site, radec, time)
    a = ds.attrs
    if site is not None:
        site_rec = {"lat_deg": site[0], "lon_deg": site[1], "height_m": site[2], "from": "--site"}
    elif "site_lat_deg" in a and "site_lon_deg" in a:
        site_rec = {
            "lat_deg": _num(a["site_lat_deg"]),
            "lon_deg": _num(a["site_lon_deg"]),
            "height_m": _num(a.get("site_height_m")),
            "from": "file",
        }
    else:
        site_rec = None
    ra, dec = radec if radec is not None else (_num(a.get("ra_deg")), _num(a.get("dec_deg")))
    rec = {
        "file": str(path),
        "format": a.get("format"),
        "target": a.get("target"),
        "samples": int(ds["flux"].size),
        "wavelength_min_A": _num(np.nanmin(wave)),
        "wavelength_max_A": _num(np.nanmax(wave)),
        "medium": medium_of(ds),
        "sampling_kms": _num(sampling),
        "resolving_power": _num(implied_resolving_power(sampling)),
        "snr": _num(der_snr(ds["flux"].values, mask=~good)),
        "obs_time_utc": time if time is not None else a.get("obs_time_utc"),
        "barycentric_kms": bary,
        "orders": int(ds.sizes["order"]) if is_echelle(ds) else None,
        "resolving_power_header": _num(a.get("resolving_power")),
        "ra_deg": ra,
        "dec_deg": dec,
        "site": site_rec,
        "barycentric_missing": missing,
    }
    rec["_masked"] = int((~good).sum())
    rec["_available"] = available
    if time is not None:
        rec["_time_note"] = "given with --time"
    elif a.get("obs_time_is_mid"):
        rec["_time_note"] = "mid-exposure"
    else:
        rec["_time_note"] = "exposure start or unknown point of the exposure"
    rec["_unreadable"] = a.get("unreadable_keywords")
    rec["_flux_unit"] = a.get("flux_unit")
    rec["_uncertainty"] = "uncertainty" in ds
    rec["_inferred_unit"] = a.get("wave_unit_inferred")
    rec["_compression"] = a.get("compression")
    return rec


def _fmt(x, spec, none="—"):
    return none if x is None else format(x, spec)


def readable(rec) -> str:
    """A neat aligned block for one file."""
    from atlas.io import FORMATS

    medium = rec["medium"]
    rows = [("file", rec["file"])]
    fmt = rec["format"]
    rows.append(("format", f"{fmt} ({FORMATS[fmt].DESCRIPTION})" if fmt in FORMATS else str(fmt)))
    if rec["_compression"]:
        rows.append(
            ("compression", f"{rec['_compression']} (unpacked to a temporary copy to read)")
        )
    rows.append(("target", rec["target"] or "— (not in the file)"))
    samples = f"{rec['samples']:,}"
    if rec["orders"]:
        samples += f" in {rec['orders']} orders"
    if rec["_masked"]:
        samples += f" ({rec['_masked']:,} masked)"
    rows.append(("samples", samples))
    rows.append(
        (
            "wavelengths",
            f"{_fmt(rec['wavelength_min_A'], '.3f')} – {_fmt(rec['wavelength_max_A'], '.3f')} Å ({medium})",
        )
    )
    rows.append(
        (
            "medium",
            medium + ("" if medium != "unknown" else " (the file does not say; use --medium)"),
        )
    )
    rows.append(("sampling", f"{_fmt(rec['sampling_kms'], '.3f')} km/s per pixel (median)"))
    rp = f"{_fmt(rec['resolving_power'], ',.0f')} at most, from the sampling (2 pixels per element)"
    if rec["resolving_power_header"] is not None:
        rp += f"; file says {rec['resolving_power_header']:,.0f}"
    rows.append(("resolving power", rp))
    rows.append(("S/N (DER_SNR)", f"{_fmt(rec['snr'], '.1f')} per pixel"))
    if rec["_flux_unit"]:
        rows.append(("flux unit", rec["_flux_unit"]))
    rows.append(("uncertainty", "yes" if rec["_uncertainty"] else "no"))
    t = rec["obs_time_utc"]
    rows.append(("observed (UTC)", f"{t} ({rec['_time_note']})" if t else "— (not in the file)"))
    s = rec["site"]
    if s:
        h = "" if s["height_m"] is None else f", height {s['height_m']:.0f} m"
        src = " (--site)" if s["from"] == "--site" else ""
        rows.append(("site", f"lat {s['lat_deg']:+.5f}°, lon {s['lon_deg']:+.5f}°{h}{src}"))
    else:
        rows.append(("site", "— (not in the file)"))
    if rec["ra_deg"] is not None:
        rows.append(("coordinates", f"RA {rec['ra_deg']:.5f}°, Dec {rec['dec_deg']:+.5f}°"))
    else:
        rows.append(("coordinates", "— (not in the file)"))
    if rec["barycentric_kms"] is not None:
        bc = f"{rec['barycentric_kms']:+.4f} km/s (add to measured velocities)"
    elif not rec["_available"]:
        bc = "— (not available in this version)"
    elif rec["barycentric_missing"]:
        miss = ", ".join(rec["barycentric_missing"])
        bc = f"not computed: missing {miss}; give them with --time, --site, --radec"
    else:
        bc = "—"
    rows.append(("barycentric", bc))
    if rec["_unreadable"]:
        rows.append(("note", f"unreadable header keywords ignored: {rec['_unreadable']}"))
    if rec["_inferred_unit"]:
        rows.append(("note", rec["_inferred_unit"]))
    width = max(len(k) for k, _ in rows) + 2
    return "\n".join(f"{k:<{width}}{v}" for k, v in rows)


def _is_folder(args) -> bool:
    import os

    return os.path.isdir(os.path.expanduser(str(args.files[0])))


def run(args) -> int:
    import warnings

    from astropy.utils.exceptions import AstropyWarning

    from atlas.errors import InputError

    warnings.simplefilter("ignore", AstropyWarning)  # problems are reported in our own words

    site = parse_site(args.site) if args.site is not None else None
    radec = parse_radec(args.radec) if args.radec is not None else None
    time = parse_time(args.time) if args.time is not None else None
    if args.wave_unit is not None:
        from atlas.io.validate import wavelength_unit

        wavelength_unit(args.wave_unit, "--wave-unit", "wavelengths")

    from atlas.io.folder import expand

    paths, unreadable = expand(args.files, recursive=args.recursive)
    for path, reason in unreadable:
        print(f"striae: {path}: {reason}", file=sys.stderr)
    records, failed = [], len(unreadable)
    for path in paths:
        try:
            rec = describe(path, args, site, radec, time)
        except InputError as exc:
            if exc.where in ("--site", "--radec", "--time", "--wave-unit", "--format", "--medium"):
                raise  # an option problem: the same for every file
            print(f"striae: {exc.message}", file=sys.stderr)
            failed += 1
            continue
        records.append(rec)
        if not args.json:
            if len(records) > 1:
                print()
            print(readable(rec), flush=True)
    if args.json:
        clean = [{k: r[k] for k in JSON_KEYS} for r in records]
        if len(args.files) == 1 and len(paths) + len(unreadable) == 1 and not _is_folder(args):
            if clean:
                print(json.dumps(clean[0], indent=2, ensure_ascii=False))
        else:
            print(json.dumps(clean, indent=2, ensure_ascii=False))
    return 2 if failed else 0
