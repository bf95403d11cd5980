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
)


def star_measurements(ds, *, site=None, radec=None, time=None, extra: dict | None = None,
                      rv_source=None) -> tuple[dict, list[str]]:
    """Measurements of one star from its Spectrum in vacuum Å (1-D, sorted); returns (values, notes).

    ``ds`` carries ``wavelength`` (vacuum Å), ``flux``, ``mask`` and the file's attributes,
    and for merged echelle orders ``continuum`` (each order's own, its blaze): the class
    and the features then use ``flux / continuum``.  ``rv_source`` (the file's own
    Spectrum, e.g. echelle orders) is used for the radial velocity instead of ``ds``.
    ``extra``, when given, receives ``rv_obs_kms``, ``rv_err_kms``, ``line_fwhm_kms`` and
    ``measured_ds`` (the possibly binned, normalised spectrum the features should use).
    ``site``/``radec``/``time`` override the file as in
    :func:`atlas.physics.barycentric.correction_for`.  ``values`` has exactly the keys
    :data:`MEASUREMENT_KEYS`, each a number, a string or None; ``notes`` are one-line
    remarks for the build's output (what could not be measured and why).

    - ``barycentric_kms``: Wright & Eastman (2014), PASP 126, 838, via astropy.
    - ``snr``: DER_SNR, Stoehr et al. (2008), ASP Conf. Ser. 394, 505.
    - ``resolving_power``: the file's value, else the highest R its sampling supports
      (two pixels per resolution element, common practice).
    - ``colour_srgb``: ``#rrggbb`` true colour (CIE 1931 2° observer, sRGB; colour-science).
    - ``rv_kms`` (barycentric), ``rv_obs_kms`` (observer's frame, before the barycentric
      correction), ``rv_err_kms`` (of both): line-mask cross-correlation, or the class
      template fit for hot or fast-rotating stars, :func:`atlas.measure.velocity.rv_of_spectrum`.
    - ``spectral_class``: chi-square against the class templates,
      :func:`atlas.measure.classify.classify`.
    - ``teff_k``: Planck colour temperature when the flux unit is calibrated, else the
      temperature of the class (Pecaut & Mamajek 2013), said so in ``notes``.
    """
    from atlas.measure.sampling import implied_resolving_power, median_sampling_kms
    from atlas.measure.snr import der_snr
    from atlas.physics.barycentric import correction_for
    from atlas.physics.colour import hex_of, srgb_of_spectrum

    notes: list[str] = []
    wave = np.asarray(ds["wavelength"].values, dtype=np.float64)
    flux = np.asarray(ds["flux"].values)
    mask = np.asarray(ds["mask"].values, dtype=bool) if "mask" in ds else None
    values = dict.fromkeys(MEASUREMENT_KEYS)

    bary, missing = correction_for(ds, site=site, radec=radec, time=time)
    values["barycentric_kms"] = finite_or_none(bary)
    if bary is None:
        notes.append(
            "no barycentric correction: the file gives no " + ", ".join(missing)
            + " (give --time/--site/--radec)"
        )

    if flux.ndim == 1 and flux.size > SNR_PIECE:
        # long spectra: DER_SNR of contiguous pieces, their median (as for echelle
        # orders), so no float64 copy of the whole spectrum is made
        per = [der_snr(flux[a : a + SNR_PIECE], None if mask is None else mask[a : a + SNR_PIECE])
               for a in range(0, flux.size, SNR_PIECE)]
        per = [v for v in per if np.isfinite(v)]
        values["snr"] = finite_or_none(np.median(per)) if per else None
    else:
        values["snr"] = finite_or_none(der_snr(flux, mask))

    # radial velocity (atlas.measure.rv), class and temperature (atlas.measure.classify)
    from atlas.measure.classify import classify, colour_temperature, is_calibrated

    # long spectra: velocity, class and features on 0.5 km/s bins (bounded memory)
    from atlas.measure.velocity import bin_long_spectrum, rv_of_spectrum

    mds, bnote = bin_long_spectrum(ds)
    if bnote:
        notes.append(bnote)
    raw = mds
    if "continuum" in ds:
        mds = _normalised(ds)
        mds, _ = bin_long_spectrum(mds)
    if extra is not None:
        extra["measured_ds"] = mds
    unc = np.asarray(mds["uncertainty"].values) if "uncertainty" in mds else None
    rv_obs, fwhm = 0.0, None
    try:
        rvr = rv_of_spectrum(mds if rv_source is None else rv_source, site=site, radec=radec, time=time)
    except (ValueError, RuntimeError, np.linalg.LinAlgError) as exc:
        notes.append(f"no radial velocity: {exc}")
    else:
        if rvr.rv_obs_kms is None:
            notes.append(f"no radial velocity: {rvr.note}")
        else:
            rv_obs, fwhm = rvr.rv_obs_kms, rvr.line_fwhm_kms
            if extra is not None:
                extra.update(rv_obs_kms=rv_obs, rv_err_kms=rvr.rv_err_kms, line_fwhm_kms=fwhm)
            # rv_kms barycentric when the correction is known, else null (see notes);
            # rv_obs_kms (observer's frame) always, and the one error serves both
            values["rv_kms"] = finite_or_none(rvr.rv_kms)
            values["rv_obs_kms"] = finite_or_none(rvr.rv_obs_kms)
            values["rv_err_kms"] = finite_or_none(rvr.rv_err_kms)
            if rvr.method != "line mask":
                notes.append(f"radial velocity by {rvr.method} fit ({rvr.note or 'line mask weak'})")
            if rvr.rv_kms is None:
                notes.append(f"radial velocity {rvr.rv_obs_kms:+.3f} km/s in the observer's frame only")
    try:
        mw, mf = mds["wavelength"].values, mds["flux"].values
        mm = mds["mask"].values if "mask" in mds else None
        cres = classify(mw, mf, unc, mm, rv_obs_kms=rv_obs, line_fwhm_kms=fwhm,
                        resolving_power=ds.attrs.get("resolving_power"), medium="vacuum")
        values["spectral_class"] = cres.spectral_class
        if cres.note:
            notes.append(cres.note)
        if is_calibrated(ds):
            runc = np.asarray(raw["uncertainty"].values) if "uncertainty" in raw else None
            values["teff_k"] = finite_or_none(colour_temperature(raw["wavelength"].values, raw["flux"].values,
                                                       runc, raw["mask"].values if "mask" in raw else None)[0])
        elif cres.class_teff_k is not None:
            values["teff_k"] = finite_or_none(round(cres.class_teff_k, -1))
            notes.append("flux not calibrated: teff_k is the class's temperature")
    except (ValueError, RuntimeError, np.linalg.LinAlgError) as exc:
        notes.append(f"no class or temperature: {exc}")

    r = finite_or_none(ds.attrs.get("resolving_power"))
    if r is None:
        if wave.ndim == 1 and wave.size > SNR_PIECE:
            # long spectra: the median of per-piece medians (no whole-length temporaries)
            samp = float(np.nanmedian([median_sampling_kms(wave[a : a + SNR_PIECE + 1])
                                       for a in range(0, wave.size - 1, SNR_PIECE)]))
        else:
            samp = median_sampling_kms(wave)
        r = finite_or_none(implied_resolving_power(samp))
        if r is not None:
            notes.append(f"resolving power not in the file: {r:.0f} implied by the sampling")
    values["resolving_power"] = r

    # colour from the binned spectrum when it is long (bin means integrate alike)
    cw, cf = np.asarray(raw["wavelength"].values), np.asarray(raw["flux"].values)
    good = np.isfinite(cf) & np.isfinite(cw)
    if "mask" in raw:
        good &= ~np.asarray(raw["mask"].values, dtype=bool)
    if np.count_nonzero(good) >= 2:
        w, f = _block_means(cw[good], cf[good], COLOUR_POINTS)
        values["colour_srgb"] = hex_of(srgb_of_spectrum(w, f))
    return values, notes


def _normalised(ds):
    """``flux / continuum`` (and its uncertainty) of a Spectrum with a ``continuum`` variable."""
    import xarray as xr

    c = np.asarray(ds["continuum"].values, dtype=np.float64)
    ok = np.isfinite(c) & (c > 0)
    with np.errstate(invalid="ignore", divide="ignore"):
        data = {"flux": ("sample", np.where(ok, ds["flux"].values / c, np.nan))}
        if "uncertainty" in ds:
            data["uncertainty"] = ("sample", np.where(ok, ds["uncertainty"].values / np.abs(c), np.nan))
    bad = ~ok
    if "mask" in ds:
        bad |= np.asarray(ds["mask"].values, dtype=bool)
    data["mask"] = ("sample", bad)
    attrs = {k: v for k, v in ds.attrs.items() if k not in ("flux_unit", "bunit", "BUNIT")}
    return xr.Dataset(data, coords={"wavelength": ds["wavelength"]}, attrs=attrs)


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


#: Samples per piece when features are searched (bounded memory on long spectra).
FEATURE_PIECE = 1_000_000


def star_features(ds, *, rv_obs_kms: float, rv_err_kms: float = 0.0, line_fwhm_kms: float = 10.0,
                  lines=None, min_sigma: float = 5.0):
    """Identified and unidentified absorption features of a star, in the store's ``features`` layout.

    ``ds`` is the 1-D vacuum Spectrum of :func:`star_measurements`.  Returns an
    ``xarray.Dataset`` with dimension ``feature``: ``wavelength_A`` (vacuum, observer's
    frame), ``species`` (empty when unidentified), ``rest_A`` (vacuum rest, NaN when
    unidentified), ``ew_mA`` (Gaussian-fit equivalent width, mÅ), ``ew_err_mA``,
    ``kind``, ``significance``.  Works in pieces of :data:`FEATURE_PIECE` samples.
    Matching: :func:`atlas.measure.identify.identify_spectrum` (matched filter, Turin 1960).
    """
    import pandas as pd
    import xarray as xr

    from atlas.measure.identify import identify_spectrum

    if lines is None:
        from atlas.lines import load_lines

        lines = load_lines()
    wave = np.asarray(ds["wavelength"].values)
    n = wave.size
    frames = []
    for a in range(0, n, FEATURE_PIECE):
        sl = slice(a, min(n, a + FEATURE_PIECE))
        unc = ds["uncertainty"].values[sl] if "uncertainty" in ds else None
        if unc is not None and not np.isfinite(unc).any():
            unc = None
        mask = ds["mask"].values[sl] if "mask" in ds else None
        ident, unid = identify_spectrum(wave[sl], ds["flux"].values[sl], lines, rv_obs_kms=rv_obs_kms,
                                        rv_err_kms=rv_err_kms or 0.0, line_fwhm_kms=line_fwhm_kms,
                                        uncertainty=unc, mask=mask, medium="vacuum",
                                        min_sigma=min_sigma)
        for df, known in ((ident, True), (unid, False)):
            if len(df):
                frames.append(pd.DataFrame({
                    "wavelength_A": df["observed_A"].to_numpy(dtype=np.float64),
                    "species": df["species"].astype(str).to_numpy() if known else np.full(len(df), ""),
                    "rest_A": df["rest_A"].to_numpy(dtype=np.float64) if known else np.full(len(df), np.nan),
                    "ew_mA": df["ew_mA"].to_numpy(dtype=np.float64),
                    "ew_err_mA": df["ew_err_mA"].to_numpy(dtype=np.float64),
                    "kind": df["kind"].astype(str).to_numpy() if known else np.full(len(df), "unidentified"),
                    "significance": df["significance"].to_numpy(dtype=np.float64),
                }))
    if frames:
        allf = pd.concat(frames, ignore_index=True).sort_values("wavelength_A", ignore_index=True)
    else:
        allf = pd.DataFrame({k: np.array([], dtype=np.float64) for k in
                             ("wavelength_A", "rest_A", "ew_mA", "ew_err_mA", "significance")})
        allf["species"] = np.array([], dtype=str)
        allf["kind"] = np.array([], dtype=str)
    out = xr.Dataset({k: ("feature", allf[k].to_numpy()) for k in
                      ("wavelength_A", "rest_A", "ew_mA", "ew_err_mA", "significance")})
    for k in ("species", "kind"):
        # variable-length strings: Zarr v3 has no specified fixed-width unicode type
        out[k] = ("feature", allf[k].astype(str).to_numpy().astype(object))
    out.attrs.update(rv_obs_kms=float(rv_obs_kms), medium="vacuum", frame="observed")
    return out
