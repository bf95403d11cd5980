"""The change of the line pattern with temperature (the spectral sequence)."""

from __future__ import annotations

import numpy as np
import pytest

from atlas.lines import load_lines
from atlas.synth import broaden, model
from atlas.synth.model import Star


@pytest.fixture(scope="module")
def lines():
    return load_lines()


def ew_of(lines, species, center_vac_A, half_A, teff_k):
    """Noise-free EW (Å) of the lines of ``species`` near ``center_vac_A``, no other lines."""
    sel = lines[(lines["species"] == species) & (abs(lines["vacuum_A"] - center_vac_A) < half_A)]
    assert len(sel) >= 1, (species, center_vac_A)
    wave = broaden.log_grid(center_vac_A - half_A, center_vac_A + half_A, 0.5)
    eta = model.opacity_ratio(wave, Star(teff_k), sel)
    flux = model.depth_from_ratio(eta, model.max_depth(wave, teff_k))
    return float(np.trapezoid(1.0 - flux, wave))


def test_balmer_lines_peak_in_a_stars(lines):
    # Common practice (e.g. Gray & Corbally 2009, Stellar Spectral Classification):
    # the Balmer lines are strongest near A0-A2, Teff about 9,000-10,000 K.
    teffs = np.array([5000, 6000, 7000, 8000, 9000, 10000, 11000, 13000, 16000, 20000, 30000, 40000.0])
    ews = np.array([ew_of(lines, "H I", 4341.7, 60.0, t) for t in teffs])  # H-gamma
    peak = teffs[np.argmax(ews)]
    assert 8000 <= peak <= 11000, dict(zip(teffs, ews.round(2), strict=True))
    assert ews.max() > 3 * ews[0] and ews.max() > 2 * ews[-1]


def test_he_ii_4686_only_in_o_stars(lines):
    # Common practice (MK classification): He II 4686 defines the O stars; absent in B and cooler.
    ew = {t: ew_of(lines, "He II", 4687.0, 4.0, t) for t in (9700, 15700, 22000, 33300, 41400)}
    assert ew[41400] > 0.2 and ew[33300] > 0.1, ew
    assert ew[22000] < 0.05 and ew[15700] < 0.01 and ew[9700] < 0.01, ew
    assert ew[41400] > ew[33300] > ew[22000]


def test_he_i_in_b_stars(lines):
    # Common practice (MK classification): He I lines are strongest in B stars, absent in A-K.
    ew = {t: ew_of(lines, "He I", 4472.7, 3.0, t) for t in (5770, 9700, 15700, 20600)}
    assert ew[20600] > 0.2 and ew[15700] > 0.1, ew
    assert ew[5770] < 0.01 and ew[9700] < 0.05, ew


def test_ca_ii_k_grows_toward_g_and_k(lines):
    # Common practice: Ca II H and K are weak in A stars and dominate G and K spectra.
    ew = {t: ew_of(lines, "Ca II", 3934.8, 20.0, t) for t in (9700, 7220, 5770, 4440)}
    assert ew[9700] < ew[7220] < ew[5770] < ew[4440], ew


def test_tio_bands_grow_toward_m(lines):
    # Common practice (MK classification of M stars): TiO band depth increases from K to late M.
    sel = lines[lines["species"] == "TiO"]
    head = float(sel.loc[(sel["vacuum_A"] - 7056).abs().idxmin(), "vacuum_A"])
    wave = broaden.log_grid(head - 40.0, head + 80.0, 1.0)

    def depth(t):
        f = model.depth_from_ratio(model.opacity_ratio(wave, Star(t), sel), model.max_depth(wave, t))
        inside = (wave > head + 2) & (wave < head + 40)
        return 1.0 - f[inside].mean()

    d = [depth(t) for t in (5270, 4440, 3850, 3430, 3060)]
    assert d[0] < 0.01 and d[-1] > 0.3, d
    assert all(b > a for a, b in zip(d, d[1:], strict=False)), d


def test_ionized_lines_strengthen_in_giants(lines):
    # Common practice (MK luminosity criteria, Gray & Corbally 2009; Gray 2005, ch. 13): at a
    # given Teff, lower gravity means lower electron pressure, so lines of ions (Sr II 4077,
    # Fe II) grow relative to the dwarf while neutral Fe I lines do not.
    dwarf = {"Sr II": ew_of(lines, "Sr II", 4078.9, 3.0, 5000), "Fe I": ew_of(lines, "Fe I", 5271.0, 2.0, 5000)}
    sr_giant = float(np.trapezoid(*_giant(lines, "Sr II", 4078.9, 3.0)))
    fe_giant = float(np.trapezoid(*_giant(lines, "Fe I", 5271.0, 2.0)))
    assert sr_giant > 1.2 * dwarf["Sr II"], (sr_giant, dwarf)
    assert fe_giant < dwarf["Fe I"], (fe_giant, dwarf)


def _giant(lines, species, center, half):
    sel = lines[(lines["species"] == species) & (abs(lines["vacuum_A"] - center) < half)]
    wave = broaden.log_grid(center - half, center + half, 0.5)
    eta = model.opacity_ratio(wave, Star(5000, logg=2.0), sel)
    return 1.0 - model.depth_from_ratio(eta, model.max_depth(wave, 5000)), wave
