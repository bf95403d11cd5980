"""The per-star measurement card: every number the catalog holds about a star, in one place.

:func:`star_measurements` is the single step the build calls for each star; new
measurements (radial velocity, temperature, class) are added here and nowhere else.
"""

from __future__ import annotations

import numpy as np

from atlas.spectrum import finite_or_none

#: Measurement keys of a star record in ``atlas.json`` (numbers, strings or null).
MEASUREMENT_KEYS = (
    "barycentric_kms",
    "rv_kms",
    "rv_err_kms",
    "teff_k",
    "spectral_class",
    "snr",
    "resolving_power",
    "colour_srgb",
    "rv_obs_kms",
    "class_range",
    "class_criteria",
    "colour_basis",
    "rv_method",
    "vsini_kms",
)


def star_measurements(ds, *, site=None, radec=None, time=None, extra: dict | None = None,
                      rv_source=None, lines=None) -> tuple[dict, list[str]]:
    """Measurements of one star from its Spectrum in vacuum Å (1-D); returns (values, notes).

    ``ds`` carries ``wavelength`` (vacuum Å), ``flux``, ``mask``, ``continuum`` (the
    build's; fitted with the default settings when absent) and the file's attributes.
    Velocity, class, temperature and features come from
    :func:`atlas.measure.pipeline.measure_run`, the pipeline ``striae measure`` runs too;
    ``rv_source`` (the file's own echelle orders) is used for the radial velocity.
    ``extra``, when given, receives ``measurement`` (the
    :class:`~atlas.measure.pipeline.StarMeasurement`), ``rv_obs_kms``, ``rv_err_kms``,
    ``line_fwhm_kms`` and ``features`` (the store's ``features`` group, see
    :func:`features_dataset`; None without a radial velocity).
    ``site``/``radec``/``time`` override the file as in
    :func:`atlas.physics.barycentric.correction_for`.  ``values`` has exactly the keys
    :data:`MEASUREMENT_KEYS`, each a number, a string or None; ``notes`` are one-line
    remarks for the build's output (what could not be measured and why).

    - ``barycentric_kms``: Wright & Eastman (2014), PASP 126, 838, via astropy.
    - ``snr``: DER_SNR, Stoehr et al. (2008), ASP Conf. Ser. 394, 505.
    - ``resolving_power``: the file's value, else the highest R its sampling supports
      (two pixels per resolution element, common practice).
    - ``colour_srgb``: ``#rrggbb`` true colour (CIE 1931 2° observer, sRGB; colour-science).
    - ``rv_kms`` (barycentric), ``rv_obs_kms`` (observer's frame), ``rv_err_kms`` (of
      both), ``spectral_class``, ``teff_k``: :func:`atlas.measure.pipeline.measure_run`.
    - ``class_range`` (e.g. ``"B4-B6"``, or ``"uncertain"``) and ``class_criteria`` (a list
      of ``{"name", "value", "says"}``): the published criteria behind the class,
      :mod:`atlas.measure.criteria`.
    - ``rv_method`` (``"line mask"`` or ``"template <class>"``) and ``vsini_kms`` (the rough
      v sin i of :func:`atlas.measure.rv.vsini_rough`, or the template fit's).
    - ``colour_basis``: ``"calibrated"`` (flux density) or ``"instrument"`` (counts with the
      instrument's throughput, and for echelle files the blaze, in them).
    """
    from atlas.measure.classify import is_calibrated
    from atlas.measure.pipeline import measure_run
    from atlas.measure.sampling import implied_resolving_power, median_sampling_kms
    from atlas.measure.snr import der_snr
    from atlas.physics.colour import hex_of, srgb_of_spectrum

    wave = np.asarray(ds["wavelength"].values, dtype=np.float64)
    flux = np.asarray(ds["flux"].values)
    mask = np.asarray(ds["mask"].values, dtype=bool) if "mask" in ds else ~np.isfinite(flux)
    values = dict.fromkeys(MEASUREMENT_KEYS)
    if "continuum" in ds:
        cont = ds["continuum"].values
    else:
        from atlas.continuum import ContinuumSettings, fit_continuum

        cont = fit_continuum(wave, flux, mask, ContinuumSettings()).astype(np.float32)
    seq = {"wavelength": wave, "flux": flux, "mask": mask, "continuum": cont,
           "uncertainty": ds["uncertainty"].values if "uncertainty" in ds else None}
    m = measure_run(seq, dict(ds.attrs), lines, site=site, radec=radec, time=time, rv_source=rv_source,
                    with_features=extra is not None)
    del seq, cont
    notes = list(m.notes)
    values["barycentric_kms"] = finite_or_none(m.barycentric_kms)
    if m.rv is not None:
        values["rv_kms"] = finite_or_none(m.rv.rv_kms)
        values["rv_obs_kms"] = finite_or_none(m.rv.rv_obs_kms)
        values["rv_err_kms"] = finite_or_none(m.rv.rv_err_kms)
        values["rv_method"] = m.rv.method
        values["vsini_kms"] = finite_or_none(m.rv.vsini_rough_kms)
        if m.rv.method != "line mask":
            notes.append(f"radial velocity by {m.rv.method} fit")
        if m.rv.rv_kms is None:
            notes.append(f"radial velocity {m.rv.rv_obs_kms:+.3f} km/s in the observer's frame only")
    if m.spectral_class is not None:
        values["spectral_class"] = m.spectral_class.spectral_class
        values["class_range"] = m.spectral_class.class_range
        values["class_criteria"] = m.spectral_class.class_criteria
    values["teff_k"] = finite_or_none(m.teff_k)
    if extra is not None:
        extra["measurement"] = m
        extra["features"] = None
        if m.rv is not None:
            extra.update(rv_obs_kms=m.rv.rv_obs_kms, rv_err_kms=m.rv.rv_err_kms,
                         line_fwhm_kms=m.line_fwhm_kms)
            if m.features is not None:
                extra["features"] = features_dataset(m.features, m.rv.rv_obs_kms)

    if flux.ndim == 1 and flux.size > SNR_PIECE:
        # long spectra: DER_SNR of contiguous pieces, their median (as for echelle
        # orders), so no float64 copy of the whole spectrum is made
        per = [der_snr(flux[a : a + SNR_PIECE], mask[a : a + SNR_PIECE])
               for a in range(0, flux.size, SNR_PIECE)]
        per = [v for v in per if np.isfinite(v)]
        values["snr"] = finite_or_none(np.median(per)) if per else None
    else:
        values["snr"] = finite_or_none(der_snr(flux, mask))

    r = finite_or_none(ds.attrs.get("resolving_power"))
    if r is None:
        if wave.ndim == 1 and wave.size > SNR_PIECE:
            # long spectra: the median of per-piece medians (no whole-length temporaries)
            samp = float(np.nanmedian([median_sampling_kms(wave[a : a + SNR_PIECE + 1])
                                       for a in range(0, wave.size - 1, SNR_PIECE)]))
        else:
            samp = median_sampling_kms(np.sort(wave))
        r = finite_or_none(implied_resolving_power(samp))
        if r is not None:
            notes.append(f"resolving power not in the file: {r:.0f} implied by the sampling")
    values["resolving_power"] = r

    # colour from the binned spectrum when it is long (bin means integrate alike)
    raw = m.raw
    cw, cf = np.asarray(raw["wavelength"].values), np.asarray(raw["flux"].values)
    good = np.isfinite(cf) & np.isfinite(cw) & ~np.asarray(raw["mask"].values, dtype=bool)
    if np.count_nonzero(good) >= 2:
        w, f = _block_means(cw[good], cf[good], COLOUR_POINTS)
        values["colour_srgb"] = hex_of(srgb_of_spectrum(w, f))
        # the flux the colour comes from: calibrated, or counts through the instrument
        values["colour_basis"] = "calibrated" if is_calibrated(ds) else "instrument"
    return values, notes


#: DER_SNR of spectra longer than this is the median over pieces this long (samples).
SNR_PIECE = 1_000_000

#: Colour is integrated on a 1 nm grid: block means down to this many points lose nothing.
COLOUR_POINTS = 20_000


def _block_means(wave, flux, n_max):
    """Means of consecutive blocks of samples, so at most about ``n_max`` points remain."""
    k = int(np.ceil(wave.size / n_max))
    if k <= 1:
        return wave, flux
    m = wave.size // k
    w = wave[: m * k].reshape(m, k).mean(axis=1)
    f = np.asarray(flux[: m * k], dtype=np.float64).reshape(m, k).mean(axis=1)
    return w, f


def features_dataset(features, rv_obs_kms: float):
    """A star's features (:func:`atlas.measure.pipeline.run_features`) in the store's ``features`` layout.

    An ``xarray.Dataset`` with dimension ``feature``: ``wavelength_A`` (vacuum,
    observer's frame), ``species`` (empty when unexplained), ``rest_A`` (vacuum rest,
    NaN when unexplained), ``ew_mA`` (Gaussian-fit equivalent width, mÅ),
    ``ew_err_mA``, ``kind``, ``significance``, ``depth``, ``predicted_depth``,
    ``explained_fraction``, ``blend`` (text; see DEVELOPERS.md, "Atlas on disk").
    """
    import xarray as xr

    from atlas.measure.contributors import blend_text

    num = {"wavelength_A": "observed_A", "rest_A": "rest_A", "ew_mA": "ew_mA",
           "ew_err_mA": "ew_err_mA", "significance": "significance", "depth": "depth",
           "predicted_depth": "predicted_depth", "explained_fraction": "explained_fraction"}
    out = xr.Dataset({k: ("feature", features[c].to_numpy(dtype=np.float64)) for k, c in num.items()})
    texts = {"species": features["species"].astype(str).to_numpy(),
             "kind": features["kind"].astype(str).to_numpy(),
             "blend": np.array([blend_text(b) for b in features["blend"]], dtype=str)}
    for k, v in texts.items():
        # variable-length strings: Zarr v3 has no specified fixed-width unicode type
        out[k] = ("feature", v.astype(object))
    out.attrs.update(rv_obs_kms=float(rv_obs_kms), medium="vacuum", frame="observed")
    return out
