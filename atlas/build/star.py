"""One star, from file to finished store: read, vacuum, cut, continuum, envelopes, store,
measurements, features, seal (:func:`build_star`).  It runs in this process or on
dask.distributed workers unchanged; :mod:`atlas.build.pipeline` plans and commits."""

from __future__ import annotations

import dataclasses
import hashlib
import json
import os
from dataclasses import dataclass, field

import numpy as np
import xarray as xr

from atlas import __version__, store
from atlas.continuum import ContinuumSettings
from atlas.errors import InputError
from atlas.flatten import vacuum_run
from atlas.lod import FACTOR, build_levels
from atlas.spectrum import is_echelle, medium_of
from atlas.strips import (
    DEFAULT_OVERLAP,
    StripPlan,
    auto_strip_kms,
    check_overlap,
    check_width,
    gather,
    plan_equal_A,
    plan_orders,
    plan_velocity,
)

#: Bytes aimed at per chunk of a float32 (strip, pixel) variable (at most 64 strips).
#: Measured here: 1 MiB chunks write a 345 x 6000 star about 20 % faster than 512 KiB
#: (fewer Zarr chunk writes), while a viewer page step reading every strip from the
#: store took 10.4 ms per strip instead of 9.6 ms (10M samples, tests/bench/bench_view.py);
#: 2 MiB chunks wrote no faster.
CHUNK_BYTES = 1024 * 1024


@dataclass(frozen=True)
class BuildOptions:
    """Everything that shapes a built star (recorded as ``options`` in ``atlas.json``).

    strip_kms: strip width in km/s, None = chosen per star from its sampling.
    overlap: fraction of a strip shared with its neighbour, in [0, 0.5).
    equal_A: strip width in Å instead of velocity (None = velocity strips).
    merge_orders: cut echelle data as one merged spectrum instead of one strip per order.
    site: (lat_deg, lon_deg, height_m), radec: (ra_deg, dec_deg), time: ISO UTC; override files.
    """

    strip_kms: float | None = None
    overlap: float = DEFAULT_OVERLAP
    equal_A: float | None = None
    merge_orders: bool = False
    site: tuple | None = None
    radec: tuple | None = None
    time: str | None = None
    continuum: ContinuumSettings = field(default_factory=ContinuumSettings)

    def __post_init__(self):
        if self.strip_kms is not None:
            object.__setattr__(self, "strip_kms", check_width(self.strip_kms, "--strip-kms"))
        if self.equal_A is not None:
            object.__setattr__(self, "equal_A", check_width(self.equal_A, "--equal-A"))
        if self.strip_kms is not None and self.equal_A is not None:
            raise InputError("--equal-A", "give either --strip-kms or --equal-A, not both")
        object.__setattr__(self, "overlap", check_overlap(self.overlap))

    def as_dict(self) -> dict:
        d = dataclasses.asdict(self)
        d["continuum"] = self.continuum.as_dict()
        d["site"] = list(self.site) if self.site is not None else None
        d["radec"] = list(self.radec) if self.radec is not None else None
        return d

    @classmethod
    def from_dict(cls, d: dict) -> BuildOptions:
        """The options a catalog recorded (``as_dict``), e.g. to rebuild a damaged star."""
        d = dict(d or {})
        fields = set(cls.__dataclass_fields__)
        cont = ContinuumSettings(**{k: v for k, v in (d.pop("continuum", None) or {}).items()
                                    if k in ContinuumSettings.__dataclass_fields__})
        for k in ("site", "radec"):
            if d.get(k) is not None:
                d[k] = tuple(d[k])
        return cls(**{k: v for k, v in d.items() if k in fields}, continuum=cont)


# ---------------------------------------------------------------- one star, in memory


def prepare(ds: xr.Dataset, options: BuildOptions):
    """Flatten a Spectrum to sorted 1-D vacuum samples with its continuum and strip plan.

    Returns ``(seq, plan, notes)``: ``seq`` a dict of 1-D arrays (``wavelength``,
    ``flux``, ``uncertainty`` or None, ``mask``, ``continuum``) in strip order, and for
    echelle orders kept as strips ``measure``, the merged spectrum the measurements use
    (:func:`atlas.flatten.vacuum_run`).
    """
    keep = not options.merge_orders and options.equal_A is None and options.strip_kms is None
    seq, orders, notes = vacuum_run(ds, options.continuum, keep_orders=keep)
    if orders is not None:
        if keep:
            plan = plan_orders(np.array([o[0] for o in orders]), [o[1] for o in orders],
                               [o[2] for o in orders])
            return seq, plan, notes
        if not options.merge_orders:
            notes.append("echelle orders merged because a strip width was given")
    wave = seq["wavelength"]
    if options.equal_A is not None:
        plan = plan_equal_A(wave, options.equal_A, options.overlap)
    else:
        kms = options.strip_kms if options.strip_kms is not None else auto_strip_kms(wave)
        plan = plan_velocity(wave, kms, options.overlap)
    return seq, plan, notes


def _sub_plan(plan: StripPlan, b0: int, b1: int) -> StripPlan:
    """Strips ``b0:b1`` of a plan."""
    return StripPlan(plan.start[b0:b1], plan.stop[b0:b1], plan.lo_A[b0:b1], plan.hi_A[b0:b1],
                     plan.mode, plan.width)


def star_block(seq: dict, plan: StripPlan, b0: int, b1: int, pixel: int | None = None):
    """Strips ``b0:b1`` of the root group (strip, pixel) Dataset and of the envelope levels.

    ``pixel`` is the whole star's strip length (default: the plan's); every strip's
    arrays and envelopes depend only on its own samples, so blocks put side by side
    equal :func:`star_arrays` of the whole star.
    """
    pixel = plan.pixel if pixel is None else pixel
    sub = _sub_plan(plan, b0, b1)
    n = sub.n_strips
    wav = gather(seq["wavelength"], sub, np.nan, np.float64, pixel=pixel)
    flux = gather(seq["flux"], sub, np.nan, np.float32, pixel=pixel)
    cont = gather(seq["continuum"], sub, np.nan, np.float32, pixel=pixel)
    with np.errstate(divide="ignore", invalid="ignore"):
        norm = flux / cont
    norm[~(cont > 0)] = np.nan
    mask = gather(seq["mask"], sub, True, bool, pixel=pixel)
    if seq.get("uncertainty") is not None:
        unc = gather(seq["uncertainty"], sub, np.nan, np.float32, pixel=pixel)
    else:
        unc = np.full((n, pixel), np.nan, dtype=np.float32)
    mask |= ~np.isfinite(flux)
    levels = build_levels(wav, flux, norm, mask)
    sp = ("strip", "pixel")
    root = xr.Dataset(
        {
            "flux": (sp, flux),
            "uncertainty": (sp, unc),
            "continuum": (sp, cont),
            "norm_flux": (sp, norm),
            "mask": (sp, mask),
            "strip_min_A": ("strip", np.asarray(sub.lo_A, dtype=np.float64)),
            "strip_max_A": ("strip", np.asarray(sub.hi_A, dtype=np.float64)),
            "strip_samples": ("strip", sub.count.astype(np.int32)),
        },
        coords={"wavelength": (sp, wav, {"units": "Angstrom", "medium": "vacuum"})},
    )
    lev_ds = []
    for lev in levels:
        sb = ("strip", "bin")
        lev_ds.append(
            xr.Dataset(
                {k: (sb, v) for k, v in lev.items() if k != "step"},
                attrs={"step": int(lev["step"])},
            )
        )
    return root, lev_ds


def star_arrays(seq: dict, plan: StripPlan):
    """The root group (strip, pixel) Dataset and the envelope levels of one star (all in memory)."""
    return star_block(seq, plan, 0, plan.n_strips)


#: Bytes aimed at per block of padded strips written at a time (all root variables together).
BLOCK_BYTES = 32 * 2**20


def _block_strips(pixel: int, n_strips: int, strips_per_chunk: int) -> int:
    """Strips per written block: a multiple of 4 chunks (the envelope chunks), about BLOCK_BYTES."""
    unit = 4 * strips_per_chunk
    per_strip = 25 * max(pixel, 1)  # float64 wavelength, four float32 variables, bool mask
    return unit * max(1, BLOCK_BYTES // (per_strip * unit))


def write_star_arrays(atlas_url: str, name: str, seq: dict, plan: StripPlan, attrs: dict) -> int:
    """Cut, normalise, envelope and store one star block by block; returns the envelope level count.

    The store equals ``store.write_star`` of :func:`star_arrays` with ``attrs`` (plus
    ``lod_levels``), but only one block of padded strips is in memory at a time.
    """
    pixel, n = plan.pixel, plan.n_strips
    spc = _strips_per_chunk(pixel, n)
    step = _block_strips(pixel, n, spc)
    n_levels = []

    def blocks():
        for b0 in range(0, n, step):
            b1 = min(n, b0 + step)
            root, levels = star_block(seq, plan, b0, b1, pixel)
            if not n_levels:
                n_levels.append(len(levels))
            root.attrs.update({**attrs, "lod_levels": len(levels)})
            root.attrs = {k: v for k, v in root.attrs.items() if v is not None}
            yield b0, b1, root, levels

    per_strip = xr.Dataset({
        "strip_min_A": ("strip", np.asarray(plan.lo_A, dtype=np.float64)),
        "strip_max_A": ("strip", np.asarray(plan.hi_A, dtype=np.float64)),
        "strip_samples": ("strip", plan.count.astype(np.int32)),
    })
    store.write_star_blocks(atlas_url, name, blocks(), n, spc, per_strip)
    return n_levels[0]


def _strips_per_chunk(pixel: int, n_strips: int) -> int:
    return int(min(max(1, n_strips), max(1, min(64, round(CHUNK_BYTES / (4 * max(pixel, 1)))))))


# ---------------------------------------------------------------- one star, file to store


def _content_key(sha: str, options: BuildOptions, path: str) -> str:
    blob = json.dumps(
        {"sha": sha, "options": options.as_dict(), "tool": __version__, "path": os.path.abspath(path)},
        sort_keys=True,
    )
    return hashlib.sha256(blob.encode()).hexdigest()


def predicted_lines(m):
    """The ``lines`` group for a star: the lines its measurement predicted
    (:class:`atlas.measure.pipeline.StarMeasurement`, ``atlas.lines.predict`` at its
    measured Teff, the log g of its luminosity class and its line width) deeper than
    ``DEPTH_THRESHOLD``, or None when none were predicted (the measurement's notes say why)."""
    from atlas.lines.predict import DEPTH_THRESHOLD
    from atlas.lines.stored import to_dataset

    if m is None or m.predicted_lines is None:
        return None
    pred = m.predicted_lines
    pred = pred[pred["predicted_depth"].to_numpy() > DEPTH_THRESHOLD]
    cls = None if m.spectral_class is None else m.spectral_class.spectral_class
    return to_dataset(pred, teff_k=float(m.teff_k), logg=m.logg, spectral_class=cls,
                      line_fwhm_kms=m.line_fwhm_kms)


#: The file's attributes kept in the star store's root for the card (DESIGN.md Spectrum).
OBSERVATION_ATTRS = ("obs_time_utc", "exposure_s", "site_lat_deg", "site_lon_deg", "site_height_m",
                     "ra_deg", "dec_deg")


def build_star(path: str, options: BuildOptions, atlas_url: str, sha: str, in_use: frozenset) -> dict:
    """Build one star from a file into a new store of ``atlas_url``; returns its result.

    The result holds ``record`` (catalog record, ``id`` still the bare slug),
    ``slug`` and ``notes``.  Raises ``InputError`` for a file that cannot be read.
    Usable serially and as a dask.distributed task.
    """
    from atlas.io import read
    from atlas.measure.card import star_measurements

    ds = read(path)
    seq, plan, notes = prepare(ds, options)
    n_samples = int(seq["wavelength"].size)
    wmin, wmax = float(np.min(seq["wavelength"])), float(np.max(seq["wavelength"]))
    name = str(ds.attrs.get("target") or "").strip() or os.path.splitext(os.path.basename(path))[0]
    slug = store.slugify(name, fallback=store.slugify(os.path.basename(path)))
    attrs = {
        "name": name,
        "source": os.path.basename(path),
        "source_sha256": sha,
        "input_medium": medium_of(ds),
        "strip_mode": plan.mode,
        "strip_kms": plan.width if plan.mode == "velocity" else None,
        "strip_A": plan.width if plan.mode == "equal_A" else None,
        "overlap": options.overlap if plan.mode != "orders" else 0.0,
        "continuum": json.dumps(options.continuum.as_dict()),
        "lod_levels": None,  # filled in by write_star_arrays
        "lod_factor": FACTOR,
        "tool_version": __version__,
        # when and where it was observed, for the star's card (absent stays absent)
        **{k: ds.attrs[k] for k in OBSERVATION_ATTRS if ds.attrs.get(k) is not None},
    }
    key = _content_key(sha, options, path)
    sname = store.fresh_store_name(slug, key, atlas_url, set(in_use))
    while not store.claim(atlas_url, sname):  # another build took that path just now
        sname = store.fresh_store_name(slug, os.urandom(16).hex(), atlas_url, set(in_use))
    # Store first, then measure: the two largest memory peaks never overlap.
    measure = seq.pop("measure", None)
    write_star_arrays(atlas_url, sname, seq, plan, attrs)
    if measure is not None:  # echelle orders, one strip each: measured merged
        seq = measure
    # the measurements see the store's own continuum (echelle: the merged orders')
    vac_vars = {k: ("sample", seq[k]) for k in ("flux", "mask", "continuum")}
    if seq.get("uncertainty") is not None:
        vac_vars["uncertainty"] = ("sample", seq["uncertainty"])
    vac = xr.Dataset(
        vac_vars,
        coords={"wavelength": ("sample", seq["wavelength"], {"medium": "vacuum"})},
        attrs=dict(ds.attrs),
    )
    del seq
    extra: dict = {}
    measurements, mnotes = star_measurements(vac, site=options.site, radec=options.radec,
                                             time=options.time, extra=extra,
                                             rv_source=ds if is_echelle(ds) else None)
    notes += mnotes
    lines_ds = predicted_lines(extra.get("measurement"))
    if lines_ds is not None:
        store.write_lines(atlas_url, sname, lines_ds)
    if extra.get("features") is not None:
        store.write_features(atlas_url, sname, extra["features"])
    elif extra.get("measurement") is not None and extra["measurement"].rv is None:
        notes.append("no features: no radial velocity to place the line list")
    extra.clear()
    del vac
    store_sha = store.seal(atlas_url, sname)
    if plan.mode == "velocity":
        desc = f"{plan.n_strips} strips of {plan.width:g} km/s" + (" (chosen from the sampling)" if options.strip_kms is None else "")
    elif plan.mode == "equal_A":
        desc = f"{plan.n_strips} strips of {plan.width:g} Å"
    else:
        desc = f"{plan.n_strips} strips, one per echelle order"
    record = {
        "id": slug,
        "name": name,
        "store": sname,
        "source": os.path.basename(path),
        "source_sha256": sha,
        "wavelength_min_A": wmin,
        "wavelength_max_A": wmax,
        "medium": medium_of(ds),
        "samples": n_samples,
        "strips": plan.n_strips,
        **measurements,
        "store_sha256": store_sha,
        "source_path": os.path.abspath(path) if "://" not in str(path) else str(path),
    }
    return {"record": record, "slug": slug, "notes": notes, "describe": desc}


def build_star_safe(path: str, options: BuildOptions, atlas_url: str, sha: str, in_use: frozenset) -> dict:
    """:func:`build_star`, turning any failure into ``{"error": one line}`` (for many-file builds)."""
    try:
        return build_star(path, options, atlas_url, sha, in_use)
    except InputError as exc:
        return {"error": exc.reason if exc.where == path else exc.message}
    except MemoryError:
        return {"error": "out of memory while building this star"}
    except Exception as exc:  # a broken file must not stop the others
        reason = " ".join(str(exc).split()) or type(exc).__name__
        return {"error": f"cannot build: {type(exc).__name__}: {reason[:300]}"}
