"""``striae measure``: radial velocity, line identifications, temperature and class of a star."""

from __future__ import annotations

import json
import sys

HELP = "measure a star: radial velocity, line identifications, temperature and class"
EXAMPLE = "striae measure --json spectra/star1.fits   or   striae measure my_atlas star1"


def add_arguments(parser) -> None:
    parser.add_argument(
        "target", nargs="+", metavar="FILE | ATLAS STAR",
        help="a spectrum file, or a built atlas folder and a star id in it",
    )
    parser.add_argument("--json", action="store_true", help="print one JSON object")
    parser.add_argument(
        "--calibrated", action="store_true",
        help="the flux is calibrated: fit a Planck curve for the colour temperature"
        " (otherwise only when the file's flux unit says so)",
    )
    parser.add_argument(
        "--ew", action="append", default=[], metavar="LO:HI",
        help="also measure the equivalent width between LO and HI Å (the file's medium);"
        " may be repeated",
    )
    parser.add_argument(
        "--site", metavar="LAT,LON,HEIGHT",
        help="observing site if the file has none: degrees, degrees (east positive), metres;"
        " write --site=-33.9,18.5,10 when the latitude is negative",
    )
    parser.add_argument("--radec", metavar="RA,DEC", help="target coordinates if the file has none")
    parser.add_argument("--time", metavar="ISO", help="mid-exposure UTC time if the file has none")
    parser.add_argument(
        "--wave-unit", metavar="UNIT", help="wavelength unit where the file names none (A, nm, um)"
    )
    parser.add_argument(
        "--medium", choices=("air", "vacuum"), help="override the file's wavelength medium"
    )
    parser.add_argument("--lines", metavar="CSV", help="a line list to use instead of the shipped one")


def _ew_ranges(items):
    from atlas.errors import InputError

    out = []
    for text in items:
        parts = str(text).split(":")
        try:
            lo, hi = (float(p) for p in parts)
        except ValueError:
            raise InputError("--ew", f"expected LO:HI in Å, got {text!r}") from None
        if not lo < hi:
            raise InputError("--ew", f"LO must be below HI, got {text!r}")
        out.append((lo, hi))
    return out


def _spectrum_of_atlas(atlas_path, star_id):
    """(Spectrum Dataset, continuum, record) of a star in a built atlas (vacuum Å)."""
    import numpy as np

    from atlas.spectrum import make_spectrum
    from atlas.store import open_atlas

    at = open_atlas(atlas_path)
    rec = at.record(star_id)
    st = at.star(star_id)
    names = [n for n in ("wavelength", "flux", "uncertainty", "continuum", "mask") if n in st]
    got = dict(zip(names, at.load(star_id, *names), strict=True))
    w = np.asarray(got["wavelength"], dtype=np.float64).ravel()
    keep = np.isfinite(w)
    flux = np.asarray(got["flux"], dtype=np.float64).ravel()
    unc = np.asarray(got["uncertainty"], dtype=np.float64).ravel() if "uncertainty" in got else None
    cont = np.asarray(got["continuum"], dtype=np.float64).ravel() if "continuum" in got else None
    mask = np.asarray(got["mask"], dtype=bool).ravel() if "mask" in got else None
    # strips may overlap: keep each wavelength once
    w_u, first = np.unique(w[keep], return_index=True)
    idx = np.flatnonzero(keep)[first]
    attrs = {k: v for k, v in st.attrs.items() if isinstance(v, (str, int, float))}
    ds = make_spectrum(
        w_u, flux[idx], None if unc is None or not np.isfinite(unc[idx]).any() else unc[idx],
        None if mask is None else mask[idx], medium="vacuum", **attrs,
    )
    return ds, (None if cont is None else cont[idx]), rec


def _fmt(x, spec, none="—"):
    return none if x is None else format(x, spec)


def readable(name, res) -> str:
    """The measurements as a short text report."""
    med = res.get("medium", "")
    out = [f"{name}"]
    if res.get("rv_kms") is not None:
        out.append(f"  radial velocity   {res['rv_kms']:+.3f} ± {res['rv_err_kms']:.3f} km/s (barycentric)")
    elif res.get("rv_obs_kms") is not None:
        out.append(f"  radial velocity   {res['rv_obs_kms']:+.3f} ± {res['rv_err_kms']:.3f} km/s"
                   " (observer's frame: no barycentric correction)")
    else:
        out.append("  radial velocity   not measured")
    out.append(f"  barycentric corr. {_fmt(res.get('barycentric_kms'), '+.3f')} km/s")
    out.append(f"  CCF FWHM          {_fmt(res.get('ccf_fwhm_kms'), '.2f')} km/s"
               f"   line FWHM {_fmt(res.get('line_fwhm_kms'), '.2f')} km/s"
               f"   v sin i (rough) {_fmt(res.get('vsini_rough_kms'), '.1f')} km/s")
    conf = res.get("class_confidence")
    out.append(f"  class             {res.get('spectral_class') or '—'}"
               + ("" if conf is None else f" (confidence {conf:.2f})"))
    if res.get("teff_k") is not None:
        err = res.get("teff_err_k")
        out.append(f"  temperature       {res['teff_k']:.0f}"
                   + ("" if err is None else f" ± {err:.0f}") + f" K ({res.get('teff_method')})")
    for e in res.get("ew", []):
        out.append(f"  EW {e['lo_A']:.3f}-{e['hi_A']:.3f} Å ({med}): {e['ew_mA']:.1f}"
                   f" ± {_fmt(e['ew_err_mA'], '.1f')} mÅ, depth {e['depth']:.3f}")
    lines = res.get("lines", [])
    if lines:
        out.append(f"  identified lines ({len(lines)}; wavelengths in {med} Å):")
        out.append("    observed     rest        species  depth   EW mÅ   offset km/s")
        for r in lines:
            out.append(f"    {r['observed_A']:10.3f}  {r['rest_A']:10.3f}  {r['species']:<8} "
                       f"{r['depth']:5.3f}  {r['ew_mA']:7.1f}  {_fmt(r.get('offset_kms'), '+7.2f'):>7}"
                       + ("" if r.get("kind") in (None, "atomic", "telluric") else f"  ({r['kind']})")
                       + ("" if not r.get("blend") else "  with " + "; ".join(
                           f"{b['species']} {b['rest_A']:.2f} ({b['share']:.2f})" for b in r["blend"])))
    un = res.get("unexplained", [])
    if un:
        out.append(f"  unexplained features ({len(un)}, most significant first):")
        for r in un[:30]:
            out.append(f"    {r['observed_A']:10.3f}  depth {r['depth']:5.3f}"
                       f"  {r['significance']:6.1f} sigma")
    for n in res.get("notes", []):
        out.append(f"  note: {n}")
    return "\n".join(out)


def run(args) -> int:
    import os

    from atlas.commands.inspect import parse_radec, parse_site, parse_time
    from atlas.errors import InputError
    from atlas.measure.report import measure_spectrum

    site = parse_site(args.site) if args.site else None
    radec = parse_radec(args.radec) if args.radec else None
    time = parse_time(args.time) if args.time else None
    ew = _ew_ranges(args.ew)
    lines = None
    if args.lines:
        from atlas.lines import load_lines

        lines = load_lines(args.lines)
    continuum = None
    if len(args.target) == 1:
        path = args.target[0]
        if not os.path.exists(path):
            raise InputError(path, "no such file")
        if os.path.isdir(path):
            raise InputError(path, "is a folder: give a spectrum file, or ATLAS STAR")
        from atlas.io import read

        ds = read(path, wave_unit=args.wave_unit, medium=args.medium)
        name = os.path.basename(path)
        rec = None
    elif len(args.target) == 2:
        ds, continuum, rec = _spectrum_of_atlas(*args.target)
        name = f"{args.target[1]} in {args.target[0]}"
    else:
        raise InputError("measure", "give one spectrum FILE, or ATLAS and STAR")
    res = measure_spectrum(ds, lines, calibrated=True if args.calibrated else None, site=site,
                           radec=radec, time=time, continuum=continuum, ew_ranges=ew)
    if rec is not None and res["barycentric_kms"] is None and rec.get("barycentric_kms") is not None:
        # the atlas knew the correction (from the source file's header)
        from atlas.physics.barycentric import apply_kms

        res["barycentric_kms"] = float(rec["barycentric_kms"])
        if res["rv_obs_kms"] is not None:
            res["rv_kms"] = float(apply_kms(res["rv_obs_kms"], res["barycentric_kms"]))
        res["notes"] = [n for n in res["notes"] if "barycentric" not in n]
    if args.json:
        json.dump(res, sys.stdout, indent=1, allow_nan=False)
        sys.stdout.write("\n")
    else:
        print(readable(name, res))
    return 0
