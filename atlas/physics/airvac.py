"""Air <-> vacuum wavelength conversion (Å).

Two refractive-index formulas:

* ``method="morton"`` (default): the IAU standard conversion as given by Morton
  (2000), eq. 8, from the Birch & Downs (1994) refractivity of standard dry air
  (15 °C, 101325 Pa, 450 ppm CO2).  The refractive index is a function of the
  vacuum wavenumber.
* ``method="ciddor"``: Ciddor (1996), for any temperature, pressure, humidity and
  CO2 content; the defaults are the same standard air (15 °C, 101325 Pa, 0 %
  relative humidity, 450 ppm CO2).

Vacuum -> air is a direct division by n(lambda_vac).  Air -> vacuum inverts it by
fixed-point iteration (lambda_vac = lambda_air * n(lambda_vac)), which converges by
a factor of about 1e-5 per step; a few steps give round trips far better than
1e-4 Å.  Below 2000 Å wavelengths are left as they are (vacuum), as is common
practice: air is opaque there and line lists quote vacuum wavelengths.

References
----------
Morton, D. C. (2000), ApJS 130, 403, eq. 8.
Birch, K. P. & Downs, M. J. (1994), Metrologia 31, 315.
Ciddor, P. E. (1996), Appl. Opt. 35, 1566.
Davis, R. S. (1992), Metrologia 29, 67 (BIPM compressibility, saturation vapour pressure).
"""

from __future__ import annotations

import numpy as np

from atlas.errors import InputError

#: Below this wavelength (Å) no conversion is made (common practice).
UV_LIMIT_A = 2000.0

METHODS = ("morton", "ciddor")


def refractivity_morton(wave_vac_A):
    """n - 1 of standard air at vacuum wavelength ``wave_vac_A`` (Å).

    References
    ----------
    Morton (2000), ApJS 130, 403, eq. 8 (Birch & Downs 1994 refractivity).
    """
    s2 = (1e4 / np.asarray(wave_vac_A, dtype=np.float64)) ** 2  # (1/um)^2
    return 8.34254e-5 + 2.406147e-2 / (130.0 - s2) + 1.5998e-4 / (38.9 - s2)


def _compressibility(p_pa, t_k, xw):
    # BIPM formula (Davis 1992), as used by Ciddor (1996), appendix.
    t = t_k - 273.15
    a0, a1, a2 = 1.58123e-6, -2.9331e-8, 1.1043e-10
    b0, b1 = 5.707e-6, -2.051e-8
    c0, c1 = 1.9898e-4, -2.376e-6
    d, e = 1.83e-11, -0.765e-8
    pt = p_pa / t_k
    return (
        1.0
        - pt * (a0 + a1 * t + a2 * t * t + (b0 + b1 * t) * xw + (c0 + c1 * t) * xw * xw)
        + pt * pt * (d + e * xw * xw)
    )


def refractivity_ciddor(
    wave_vac_A, *, temperature_c=15.0, pressure_pa=101325.0, humidity=0.0, co2_ppm=450.0
):
    """n - 1 of moist air at vacuum wavelength ``wave_vac_A`` (Å), Ciddor (1996).

    ``temperature_c`` in °C, ``pressure_pa`` in Pa, ``humidity`` relative (0..1),
    ``co2_ppm`` CO2 mole fraction in ppm.

    References
    ----------
    Ciddor (1996), Appl. Opt. 35, 1566, eqs. 1-5 and appendix A.
    """
    sigma2 = (1e4 / np.asarray(wave_vac_A, dtype=np.float64)) ** 2  # (1/um)^2
    # Standard dry air (15 °C, 101325 Pa, 450 ppm CO2), eq. 1, corrected for CO2, eq. 2.
    k0, k1, k2, k3 = 238.0185, 5792105.0, 57.362, 167917.0
    n_as = 1e-8 * (k1 / (k0 - sigma2) + k3 / (k2 - sigma2))
    n_axs = n_as * (1.0 + 0.534e-6 * (co2_ppm - 450.0))
    # Standard water vapour (20 °C, 1333 Pa), eq. 3.
    cf = 1.022
    w0, w1, w2, w3 = 295.235, 2.6422, -0.032380, 0.004028
    n_ws = 1e-8 * cf * (w0 + w1 * sigma2 + w2 * sigma2**2 + w3 * sigma2**3)

    r_gas = 8.314510
    m_a = 1e-3 * (28.9635 + 12.011e-6 * (co2_ppm - 400.0))
    m_w = 0.018015
    t_k = temperature_c + 273.15
    # Saturation vapour pressure over water and enhancement factor (Davis 1992).
    svp = np.exp(1.2378847e-5 * t_k**2 - 1.9121316e-2 * t_k + 33.93711047 - 6.3431645e3 / t_k)
    f = 1.00062 + 3.14e-8 * pressure_pa + 5.6e-7 * temperature_c**2
    xw = f * humidity * svp / pressure_pa

    rho_axs = 101325.0 * m_a / (_compressibility(101325.0, 288.15, 0.0) * r_gas * 288.15)
    rho_ws = 1333.0 * m_w / (_compressibility(1333.0, 293.15, 1.0) * r_gas * 293.15)
    z = _compressibility(pressure_pa, t_k, xw)
    rho_a = pressure_pa * m_a * (1.0 - xw) / (z * r_gas * t_k)
    rho_w = pressure_pa * m_w * xw / (z * r_gas * t_k)
    return (rho_a / rho_axs) * n_axs + (rho_w / rho_ws) * n_ws


def _refractivity(method, **air):
    if method == "morton":
        if air:
            raise InputError("method", "air conditions can only be given with method='ciddor'")
        return refractivity_morton
    if method == "ciddor":
        return lambda w: refractivity_ciddor(w, **air)
    raise InputError(
        "method", f"unknown air/vacuum method {method!r}; use one of {', '.join(METHODS)}"
    )


def vacuum_to_air_A(wave_A, method="morton", **air):
    """Vacuum wavelengths (Å) to air wavelengths (Å); below 2000 Å returned unchanged.

    ``air`` takes the keyword arguments of :func:`refractivity_ciddor` when
    ``method="ciddor"``.

    References
    ----------
    Morton (2000), ApJS 130, 403, eq. 8; Ciddor (1996), Appl. Opt. 35, 1566.
    """
    refr = _refractivity(method, **air)
    w = np.asarray(wave_A, dtype=np.float64)
    out = np.where(w >= UV_LIMIT_A, w / (1.0 + refr(np.maximum(w, UV_LIMIT_A))), w)
    return float(out) if out.ndim == 0 else out


def air_to_vacuum_A(wave_A, method="morton", iterations=4, **air):
    """Air wavelengths (Å) to vacuum wavelengths (Å); below 2000 Å returned unchanged.

    Inverts :func:`vacuum_to_air_A` by fixed-point iteration on
    lambda_vac = lambda_air * n(lambda_vac); four steps reach machine precision
    for the optical and near infrared.

    References
    ----------
    Morton (2000), ApJS 130, 403, eq. 8; Ciddor (1996), Appl. Opt. 35, 1566.
    """
    refr = _refractivity(method, **air)
    w = np.asarray(wave_A, dtype=np.float64)
    ok = w >= UV_LIMIT_A
    wa = np.maximum(w, UV_LIMIT_A)
    vac = wa * (1.0 + refr(wa))
    for _ in range(max(int(iterations), 1)):
        vac = wa * (1.0 + refr(vac))
    out = np.where(ok, vac, w)
    return float(out) if out.ndim == 0 else out
