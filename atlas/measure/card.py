"""The per-star measurement card: every number the catalog holds about a star, in one place.

:func:`star_measurements` is the single step the build calls for each star; new
measurements (radial velocity, temperature, class) are added here and nowhere else.
"""

from __future__ import annotations

import math

import numpy as np

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
)


def _num(x):
    try:
        v = float(x)
    except (TypeError, ValueError):
        return None
    return v if math.isfinite(v) else None


def star_measurements(ds, *, site=None, radec=None, time=None) -> tuple[dict, list[str]]:
    """Measurements of one star from its Spectrum in vacuum Å (1-D, sorted); returns (values, notes).

    ``ds`` carries ``wavelength`` (vacuum Å), ``flux``, ``mask`` and the file's attributes.
    ``site``/``radec``/``time`` override the file as in
    :func:`atlas.physics.barycentric.correction_for`.  ``values`` has exactly the keys
    :data:`MEASUREMENT_KEYS`, each a number, a string or None; ``notes`` are one-line
    remarks for the build's output (what could not be measured and why).

    - ``barycentric_kms``: Wright & Eastman (2014), PASP 126, 838, via astropy.
    - ``snr``: DER_SNR, Stoehr et al. (2008), ASP Conf. Ser. 394, 505.
    - ``resolving_power``: the file's value, else the highest R its sampling supports
      (two pixels per resolution element, common practice).
    - ``colour_srgb``: ``#rrggbb`` true colour (CIE 1931 2° observer, sRGB; colour-science).
    - ``rv_kms`` (barycentric), ``rv_err_kms``: line-mask cross-correlation,
      :func:`atlas.measure.rv.rv_of_spectrum` (Bouchy, Pepe & Queloz 2001 errors).
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
    values["barycentric_kms"] = _num(bary)
    if bary is None:
        notes.append(
            "no barycentric correction: the file gives no " + ", ".join(missing)
            + " (give --time/--site/--radec)"
        )

    values["snr"] = _num(der_snr(flux, mask))

    # radial velocity (atlas.measure.rv), class and temperature (atlas.measure.classify)
    from atlas.measure.classify import classify, colour_temperature, is_calibrated
    from atlas.measure.rv import rv_of_spectrum

    unc = np.asarray(ds["uncertainty"].values) if "uncertainty" in ds else None
    rv_obs, fwhm = 0.0, None
    try:
        rvr = rv_of_spectrum(ds, site=site, radec=radec, time=time)
    except (ValueError, RuntimeError, np.linalg.LinAlgError) as exc:
        notes.append(f"no radial velocity: {exc}")
    else:
        if rvr.rv_obs_kms is None:
            notes.append(f"no radial velocity: {rvr.note}")
        else:
            rv_obs, fwhm = rvr.rv_obs_kms, rvr.line_fwhm_kms
            # barycentric when the correction is known; else both left null (see notes)
            values["rv_kms"] = _num(rvr.rv_kms)
            if rvr.rv_kms is not None:
                values["rv_err_kms"] = _num(rvr.rv_err_kms)
            else:
                notes.append(f"radial velocity {rvr.rv_obs_kms:+.3f} km/s in the observer's frame only")
    try:
        cres = classify(wave, flux, unc, mask, rv_obs_kms=rv_obs, line_fwhm_kms=fwhm,
                        resolving_power=ds.attrs.get("resolving_power"), medium="vacuum")
        values["spectral_class"] = cres.spectral_class
        if cres.note:
            notes.append(cres.note)
        if is_calibrated(ds):
            values["teff_k"] = _num(colour_temperature(wave, flux, unc, mask)[0])
        elif cres.class_teff_k is not None:
            values["teff_k"] = _num(round(cres.class_teff_k, -1))
            notes.append("flux not calibrated: teff_k is the class's temperature")
    except (ValueError, RuntimeError, np.linalg.LinAlgError) as exc:
        notes.append(f"no class or temperature: {exc}")

    r = _num(ds.attrs.get("resolving_power"))
    if r is None:
        r = _num(implied_resolving_power(median_sampling_kms(wave)))
        if r is not None:
            notes.append(f"resolving power not in the file: {r:.0f} implied by the sampling")
    values["resolving_power"] = r

    good = np.isfinite(flux) & np.isfinite(wave)
    if mask is not None:
        good &= ~mask
    if np.count_nonzero(good) >= 2:
        w, f = _block_means(wave[good], flux[good], COLOUR_POINTS)
        values["colour_srgb"] = hex_of(srgb_of_spectrum(w, f))
    return values, notes


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
