"""Synthetic stellar spectra: continuum, lines, broadening, Doppler shift, telluric lines.

The steps, in order:

1. A rest-frame vacuum grid uniform in ln(lambda) a little wider than the request.
2. The line-to-continuum opacity ratio eta(lambda), summed over the atomic lines
   (``atlas.synth.strengths``; by default the dense list, ``default_lines``) whose
   unbroadened central depth exceeds ``atlas.synth.depths.SYNTH_DEPTH_FLOOR`` (0.1 %),
   and the molecular bands (``atlas.synth.molecules``).
3. Depth from eta by the curve of growth of ``atlas.synth.depths`` (Milne-Eddington
   saturation, r = 1 - d_max eta / (1 + eta), never below 1 - d_max).
4. Rotational broadening (Gray's kernel) in the star's frame.
5. Doppler shift by the star's radial velocity and the barycentric correction:
   the velocity seen from the observatory v_obs solves
   v_true = v_obs + v_bary + v_obs v_bary / c (Wright & Eastman 2014), applied with the
   relativistic Doppler factor of ``atlas.physics.doppler``.
6. Telluric transmission in the observer's frame (optional).
7. Instrumental Gaussian (FWHM = lambda / R), then interpolation onto the requested
   wavelengths (vacuum or air, 1-D or 2-D for echelle orders).

The continuum is the Planck function B_lambda(Teff) (``atlas.physics.planck``).

References
----------
Gray, D. F., *The Observation and Analysis of Stellar Photospheres*, 3rd ed. (2005).
Mihalas, D. (1978), *Stellar Atmospheres*, 2nd ed., ch. 10 (Milne-Eddington lines).
Wright, J. T. & Eastman, J. D. (2014), PASP 126, 838.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
import pandas as pd

from atlas.synth import broaden, depths, molecules, profiles, strengths, telluric
from atlas.synth.continuum import planck_b_lambda
from atlas.synth.depths import D_MAX, DEPTH_GAIN, depth_from_ratio, max_depth  # noqa: F401
from atlas.synth.photosphere import layer
from atlas.synth.strengths import C_KMS


@dataclass(frozen=True)
class Star:
    """A star to synthesize: Teff (K), log g (cgs), v sin i and RV (km/s), microturbulence (km/s)."""

    teff_k: float
    logg: float = 4.5
    vsini_kms: float = 0.0
    rv_kms: float = 0.0
    micro_kms: float = 1.5
    limb_darkening: float = 0.6


@dataclass(frozen=True)
class Synthetic:
    """A noise-free synthetic spectrum on the requested wavelengths.

    ``normalised``: flux / continuum (telluric lines included when asked);
    ``continuum``: B_lambda(Teff) in erg s^-1 cm^-2 Å^-1 sr^-1 at each wavelength.
    """

    wave_A: np.ndarray
    normalised: np.ndarray
    continuum: np.ndarray

    @property
    def flux(self) -> np.ndarray:
        return self.normalised * self.continuum


def default_lines() -> pd.DataFrame:
    """The shipped dense line list (``atlas.lines.dense.load_merged_lines``: Gaia-ESO
    atoms plus the curated hydrogen, hot-star, band-head and telluric rows)."""
    from atlas.lines.dense import load_merged_lines

    return load_merged_lines()


def opacity_ratio(wave_A: np.ndarray, star: Star, lines: pd.DataFrame) -> np.ndarray:
    """Line-to-continuum opacity ratio eta on the rest-frame vacuum grid ``wave_A`` (Å, sorted)."""
    lay = layer(star.teff_k, star.logg)
    eta = np.zeros_like(wave_A, dtype=np.float64)
    lo, hi = wave_A[0] - 400.0, wave_A[-1] + 400.0
    near = lines[(lines["vacuum_A"] > lo) & (lines["vacuum_A"] < hi)]
    atomic = strengths.atomic_lines(near, lay, micro_kms=star.micro_kms)
    profiles.add_lines(wave_A, eta, depths.strong_enough(atomic, star.teff_k))
    molecules.add_bands(wave_A, eta, near, lay, micro_kms=star.micro_kms)
    return eta


def observed_velocity_kms(rv_kms: float, barycentric_kms: float) -> float:
    """Velocity seen from the observatory: solves v_true = v_obs + v_b + v_obs v_b / c (Wright & Eastman 2014)."""
    return (rv_kms - barycentric_kms) / (1.0 + barycentric_kms / C_KMS)


def internal_step_kms(resolving_power: float) -> float:
    """Velocity step (km/s) of the internal grid: a sixth of c / R, at most 0.75 km/s."""
    return min(C_KMS / resolving_power / 6.0, 0.75)


def synthesize(
    wave_A,
    star: Star,
    *,
    resolving_power: float,
    medium: str = "vacuum",
    barycentric_kms: float = 0.0,
    lines: pd.DataFrame | None = None,
    airmass: float | None = None,
    pwv_mm: float = 10.0,
) -> Synthetic:
    """Noise-free spectrum of ``star`` at the observed wavelengths ``wave_A`` (Å, in ``medium``).

    ``wave_A`` is 1-D or 2-D (echelle orders), each row sorted.  ``airmass`` None means
    no telluric lines.  See the module doc for the steps.
    """
    from atlas.physics import doppler
    from atlas.physics.airvac import air_to_vacuum_A

    if lines is None:
        lines = default_lines()
    w_out = np.asarray(wave_A, dtype=np.float64)
    w_vac = air_to_vacuum_A(w_out) if medium == "air" else w_out
    fac = doppler.factor(observed_velocity_kms(star.rv_kms, barycentric_kms))
    step = internal_step_kms(resolving_power)
    margin = 1.0 + (6.0 * star.vsini_kms + 6.0 * C_KMS / resolving_power + 50.0) / C_KMS
    rest = broaden.log_grid(float(np.min(w_vac)) / fac / margin, float(np.max(w_vac)) / fac * margin, step)
    step = broaden.step_kms_of(rest)

    norm = depth_from_ratio(opacity_ratio(rest, star, lines), max_depth(rest, star.teff_k))
    norm = broaden.convolve_same(norm, broaden.rotation_pixels(star.vsini_kms, step, star.limb_darkening))
    obs = rest * fac
    if airmass is not None:
        norm = norm * telluric.transmission(obs, lines, airmass=airmass, pwv_mm=pwv_mm)
    norm = broaden.convolve_same(norm, broaden.instrument_pixels(resolving_power, step))
    out = np.interp(w_vac.ravel(), obs, norm).reshape(w_vac.shape)
    cont = planck_b_lambda(w_vac / fac, star.teff_k)
    return Synthetic(wave_A=w_out, normalised=out, continuum=cont)
