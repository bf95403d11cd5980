"""Relativistic Doppler shifts of wavelengths, and velocities of wavelengths.

Velocities in km/s, positive = receding (redshift).  The scalar factor
``lambda_obs / lambda_rest`` is computed once with astropy's
``u.doppler_relativistic`` equivalency and then multiplied into the array, so these
functions stay fast on arrays of millions of samples.

References
----------
Einstein (1905), Ann. Phys. 17, 891 (longitudinal relativistic Doppler effect);
astropy.units.doppler_relativistic.
"""

from __future__ import annotations

import astropy.units as u
import numpy as np

_ONE_A = 1.0 * u.AA
_KMS = u.km / u.s


def factor(rv_kms) -> np.ndarray | float:
    """The wavelength ratio lambda_obs / lambda_rest for a radial velocity (km/s).

    ``rv_kms`` may be a float or an array; |rv| must be below c.

    References
    ----------
    astropy.units.doppler_relativistic: lambda = lambda0 * sqrt((1 + v/c) / (1 - v/c)).
    """
    v = u.Quantity(rv_kms, _KMS)
    out = v.to(u.AA, equivalencies=u.doppler_relativistic(_ONE_A)).value
    return float(out) if np.ndim(out) == 0 else out


def shift_A(wave_A, rv_kms):
    """Rest wavelengths (Å) seen from a source receding at ``rv_kms`` (km/s): observed Å."""
    return np.asarray(wave_A, dtype=np.float64) * factor(rv_kms)


def unshift_A(wave_A, rv_kms):
    """Observed wavelengths (Å) of a source receding at ``rv_kms`` (km/s) back to rest Å."""
    return np.asarray(wave_A, dtype=np.float64) / factor(rv_kms)


def velocity_kms(wave_A, ref_A):
    """Radial velocity (km/s) that moves the rest line ``ref_A`` (Å) to ``wave_A`` (Å).

    Both may be arrays (broadcast).  Relativistic, the inverse of :func:`shift_A`.
    """
    ratio = np.asarray(wave_A, dtype=np.float64) / np.asarray(ref_A, dtype=np.float64)
    v = (ratio * u.AA).to(_KMS, equivalencies=u.doppler_relativistic(_ONE_A)).value
    return float(v) if np.ndim(v) == 0 else v


def shift(wave, rv):
    """Quantity version of :func:`shift_A`: wavelengths (any length unit), velocity Quantity."""
    wave = u.Quantity(wave)
    return shift_A(wave.to_value(u.AA), u.Quantity(rv).to_value(_KMS)) * u.AA


def unshift(wave, rv):
    """Quantity version of :func:`unshift_A`."""
    wave = u.Quantity(wave)
    return unshift_A(wave.to_value(u.AA), u.Quantity(rv).to_value(_KMS)) * u.AA


def velocity(wave, ref):
    """Quantity version of :func:`velocity_kms` (returns km/s)."""
    return velocity_kms(u.Quantity(wave).to_value(u.AA), u.Quantity(ref).to_value(u.AA)) * _KMS
