"""One measurement pipeline for a star: normalise, velocity, class and temperature, features.

:func:`measure_run` is what the build (:mod:`atlas.measure.card`) and ``striae measure``
(:mod:`atlas.measure.report`) both call, on the same 1-D vacuum run of samples
(:func:`atlas.flatten.vacuum_run`), so they give the same numbers for the same spectrum:

1. the run is divided by its continuum (ratios outside -0.2..2, where a continuum failed
   at order ends or blaze edges, are masked) and, above 2 million samples, binned to
   0.5 km/s (:func:`atlas.measure.velocity.bin_long_spectrum`);
2. the radial velocity (:func:`atlas.measure.velocity.rv_of_spectrum`) of the normalised
   run, or of the file's own echelle orders when given;
3. the class (:func:`atlas.measure.classify.classify`) of the normalised run, and the
   temperature: a Planck fit to the flux when it is calibrated, else the class's;
4. the features (:func:`atlas.measure.identify.identify_spectrum`) of the normalised run,
   1,000,000 samples at a time.
"""

from __future__ import annotations

from dataclasses import dataclass, field

import numpy as np
import pandas as pd
import xarray as xr

from atlas.physics.constants import C_KMS

#: Samples per piece when features are searched (bounded memory on long spectra).
FEATURE_PIECE = 1_000_000
#: Normalised flux outside this range means the continuum failed there: masked.
NORM_RANGE = (-0.2, 2.0)
#: Resolving power assumed for the line width when neither a velocity fit nor the file gives one.
DEFAULT_RESOLVING_POWER = 20000.0


@dataclass
class StarMeasurement:
    """Everything :func:`measure_run` measured; wavelengths vacuum Å, observer's frame."""

    rv: object | None = None  # atlas.measure.rv.RVResult
    barycentric_kms: float | None = None
    spectral_class: object | None = None  # atlas.measure.classify.ClassResult
    teff_k: float | None = None
    teff_err_k: float | None = None
    teff_method: str | None = None
    line_fwhm_kms: float | None = None  # the width the features were searched with
    features: pd.DataFrame | None = None
    predicted: pd.DataFrame | None = None  # lines predicted for this star, components joined
    predicted_lines: pd.DataFrame | None = None  # atlas.lines.predict rows as predicted (deeper than 0.002)
    logg: float | None = None  # the log g the prediction used (None = a dwarf)
    band_depth: tuple | None = None  # (rest_A, depth) of its molecular bands
    notes: list[str] = field(default_factory=list)
    normalised: xr.Dataset | None = None  # the (possibly binned) normalised run
    raw: xr.Dataset | None = None  # the (possibly binned) run before normalisation

    @property
    def rv_obs_kms(self):
        return None if self.rv is None else self.rv.rv_obs_kms


def run_datasets(seq: dict, attrs: dict):
    """(raw, normalised) 1-D Spectrum Datasets of a run, sorted by wavelength.

    ``seq`` holds 1-D arrays ``wavelength`` (vacuum Å), ``flux``, ``mask``,
    ``continuum`` and ``uncertainty`` (or None).
    """
    w = np.asarray(seq["wavelength"], dtype=np.float64)
    names = ("flux", "mask", "continuum", "uncertainty")
    arr = {k: seq.get(k) for k in names}
    if w.size > 1 and not np.all(w[1:] >= w[:-1]):
        o = np.argsort(w, kind="stable")
        w = w[o]
        arr = {k: (None if v is None else np.asarray(v)[o]) for k, v in arr.items()}
    f = np.asarray(arr["flux"])
    c = np.asarray(arr["continuum"], dtype=np.float64)
    bad = np.asarray(arr["mask"], dtype=bool) | ~np.isfinite(f)
    ok = np.isfinite(c) & (c > 0)
    with np.errstate(divide="ignore", invalid="ignore"):
        fn = np.where(ok, f / c, np.nan)
    with np.errstate(invalid="ignore"):
        nbad = bad | ~ok | ~((fn > NORM_RANGE[0]) & (fn < NORM_RANGE[1]))
    coords = {"wavelength": ("sample", w, {"medium": "vacuum"})}
    raw_vars = {"flux": ("sample", f), "mask": ("sample", bad)}
    norm_vars = {"flux": ("sample", fn), "mask": ("sample", nbad)}
    u = arr["uncertainty"]
    if u is not None and np.isfinite(u).any():
        raw_vars["uncertainty"] = ("sample", np.asarray(u))
        with np.errstate(divide="ignore", invalid="ignore"):
            norm_vars["uncertainty"] = ("sample", np.where(ok, u / np.abs(c), np.nan))
    norm_attrs = {k: v for k, v in attrs.items() if k not in ("flux_unit", "bunit", "BUNIT")}
    return (xr.Dataset(raw_vars, coords=coords, attrs=dict(attrs)),
            xr.Dataset(norm_vars, coords=coords, attrs=norm_attrs))


def measure_run(seq: dict, attrs: dict, lines=None, *, site=None, radec=None, time=None,
                rv_source=None, calibrated: bool | None = None,
                with_features: bool = True) -> StarMeasurement:
    """Measure one star from its 1-D vacuum run (see the module's steps).

    ``attrs`` are the file's attributes (time, site, coordinates, resolving power, flux
    unit); ``site``/``radec``/``time`` override them as in
    :func:`atlas.physics.barycentric.correction_for`.  ``rv_source`` (the file's own
    echelle orders) is measured for the velocity instead of the run.  ``calibrated``
    forces (True) or forbids (False) the Planck fit; None decides from the flux unit.
    Failures of one step are one-line ``notes``, never exceptions.
    """
    from atlas.measure.classify import classify, colour_temperature, is_calibrated
    from atlas.measure.velocity import bin_long_spectrum, rv_of_spectrum
    from atlas.physics.barycentric import correction_for

    if lines is None:
        from atlas.lines import load_lines

        lines = load_lines()
    m = StarMeasurement()
    raw, nds = run_datasets(seq, attrs)
    raw, bnote = bin_long_spectrum(raw)
    nds, _ = bin_long_spectrum(nds)
    if bnote:
        m.notes.append(bnote)
    m.raw, m.normalised = raw, nds
    try:
        if rv_source is not None:
            m.rv = rv_of_spectrum(rv_source, lines, site=site, radec=radec, time=time)
        else:
            m.rv = rv_of_spectrum(nds, lines, site=site, radec=radec, time=time,
                                  continuum=np.ones(nds.sizes["sample"]))
    except (ValueError, RuntimeError, np.linalg.LinAlgError) as exc:
        m.notes.append(f"no radial velocity: {exc}")
        m.barycentric_kms, missing = correction_for(raw, site=site, radec=radec, time=time)
        if m.barycentric_kms is None:
            m.notes.append("no barycentric correction: missing " + ", ".join(missing)
                           + " (give --time/--site/--radec)")
    else:
        m.barycentric_kms = m.rv.barycentric_kms
        if m.rv.rv_obs_kms is None:
            m.notes.append(f"no radial velocity: {m.rv.note}")
            m.rv = None
        elif m.rv.note:
            m.notes.append(m.rv.note)
    rv_obs = m.rv_obs_kms if m.rv is not None else 0.0
    fit_fwhm = None if m.rv is None else m.rv.line_fwhm_kms
    resolving = attrs.get("resolving_power")
    m.line_fwhm_kms = fit_fwhm or C_KMS / float(resolving or DEFAULT_RESOLVING_POWER)
    if m.rv is None:
        m.notes.append("lines and class placed at zero velocity (no radial velocity)")

    unc = nds["uncertainty"].values if "uncertainty" in nds else None
    try:
        m.spectral_class = classify(nds["wavelength"].values, nds["flux"].values, unc, nds["mask"].values,
                                    rv_obs_kms=rv_obs, line_fwhm_kms=fit_fwhm,
                                    resolving_power=resolving, medium="vacuum")
    except (ValueError, RuntimeError, np.linalg.LinAlgError) as exc:
        m.notes.append(f"no class: {exc}")
    else:
        if m.spectral_class.note:
            m.notes.append(m.spectral_class.note)
    if m.spectral_class is not None:
        m.rv = _refined(m, rv_source if rv_source is not None else nds, lines, rv_source is None)
        rv_obs = m.rv_obs_kms if m.rv is not None else 0.0
    if calibrated is None:
        calibrated = is_calibrated(raw)
    if calibrated:
        try:
            runc = raw["uncertainty"].values if "uncertainty" in raw else None
            t, e = colour_temperature(raw["wavelength"].values, raw["flux"].values, runc, raw["mask"].values)
            m.teff_k, m.teff_err_k, m.teff_method = t, e, "Planck colour temperature"
        except (ValueError, RuntimeError, np.linalg.LinAlgError) as exc:
            m.notes.append(f"no colour temperature: {exc}")
    elif m.spectral_class is not None and m.spectral_class.class_teff_k is not None:
        m.teff_k = round(float(m.spectral_class.class_teff_k), -1)
        m.teff_method = "from the class (flux not calibrated)"
        m.notes.append("flux not calibrated: teff_k is the class's temperature")

    m.predicted = predict_for(m, nds, m.notes)
    if with_features:
        try:
            m.features = run_features(nds, lines, predicted=m.predicted, band_depth=m.band_depth,
                                      rv_obs_kms=rv_obs,
                                      rv_err_kms=(m.rv.rv_err_kms if m.rv is not None else None) or 0.0,
                                      line_fwhm_kms=m.line_fwhm_kms)
        except (ValueError, RuntimeError, np.linalg.LinAlgError) as exc:
            m.notes.append(f"no features: {exc}")
    return m


def _refined(m: StarMeasurement, ds, lines, flat: bool):
    """:func:`atlas.measure.velocity.refine_with_class` of the first velocity, its note kept."""
    from atlas.measure.velocity import refine_with_class

    try:
        r = refine_with_class(ds, m.rv, m.spectral_class.class_teff_k, lines,
                              continuum=np.ones(ds.sizes["sample"]) if flat else None)
    except (ValueError, RuntimeError, np.linalg.LinAlgError) as exc:
        m.notes.append(f"velocity not re-measured against the class templates: {exc}")
        return m.rv
    if r is not m.rv and r.note:
        m.notes.append(r.note)
    return r


#: Predicted lines are kept this far (fraction of the wavelength, 600 km/s) beyond the
#: run's ends, so a star's velocity never moves a line out of reach.
RV_MARGIN = 600.0 / C_KMS


def predict_for(m: StarMeasurement, nds: xr.Dataset, notes: list[str]) -> pd.DataFrame | None:
    """The lines predicted for a measured star (:func:`atlas.lines.predict.predict_depths`
    over the run's range, at its ``teff_k`` and the log g of its class, broadened to its
    line width), or None with a note saying why."""
    from atlas.errors import InputError
    from atlas.lines.dense import load_merged_lines
    from atlas.lines.predict import logg_of_class, predict_depths
    from atlas.measure.contributors import (
        IDENTIFY_THRESHOLD,
        collapse_components,
        predicted_band_depth,
    )

    if m.teff_k is None or not np.isfinite(m.teff_k):
        notes.append("no predicted lines: no Teff was measured (features matched to the nearest listed line)")
        return None
    cls = None if m.spectral_class is None else m.spectral_class.spectral_class
    w = nds["wavelength"].values
    merged = load_merged_lines()
    rest = merged["vacuum_A"].to_numpy()
    lines = merged[(rest > w[0] * (1 - RV_MARGIN)) & (rest < w[-1] * (1 + RV_MARGIN))]
    m.logg = logg_of_class(cls) if cls else None
    try:
        pred = predict_depths(lines, float(m.teff_k), m.logg, line_fwhm_kms=m.line_fwhm_kms,
                              threshold=IDENTIFY_THRESHOLD)
    except InputError as exc:
        notes.append(f"no predicted lines: {exc}")
        return None
    notes.extend(pred.attrs.get("notes", []))
    m.predicted_lines = pred
    heads = merged[merged["kind"].astype(str) == "band_head"]  # bands reach far from their heads
    m.band_depth = predicted_band_depth(heads, float(m.teff_k), m.logg,
                                        w[0] * (1 - RV_MARGIN), w[-1] * (1 + RV_MARGIN))
    return collapse_components(pred)


#: Feature columns in the order they are reported (identified and unexplained alike).
FEATURE_COLUMNS = ("observed_A", "observed_err_A", "rest_A", "species", "kind", "depth", "depth_err",
                   "ew_mA", "ew_err_mA", "fwhm_kms", "offset_kms", "quality", "significance",
                   "predicted_depth", "explained_fraction", "share", "blend")
_TEXT = ("species", "kind", "blend")

#: ``kind`` of a feature nothing explains.
UNEXPLAINED = "unexplained"


def run_features(nds: xr.Dataset, lines, *, rv_obs_kms: float, rv_err_kms: float,
                 line_fwhm_kms: float, predicted: pd.DataFrame | None = None,
                 band_depth=None, min_sigma: float = 5.0) -> pd.DataFrame:
    """Found features of a normalised 1-D run, identified or not, sorted by wavelength.

    One row per feature with :data:`FEATURE_COLUMNS` (vacuum Å, observer's frame).  With
    ``predicted`` (the star's predicted lines) each feature gets its contributors
    (:func:`atlas.measure.contributors.attribute`); without, the nearest listed line
    (:func:`atlas.measure.identify.identify`; ``predicted_depth``,
    ``explained_fraction``, ``share`` NaN, ``blend`` empty); ``band_depth`` as
    :func:`atlas.measure.contributors.attribute` takes it.  A feature nothing explains
    has ``kind`` :data:`UNEXPLAINED`, an empty ``species`` and NaN ``rest_A``.  Works
    :data:`FEATURE_PIECE` samples at a time.
    """
    from atlas.measure.contributors import attribute
    from atlas.measure.identify import identify

    wave = np.asarray(nds["wavelength"].values)
    frames = []
    for a in range(0, wave.size, FEATURE_PIECE):
        sl = slice(a, min(wave.size, a + FEATURE_PIECE))
        unc = nds["uncertainty"].values[sl] if "uncertainty" in nds else None
        if unc is not None and not np.isfinite(unc).any():
            unc = None
        feats = _piece_features(wave[sl], nds["flux"].values[sl], unc, nds["mask"].values[sl],
                                predicted, rv_obs_kms, line_fwhm_kms, min_sigma)
        if not len(feats):
            continue
        if predicted is not None:
            frames.append(attribute(feats, predicted, lines, rv_obs_kms=rv_obs_kms, rv_err_kms=rv_err_kms,
                                    band_depth=band_depth))
            continue
        found, unknown = identify(feats, lines, rv_obs_kms=rv_obs_kms, rv_err_kms=rv_err_kms,
                                  line_fwhm_kms=line_fwhm_kms, medium="vacuum")
        if len(unknown):
            unknown = unknown.assign(rest_A=np.nan, species="", kind=UNEXPLAINED,
                                     offset_kms=np.nan, quality=np.nan)
        for df in (found, unknown):
            if len(df):
                frames.append(df.assign(predicted_depth=np.nan, explained_fraction=np.nan, share=np.nan,
                                        blend=[[] for _ in range(len(df))]))
    if not frames:
        return pd.DataFrame({k: pd.Series(dtype=object if k in _TEXT else np.float64)
                             for k in FEATURE_COLUMNS})
    out = pd.concat([f[list(FEATURE_COLUMNS)] for f in frames], ignore_index=True)
    for k in FEATURE_COLUMNS:
        if k not in _TEXT:
            out[k] = out[k].astype(np.float64)
    out["species"] = out["species"].astype(str)
    out["kind"] = out["kind"].astype(str)
    return out.sort_values("observed_A", kind="stable", ignore_index=True)


def _piece_features(w, f, unc, mask, predicted, rv_obs_kms, line_fwhm_kms, min_sigma):
    """Features of one piece of a normalised run, the strong lines' wings divided out
    (:mod:`atlas.measure.wings`) when the star's predicted lines are known."""
    from atlas.measure.identify import block_noise, spectrum_features
    from atlas.measure.wings import core_slices, divide_wings, strong_centres_A

    fn = np.where(np.asarray(mask, dtype=bool), np.nan, np.asarray(f, dtype=np.float64))
    sn = np.asarray(unc, dtype=np.float64) if unc is not None else block_noise(fn)
    centres = strong_centres_A(predicted, rv_obs_kms)
    fd, sd, changed = divide_wings(w, fn, sn, centres, line_fwhm_kms)
    kw = {"line_fwhm_kms": line_fwhm_kms, "normalised": True, "min_sigma": min_sigma}
    feats = spectrum_features(w, fd, uncertainty=sd, **kw)
    if not changed:
        return feats
    # each strong line's core: one feature measured on the undivided flux
    cores = [c for c in core_slices(w, centres, line_fwhm_kms)
             if any(a <= (c[0] + c[1]) // 2 < b for a, b in changed)]
    keep = np.ones(len(feats), dtype=bool)
    found = [feats]
    pad = int(np.ceil(3 * line_fwhm_kms / max(float(np.median(np.diff(np.log(w)))) * C_KMS, 1e-9)))
    for a, b in cores:
        lo_A, hi_A = w[a], w[b - 1]
        keep &= ~((feats["observed_A"] >= lo_A) & (feats["observed_A"] <= hi_A)).to_numpy()
        sl = slice(max(0, a - pad), min(w.size, b + pad))
        core = spectrum_features(w[sl], fn[sl], uncertainty=sn[sl], **kw)
        inside = core[(core["observed_A"] >= lo_A) & (core["observed_A"] <= hi_A)]
        if len(inside):
            found.append(inside.nlargest(1, "depth"))
    found[0] = feats[keep]
    found = [x for x in found if len(x)]
    if not found:
        return feats.iloc[:0]
    return pd.concat(found, ignore_index=True).sort_values("observed_A", ignore_index=True)


#: Weak identified lines (depth in this range) give the star's line width: strong
#: lines' damping wings widen it (common practice).
WEAK_DEPTH = (0.05, 0.5)


def weak_line_fwhm_kms(features: pd.DataFrame | None) -> tuple[float | None, int]:
    """Median FWHM (km/s) of the weak identified lines and how many there were (None below 5)."""
    if features is None or not len(features):
        return None, 0
    weak = features[(features["kind"] != UNEXPLAINED) & (features["depth"] > WEAK_DEPTH[0])
                    & (features["depth"] < WEAK_DEPTH[1])]
    if len(weak) < 5:
        return None, len(weak)
    return float(np.median(weak["fwhm_kms"])), len(weak)
