"""True colour: CIE 1931 XYZ, chromaticity and sRGB."""

from __future__ import annotations

import colour
import numpy as np
import pytest
from hypothesis import given, settings
from hypothesis import strategies as st

from atlas.physics import colour as col
from atlas.physics import planck


def test_planckian_chromaticity_at_2856_k_is_cie_illuminant_a():
    # Reference: CIE 15:2004, Illuminant A (Planckian, 2856 K): x = 0.44757, y = 0.40745.
    x, y = col.chromaticity_xy_of_temperature(2856.0)
    assert abs(x - 0.44757) < 1e-3
    assert abs(y - 0.40745) < 1e-3


@pytest.mark.parametrize("t", [2000.0, 3500.0, 5772.0, 9000.0, 25000.0])
def test_planckian_chromaticity_matches_colour_science(t):
    # Reference: colour-science colour.sd_blackbody + colour.sd_to_XYZ (CIE 1931 2°).
    cmfs = colour.MSDS_CMFS["CIE 1931 2 Degree Standard Observer"]
    sd = colour.sd_blackbody(t, colour.SpectralShape(360, 830, 1))
    xyz = colour.sd_to_XYZ(sd, cmfs=cmfs, illuminant=colour.sd_ones(sd.shape), method="Integration")
    ref = colour.XYZ_to_xy(xyz)
    x, y = col.chromaticity_xy_of_temperature(t)
    assert abs(x - ref[0]) < 2e-4 and abs(y - ref[1]) < 2e-4


def test_cool_stars_are_orange_and_hot_stars_blue_white():
    # common practice: 3000 K is orange-red (R > G > B), 20000 K is bluish (B > R).
    r, g, b = col.srgb_of_temperature(3000.0)
    assert r > g > b
    r, g, b = col.srgb_of_temperature(20000.0)
    assert b > r
    # a 6500 K Planck curve is close to the sRGB white (D65 is near the Planckian locus,
    # CIE 15:2004): every channel above 0.9
    assert min(col.srgb_of_temperature(6500.0)) > 0.9


def test_brightness_is_normalised():
    # The flux scale does not change the colour, and the brightest channel is 1.
    wave = np.linspace(3600.0, 8300.0, 2000)
    flux = planck.b_lambda(wave, 4200.0)
    a = col.srgb_of_spectrum(wave, flux)
    b = col.srgb_of_spectrum(wave, 1e-17 * flux)
    assert a == pytest.approx(b, abs=1e-9)
    assert max(a) == pytest.approx(1.0)


def test_partial_range_is_extended_with_the_fitted_planck_curve():
    # Documented behaviour: a Planck spectrum seen only over 450-650 nm gets (almost) the
    # colour of the full curve, because the rest is filled from the fitted Planck curve.
    full_w = np.linspace(3600.0, 8300.0, 4701)
    part_w = np.linspace(4500.0, 6500.0, 2001)
    for t in (3500.0, 5772.0, 15000.0):
        full = col.srgb_of_spectrum(full_w, planck.b_lambda(full_w, t))
        part = col.srgb_of_spectrum(part_w, planck.b_lambda(part_w, t))
        assert np.max(np.abs(np.subtract(full, part))) < 0.01


def test_monochromatic_light_is_out_of_gamut_and_desaturated_into_range():
    # Reference: spectral colours lie outside the sRGB gamut (IEC 61966-2-1 primaries);
    # the documented handling mixes in white until no channel is negative.
    wave = np.linspace(3600.0, 8300.0, 4701)
    flux = np.exp(-0.5 * ((wave - 5200.0) / 5.0) ** 2)
    rgb = col.srgb_of_spectrum(wave, flux)
    assert all(0.0 <= c <= 1.0 for c in rgb)
    assert rgb[1] == pytest.approx(1.0) and rgb[1] > rgb[0] and rgb[1] > rgb[2]
    assert min(rgb) < 0.2  # desaturated only as far as needed: still strongly green


@settings(max_examples=40, deadline=None)
@given(
    lo=st.floats(1000.0, 20000.0),
    width=st.floats(0.0, 10000.0),
    n=st.integers(0, 50),
    draw=st.integers(0, 2**16),
)
def test_never_fails_on_any_range(lo, width, n, draw):
    rng = np.random.default_rng(draw)
    wave = np.sort(lo + width * rng.random(n))
    flux = rng.random(n) * 10 ** rng.uniform(-20, 20)
    rgb = col.srgb_of_spectrum(wave, flux)
    assert len(rgb) == 3 and all(0.0 <= c <= 1.0 for c in rgb)


def test_hex_of():
    assert col.hex_of((1.0, 0.5, 0.0)) == "#ff8000"
    assert col.hex_of((2.0, -1.0, 0.25)) == "#ff0040"
