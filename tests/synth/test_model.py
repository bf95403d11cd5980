"""Doppler shifts, telluric lines and the output medium of synthesize()."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pytest

from atlas.physics.airvac import vacuum_to_air_A
from atlas.physics.doppler import factor
from atlas.synth import broaden, model
from atlas.synth.model import Star
from atlas.synth.strengths import C_KMS


def one_line_list(vac_A=5000.0):
    # An invented Fe I line for the test (not a check value from a line list).
    return pd.DataFrame({
        "species": ["Fe I"], "air_A": [vac_A], "vacuum_A": [vac_A], "lower_eV": [1.0],
        "loggf": [-2.0], "strength": [3], "kind": ["atomic"], "telluric": [False], "source": ["test"],
    })


def line_centre(wave, flux):
    """Centroid of the absorption (1 - flux) above half its peak depth."""
    d = 1.0 - flux
    core = d > 0.5 * d.max()
    return float(np.sum(wave[core] * d[core]) / np.sum(d[core]))


@pytest.mark.parametrize("medium", ["vacuum", "air"])
def test_line_lands_at_rv_plus_barycentric_shift(medium):
    # Wright & Eastman (2014, PASP 126, 838): v_true = v_obs + v_bary + v_obs v_bary / c;
    # relativistic Doppler factor (astropy doppler_relativistic); air by Morton (2000).
    rv, vb = 50.0, -20.0
    v_obs = (rv - vb) / (1.0 + vb / C_KMS)
    expected_vac = 5000.0 * factor(v_obs)
    expected = vacuum_to_air_A(expected_vac) if medium == "air" else expected_vac
    wave = broaden.log_grid(expected - 3.0, expected + 3.0, 0.2)
    syn = model.synthesize(wave, Star(5000.0, rv_kms=rv), resolving_power=100000, medium=medium,
                           barycentric_kms=vb, lines=one_line_list())
    got = line_centre(wave, syn.normalised)
    assert (got - expected) / expected * C_KMS == pytest.approx(0.0, abs=0.05)  # km/s


def test_telluric_lines_do_not_move_with_the_star():
    # Telluric absorption arises in the observer's frame (common practice).
    from atlas.lines import load_lines

    lines = load_lines()
    lines = lines[lines["kind"] == "telluric"]
    wave = broaden.log_grid(7590.0, 7630.0, 1.0)
    a = model.synthesize(wave, Star(20000.0, rv_kms=0.0), resolving_power=60000, lines=lines, airmass=1.5)
    b = model.synthesize(wave, Star(20000.0, rv_kms=150.0), resolving_power=60000, lines=lines, airmass=1.5)
    none = model.synthesize(wave, Star(20000.0), resolving_power=60000, lines=lines, airmass=None)
    assert a.normalised.min() < 0.7  # the O2 A band is there
    assert np.allclose(none.normalised, 1.0)
    assert np.allclose(a.normalised, b.normalised, atol=1e-9)


def test_flux_is_continuum_times_normalised_and_positive():
    from atlas.physics.planck import b_lambda

    wave = broaden.log_grid(3800.0, 9000.0, 2.0)
    syn = model.synthesize(wave, Star(3430.0, vsini_kms=2.0), resolving_power=70000, airmass=1.3)
    assert syn.normalised.min() > 0.0 and syn.normalised.max() <= 1.0 + 1e-9
    # Planck continuum (astropy BlackBody underneath atlas.physics.planck)
    assert syn.continuum == pytest.approx(b_lambda(wave, 3430.0), rel=1e-6)
