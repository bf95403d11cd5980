"""Line profiles, saturation and broadening kernels of atlas.synth."""

from __future__ import annotations

import math

import numpy as np
import pytest
from scipy.integrate import quad

from atlas.synth import broaden, profiles
from atlas.synth.model import depth_from_ratio
from atlas.synth.strengths import PROFILE_VOIGT, LineSet


def one_line(center, strength, sigma, gamma):
    return LineSet(
        center_A=np.array([center]),
        strength_A=np.array([strength]),
        sigma_A=np.array([sigma]),
        gamma_A=np.array([gamma]),
        kind=np.array([PROFILE_VOIGT]),
        species=np.array(["Fe I"], dtype=object),
    )


def thin_line_spectrum(sigma, gamma, d_max=0.8, strength=1e-5):
    wave = broaden.log_grid(4990.0, 5010.0, 0.05)
    eta = profiles.add_lines(wave, np.zeros_like(wave), one_line(5000.0, strength, sigma, gamma), min_strength_A=0.0)
    return wave, depth_from_ratio(eta, d_max), d_max * strength


def test_gaussian_line_equivalent_width_is_depth_times_sigma_root_two_pi():
    # EW of a Gaussian absorption line = central depth * sigma * sqrt(2 pi)
    # (Gray 2005, ch. 13, the Gaussian integral; common practice), optically thin limit.
    sigma = 0.05
    wave, flux, _ = thin_line_spectrum(sigma, 0.0)
    depth = 1.0 - flux.min()
    ew = np.trapezoid(1.0 - flux, wave)
    assert ew == pytest.approx(depth * sigma * math.sqrt(2.0 * math.pi), rel=0.01)


@pytest.mark.parametrize("gamma", [0.01, 0.05])
def test_voigt_line_equivalent_width_is_its_area(gamma):
    # scipy.special.voigt_profile integrates to 1 (scipy docs), so in the thin limit
    # EW = d_max * S (Gray 2005, ch. 13: weak-line part of the curve of growth).
    wave, flux, expected = thin_line_spectrum(0.03, gamma)
    ew = np.trapezoid(1.0 - flux, wave)
    assert ew == pytest.approx(expected, rel=0.01)


def test_strong_lines_saturate_and_never_go_below_zero():
    # Milne-Eddington saturation (Mihalas 1978, ch. 10): residual flux -> 1 - d_max,
    # and EW keeps growing with strength (curve of growth, Gray 2005, ch. 13).
    wave = broaden.log_grid(4950.0, 5050.0, 0.3)
    ews = []
    for s in (1e-4, 1e-2, 1.0, 100.0):
        eta = profiles.add_lines(wave, np.zeros_like(wave), one_line(5000.0, s, 0.03, 0.02))
        flux = depth_from_ratio(eta, 0.88)
        assert flux.min() >= 1.0 - 0.88 - 1e-12
        ews.append(np.trapezoid(1.0 - flux, wave))
    assert all(b > a for a, b in zip(ews, ews[1:], strict=False))
    assert ews[-1] < 0.1 * 0.88 * 100.0  # far below the linear (thin) growth: saturated


@pytest.mark.parametrize("eps", [0.0, 0.6, 1.0])
def test_rotation_kernel_integrates_to_one(eps):
    # Gray (2005), eq. 18.14: the rotation kernel is normalised.
    total, _ = quad(lambda v: broaden.rotation_kernel(v, 25.0, eps), -25.0, 25.0, limit=200)
    assert total == pytest.approx(1.0, abs=1e-6)


def test_rotation_kernel_half_width_is_vsini():
    # Gray (2005), eq. 18.14: G(v) > 0 for |v| < v sin i and 0 beyond.
    v = np.array([-40.001, -39.99, 0.0, 39.99, 40.001])
    g = broaden.rotation_kernel(v, 40.0, 0.6)
    assert g[0] == 0.0 and g[-1] == 0.0
    assert (g[1:4] > 0).all()
    k = broaden.rotation_pixels(40.0, 1.0)
    assert k.sum() == pytest.approx(1.0)
    # discrete kernel spans +-v sin i (one pixel of slack for pixel averaging)
    nonzero = np.flatnonzero(k > 0)
    half = (nonzero[-1] - nonzero[0]) / 2.0
    assert 39.0 <= half <= 41.0


def test_unresolved_line_fwhm_is_lambda_over_R():
    # Instrumental profile: a Gaussian of FWHM = lambda / R (common practice).
    step = 0.2
    n = 2001
    spike = np.zeros(n)
    spike[n // 2] = 1.0
    for r in (20000.0, 70000.0):
        prof = broaden.convolve_same(spike, broaden.instrument_pixels(r, step))
        v = (np.arange(n) - n // 2) * step
        half = prof.max() / 2.0
        above = np.flatnonzero(prof >= half)
        i0, i1 = above[0], above[-1]
        left = np.interp(half, [prof[i0 - 1], prof[i0]], [v[i0 - 1], v[i0]])
        right = np.interp(half, [prof[i1 + 1], prof[i1]], [v[i1 + 1], v[i1]])
        fwhm_kms = right - left
        assert fwhm_kms == pytest.approx(broaden.C_KMS / r, rel=0.02)
