"""Wavelength frames of the display and the line markers drawn in them."""

from __future__ import annotations

import astropy.units as u
import numpy as np
import pandas as pd
import pytest

from atlas.app import markers
from atlas.app.frames import Frame


def _doppler(v_kms):
    # relativistic Doppler factor, from astropy's doppler_relativistic equivalency
    return (u.Quantity(v_kms, u.km / u.s)).to_value(
        u.AA, equivalencies=u.doppler_relativistic(1 * u.AA))


def test_display_and_back_is_the_identity():
    # common practice: the inverse transform recovers the stored wavelengths
    w = np.linspace(3800.0, 9000.0, 57)
    for frame in ("observed", "barycentric", "rest"):
        for medium in ("air", "vacuum"):
            fr = Frame(frame, medium, rv_kms=-41.3, bary_kms=17.2)
            np.testing.assert_allclose(fr.from_display_A(fr.to_display_A(w)), w, rtol=0, atol=1e-7)


def test_barycentric_frame_multiplies_by_the_doppler_factor_of_the_correction():
    # Wright & Eastman (2014, PASP 126, 838): the barycentric correction adds to the
    # observed velocity; factor from astropy.units.doppler_relativistic
    fr = Frame("barycentric", "vacuum", rv_kms=10.0, bary_kms=-23.5)
    np.testing.assert_allclose(fr.to_display_A([6000.0]), 6000.0 * _doppler(-23.5), rtol=1e-12)


def test_rest_frame_removes_the_star_velocity_too():
    # Wright & Eastman (2014): rest = observed x D(v_bary) / D(rv_barycentric)
    fr = Frame("rest", "vacuum", rv_kms=31.0, bary_kms=-4.0)
    np.testing.assert_allclose(fr.to_display_A([5000.0]), 5000.0 * _doppler(-4.0) / _doppler(31.0),
                               rtol=1e-12)


def test_stellar_lines_move_with_the_star_and_telluric_lines_do_not():
    # common practice: telluric absorption is at rest in the observer's frame
    fr = Frame("observed", "vacuum", rv_kms=25.0, bary_kms=-5.0)
    x = fr.rest_vac_to_display_A(np.array([6000.0, 6000.0]), np.array([False, True]))
    np.testing.assert_allclose(x[0], 6000.0 * _doppler(25.0) / _doppler(-5.0), rtol=1e-12)
    assert x[1] == 6000.0


def test_without_a_barycentric_correction_lines_follow_the_observed_velocity():
    # A star whose file lacked time/site/coordinates: the catalog has rv_obs_kms only.
    # Its lines sit at rest x D(rv_obs) in the stored frame (relativistic factor from
    # astropy.units.doppler_relativistic), and its rest frame divides that out.
    rec = {"rv_kms": None, "barycentric_kms": None, "rv_obs_kms": -57.0}
    obs = Frame.of_record("observed", "vacuum", rec)
    np.testing.assert_allclose(obs.rest_vac_to_display_A([6000.0]), 6000.0 * _doppler(-57.0),
                               rtol=1e-12)
    rest = Frame.of_record("rest", "vacuum", rec)
    np.testing.assert_allclose(rest.to_display_A([6000.0 * _doppler(-57.0)]), 6000.0, rtol=1e-12)
    assert rest.has_star_velocity()
    assert not Frame.of_record("rest", "vacuum", {"rv_obs_kms": float("nan")}).has_star_velocity()


def test_with_both_velocities_the_barycentric_pair_wins_over_rv_obs():
    # Wright & Eastman (2014): observed = rest x D(rv) / D(v_bary); rv_obs is only a fallback
    rec = {"rv_kms": 12.0, "barycentric_kms": 8.0, "rv_obs_kms": 999.0}
    fr = Frame.of_record("observed", "vacuum", rec)
    np.testing.assert_allclose(fr.rest_vac_to_display_A([5000.0]),
                               5000.0 * _doppler(12.0) / _doppler(8.0), rtol=1e-12)


def test_in_the_rest_frame_in_air_a_line_sits_at_its_listed_air_wavelength(line_rows):
    # lines.csv air_A / vacuum_A columns (sources in the file's `source` column);
    # tolerance covers the air/vacuum formula differences between sources (0.02 Å)
    sel = line_rows[(~line_rows["telluric"]) & (line_rows["air_A"] > 3000)].head(40)
    fr = Frame("rest", "air", rv_kms=-60.0, bary_kms=12.0)
    x = fr.rest_vac_to_display_A(sel["vacuum_A"].to_numpy(), False)
    np.testing.assert_allclose(x, sel["air_A"].to_numpy(), atol=0.02)


def _toy_lines():
    return pd.DataFrame({
        "species": ["Fe I", "Fe I", "Na I", "O2", "Fe II"],
        "air_A": [5000.0, 5000.1, 5005.0, 5010.0, 5020.0],
        "vacuum_A": [5001.4, 5001.5, 5006.4, 5011.4, 5021.4],
        "strength": [3, 1, 2, 2, 4],
        "telluric": [False, False, False, True, False],
    })


def test_labels_keep_the_strongest_line_per_label_bin():
    placed = markers.place(_toy_lines(), Frame("rest", "air", 0.0, 0.0))
    m = markers.visible(placed, 4990.0, 5030.0, strength=4, width_px=400, label_px=40)
    assert len(m["x"]) == 5  # every line gets its marker
    labelled = [lab for lab in m["label"] if lab]
    # the two Fe I lines 0.1 Å apart share a bin: only the strength-1 line is labelled
    assert "Fe I 5000.10" in labelled and "Fe I 5000.00" not in labelled
    assert m["ew"] == ["not measured"] * 5


def test_filters_by_strength_and_species():
    placed = markers.place(_toy_lines(), Frame("rest", "air", 0.0, 0.0))
    assert len(markers.visible(placed, 4990, 5030, strength=2)["x"]) == 3
    assert markers.visible(placed, 4990, 5030, species=["Na I"])["species"] == ["Na I"]
    assert len(markers.visible(placed, 5003, 5008)["x"]) == 1  # only inside the window


def test_measured_equivalent_widths_show_in_the_hover():
    placed = markers.place(_toy_lines(), Frame("rest", "air", 0.0, 0.0))
    m = markers.visible(placed, 5004, 5008, ew={("Na I", 5006.4): 123.4})
    assert m["ew"] == ["123.4 mÅ"]


@pytest.mark.parametrize("text,expected", [
    ("Na I 5890", ("Na I", 5890.0, None)), ("6563", (None, 6563.0, None)),
    ("656.3 nm", (None, 656.3, "nm")), ("h i", ("H I", None, None)), ("TiO 7054.2", ("TiO", 7054.2, None)),
])
def test_go_to_requests_are_parsed(text, expected):
    assert markers.parse_target(text) == expected


@pytest.mark.parametrize("text", ["", "rm -rf", "5890 6000", "Na I I I 5890"])
def test_go_to_rejects_other_text(text):
    with pytest.raises(ValueError):
        markers.parse_target(text)


def test_find_line_picks_the_nearest_of_the_species(line_rows):
    row = markers.find_line(line_rows, "Na I", 5890.0, "air")
    # NIST ASD: Na I D2 at 5889.95 Å in air (from memory)
    assert abs(row["air_A"] - 5889.95) < 0.01
    assert markers.find_line(line_rows, "Na I", 4000.0, "air") is None
