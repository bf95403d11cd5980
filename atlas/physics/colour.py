"""True colour of a spectrum or of a Planck curve, as sRGB (colour-science).

The spectrum is integrated against the CIE 1931 2° colour-matching functions
(360-830 nm at 1 nm) as an emitted light (equal-energy weighting), giving XYZ, then
converted to linear sRGB (IEC 61966-2-1, D65 white, no chromatic adaptation, so a
6500 K-like light comes out nearly white and cooler stars orange).

Brightness is normalised: only the colour is kept, at the brightest level that fits.
Out-of-gamut colours (a negative linear sRGB component) are desaturated toward the
white point of the same luminance, just enough to bring the lowest component to
zero; the result is then scaled so that its largest component is 1, and encoded
with the sRGB transfer function.

Spectra that cover only part of 360-830 nm: the covered part is used as it is, and
the rest of the range is filled with a Planck curve of the spectrum's fitted colour
temperature, scaled to the spectrum (so the answer never fails on a partial range).
If that fit is not possible (too few samples), the ends are extended flat at the
mean edge flux.  Spectra entirely outside 360-830 nm take the colour of their
fitted Planck curve (or white when even that fails).

References
----------
CIE 15:2004, Colorimetry (CIE 1931 2° standard observer).
IEC 61966-2-1:1999, sRGB.
colour-science (Mansencal et al.), colour.sd_to_XYZ, colour.XYZ_to_RGB.
"""

from __future__ import annotations

import colour as _colour
import numpy as np

from atlas.errors import InputError
from atlas.physics import planck

_SHAPE = _colour.SpectralShape(360, 830, 1)
_CMFS = _colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"].copy().align(_SHAPE)
_GRID_NM = np.asarray(_CMFS.wavelengths, dtype=np.float64)
_CMFS_VALUES = np.asarray(_CMFS.values, dtype=np.float64)  # (471, 3)
_SRGB = _colour.RGB_COLOURSPACES["sRGB"]


def _xyz_of_grid(values) -> np.ndarray:
    # Equal-energy (emissive) integration on the 1 nm grid; only ratios matter here.
    return np.asarray(values, dtype=np.float64) @ _CMFS_VALUES


def xyz_of_spectrum(wave_A, flux) -> np.ndarray:
    """CIE 1931 2° XYZ (arbitrary scale) of an emitted spectrum (``wave_A`` in Å, per-λ flux).

    Fills the parts of 360-830 nm the spectrum does not cover as described in the
    module docstring.

    References
    ----------
    CIE 15:2004; colour-science CMFS tables.
    """
    grid = _fill_grid(wave_A, flux)
    if grid is None:
        return np.full(3, np.nan)
    return _xyz_of_grid(grid)


def _planck_grid(teff_k) -> np.ndarray:
    return planck.b_lambda_fast(_GRID_NM * 10.0, teff_k)


def _fill_grid(wave_A, flux) -> np.ndarray | None:
    w = np.asarray(wave_A, dtype=np.float64).ravel()
    f = np.asarray(flux, dtype=np.float64).ravel()
    ok = np.isfinite(w) & np.isfinite(f)
    w, f = w[ok], f[ok]
    if w.size == 0:
        return None
    order = np.argsort(w, kind="stable")
    w, f = w[order], f[order]
    wnm = w / 10.0
    inside = (_GRID_NM >= wnm[0]) & (_GRID_NM <= wnm[-1])
    grid = np.full_like(_GRID_NM, np.nan)
    if inside.any():
        grid[inside] = np.interp(_GRID_NM[inside], wnm, f)
    if inside.all():
        return np.clip(grid, 0.0, None)
    try:
        t, _, scale = planck.fit_colour_temperature(w, f)
        fill = scale * _planck_grid(t)
        fill_ok = np.all(np.isfinite(fill))
    except InputError:
        fill_ok = False
    if not fill_ok:
        if not inside.any():
            return None
        left = np.nanmean(f[: max(1, f.size // 50)])
        right = np.nanmean(f[-max(1, f.size // 50) :])
        fill = np.where(_GRID_NM < wnm[0], left, right)
    grid[~inside] = fill[~inside]
    return np.clip(grid, 0.0, None)


def srgb_of_xyz(xyz) -> tuple[float, float, float]:
    """sRGB (0..1, encoded) of an XYZ colour, brightness normalised, gamut handled.

    References
    ----------
    IEC 61966-2-1:1999 (sRGB); colour-science colour.XYZ_to_RGB and colour.cctf_encoding.
    """
    xyz = np.asarray(xyz, dtype=np.float64)
    if not np.all(np.isfinite(xyz)) or xyz[1] <= 0:
        return (1.0, 1.0, 1.0)
    xyz = xyz / xyz[1]  # luminance 1
    rgb = np.asarray(
        _colour.XYZ_to_RGB(xyz, _SRGB, illuminant=None, chromatic_adaptation_transform=None),
        dtype=np.float64,
    )
    # White of the same luminance in linear sRGB is (1, 1, 1).  Mix toward it just
    # enough that no component is negative.
    lo = rgb.min()
    if lo < 0:
        k = -lo / (1.0 - lo)  # rgb*(1-k) + k >= 0 for every component
        rgb = rgb * (1.0 - k) + k
    hi = rgb.max()
    rgb = rgb / hi if hi > 0 else np.ones(3)
    enc = np.clip(np.asarray(_colour.cctf_encoding(rgb, function="sRGB")), 0.0, 1.0)
    return (float(enc[0]), float(enc[1]), float(enc[2]))


def srgb_of_spectrum(wave_A, flux) -> tuple[float, float, float]:
    """True colour (sRGB floats 0..1) of an emitted spectrum: ``wave_A`` in Å, flux per unit λ.

    Never fails on a partial or empty range (see the module docstring).

    References
    ----------
    CIE 15:2004; IEC 61966-2-1:1999; colour-science.
    """
    return srgb_of_xyz(xyz_of_spectrum(wave_A, flux))


def srgb_of_temperature(teff_k) -> tuple[float, float, float]:
    """True colour (sRGB floats 0..1) of a Planck curve at ``teff_k`` (K).

    References
    ----------
    Planck (1901); CIE 15:2004; IEC 61966-2-1:1999.
    """
    return srgb_of_xyz(_xyz_of_grid(_planck_grid(teff_k)))


def chromaticity_xy_of_temperature(teff_k) -> tuple[float, float]:
    """CIE 1931 chromaticity (x, y) of a Planck curve at ``teff_k`` (K).

    References
    ----------
    CIE 15:2004 (Planckian locus); colour-science colour.XYZ_to_xy.
    """
    xy = _colour.XYZ_to_xy(_xyz_of_grid(_planck_grid(teff_k)))
    return float(xy[0]), float(xy[1])


def hex_of(rgb) -> str:
    """``#rrggbb`` of sRGB floats 0..1 (clipped)."""
    vals = np.clip(np.asarray(rgb, dtype=np.float64), 0.0, 1.0)
    return "#" + "".join(f"{int(round(v * 255)):02x}" for v in vals)
