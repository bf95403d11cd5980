"""The export's view validation and its frame arithmetic (no atlas needed)."""

from __future__ import annotations

import airvacuumvald
import astropy.units as u
import numpy as np
import pytest
from astropy.constants import c

from atlas.errors import InputError
from atlas.export import FrameMap, frame_for, make_view

C_KMS = c.to_value(u.km / u.s)
WAVES = np.array([4000.0, 5500.0, 6564.6, 8500.0])


def test_view_from_url_names_and_keywords():
    state = {"star": "star-a", "lo": "6540", "hi": 6600, "frame": "bary", "unit": "nm",
             "flux": "normalised", "lines": ["Fe I", "H I"], "marks": [[6550, 6560, "x"]],
             "per_page": "4", "compare": "star-b", "ref": "Na I 5889.95"}
    v = make_view(state, medium="vacuum")
    assert (v.star, v.lo, v.hi, v.frame, v.medium, v.unit, v.flux) == (
        "star-a", 6540.0, 6600.0, "barycentric", "vacuum", "nm", "normalized")
    assert v.lines == ("Fe I", "H I") and v.marks == ((6550.0, 6560.0, "x"),)
    assert v.per_page == 4
    assert make_view(state, per_page=2).per_page == 2  # keywords win over the dict


@pytest.mark.parametrize(
    ("kw", "where"),
    [
        ({"star": "../x"}, "star"),
        ({"star": "Star A"}, "star"),
        ({"star": ""}, "star"),
        ({"star": "a", "lo": 6600, "hi": 6500}, "lo/hi"),
        ({"star": "a", "lo": 6600, "hi": 6600}, "lo/hi"),
        ({"star": "a", "lo": "nan", "hi": 6600}, "lo"),
        ({"star": "a", "lo": 6500, "hi": float("inf")}, "hi"),
        ({"star": "a", "lo": 6500}, "lo/hi"),
        ({"star": "a", "lo": -5, "hi": 10}, "lo/hi"),
        ({"star": "a", "per_page": 0}, "per_page"),
        ({"star": "a", "per_page": "two"}, "per_page"),
        ({"star": "a", "per_page": 2.5}, "per_page"),
        ({"star": "a", "frame": "galactic"}, "frame"),
        ({"star": "a", "medium": "water"}, "medium"),
        ({"star": "a", "unit": "um"}, "unit"),
        ({"star": "a", "flux": "log"}, "flux"),
        ({"star": "a", "lines": ["Fe I", "<b>"]}, "lines"),
        ({"star": "a", "strength": 5}, "strength"),
        ({"star": "a", "marks": [[6600, 6500, "reversed"]]}, "marks"),
        ({"star": "a", "marks": [[6500, "x", "bad"]]}, "marks"),
        ({"star": "a", "marks": [[6500, 6600, "n" * 81]]}, "marks"),
        ({"star": "a", "marks": "6500:6600"}, "marks"),
        ({"star": "a", "paper": "a3"}, "paper"),
    ],
)
def test_bad_view_values_name_the_parameter(kw, where):
    with pytest.raises(InputError) as exc:
        make_view(**kw)
    assert exc.value.where == where
    assert "\n" not in exc.value.message


def test_note_control_characters_become_spaces():
    v = make_view(star="a", marks=[[6500.0, 6501.0, "two\nlines\tand\x00nul"]])
    assert v.marks[0][2] == "two lines and nul"


def _fm(frame="observed", medium="vacuum", unit="A", rv=None, bary=None):
    return FrameMap(frame, medium, rv, bary, unit)


def _shift(wave_A, v_kms):
    """Relativistic Doppler shift computed independently with astropy's equivalency."""
    return np.array([(v_kms * u.km / u.s).to_value(u.AA, equivalencies=u.doppler_relativistic(w * u.AA))
                     for w in wave_A])


def test_barycentric_frame_shifts_by_the_correction():
    # Doppler factor per astropy.units.doppler_relativistic (Einstein 1905).
    got = _fm("barycentric", bary=-8.45).to_display_A(WAVES)
    np.testing.assert_allclose(got, _shift(WAVES, -8.45), rtol=1e-12)


def test_rest_frame_removes_the_radial_velocity_after_the_correction():
    got = _fm("rest", rv=35.0, bary=12.0).to_display_A(WAVES)
    # rest = observed * D(v_bary) / D(rv): the composition of Doppler factors, consistent with
    # v_true = v_obs + v_bary + v_obs v_bary / c (Wright & Eastman 2014, PASP 126, 838).
    expect = _shift(WAVES, 12.0) * WAVES / _shift(WAVES, 35.0)
    np.testing.assert_allclose(got, expect, rtol=1e-12)


def test_air_medium_matches_reference_library():
    # Reference: PyPI airvacuumvald.vacuum_to_air (Morton 2000, ApJS 130, 403).
    got = _fm(medium="air").to_display_A(WAVES)
    np.testing.assert_allclose(got, airvacuumvald.vacuum_to_air(WAVES), atol=1e-3, rtol=0)


def test_nm_is_a_tenth_of_angstrom():
    # 1 nm = 10 Å (SI; common practice)
    np.testing.assert_allclose(_fm(unit="nm").to_display(WAVES), WAVES / 10.0, rtol=1e-15)


@pytest.mark.parametrize("frame", ["observed", "barycentric", "rest"])
@pytest.mark.parametrize("medium", ["air", "vacuum"])
def test_display_and_back_is_the_identity(frame, medium):
    fm = _fm(frame, medium, rv=-42.0, bary=25.0)
    np.testing.assert_allclose(fm.from_display_A(fm.to_display_A(WAVES)), WAVES, rtol=1e-11)


def test_stellar_line_sits_at_its_rest_wavelength_in_the_rest_frame():
    fm = _fm("rest", "vacuum", rv=-42.0, bary=25.0)
    shown = fm.to_display_A(fm.line_obs_A(WAVES, False))
    np.testing.assert_allclose(shown, WAVES, rtol=1e-13)  # definition of the rest frame (common practice)


def test_telluric_line_sits_at_its_wavelength_in_the_observed_frame():
    fm = _fm("observed", "vacuum", rv=-42.0, bary=25.0)
    np.testing.assert_allclose(fm.to_display_A(fm.line_obs_A(WAVES, True)), WAVES, rtol=0)


def test_observed_stellar_line_velocity_composes_as_wright_eastman():
    rv, bary = 35.0, -20.0
    fm = _fm("observed", "vacuum", rv=rv, bary=bary)
    obs = fm.line_obs_A(WAVES, False)
    v_obs = C_KMS * (obs / WAVES - 1.0)
    z_rv = _shift(WAVES, rv) / WAVES - 1.0
    # (1 + z_true) = (1 + z_obs)(1 + z_bary), i.e. v_true = v_obs + v_bary + v_obs v_bary / c
    # (Wright & Eastman 2014, PASP 126, 838, eq. 11); the barycentric z here is taken as
    # v_bary / c, which differs from the relativistic factor by (v/c)^2 / 2: <1e-3 km/s.
    v_true = v_obs + bary + v_obs * bary / C_KMS
    np.testing.assert_allclose(v_true, C_KMS * z_rv, atol=1e-3)


def test_frames_need_their_measurements():
    view = make_view(star="a", frame="barycentric")
    with pytest.raises(InputError, match="barycentric correction") as exc:
        frame_for(view, {"barycentric_kms": None, "rv_kms": 3.0})
    assert exc.value.where == "frame"
    with pytest.raises(InputError, match="radial velocity"):
        frame_for(make_view(star="a", frame="rest"), {"barycentric_kms": 1.0, "rv_kms": None})
    # Without a correction, rest takes the RV as measured by the observer (as the viewer does):
    # rest = observed / D(rv), D from astropy's doppler_relativistic.
    fm = frame_for(make_view(star="a", frame="rest", medium="vacuum"),
                   {"barycentric_kms": None, "rv_kms": 3.0})
    np.testing.assert_allclose(fm.to_display_A(WAVES), WAVES * WAVES / _shift(WAVES, 3.0),
                               rtol=1e-12)
    with pytest.raises(InputError, match="radial velocity"):  # NaN counts as not measured
        frame_for(make_view(star="a", frame="rest"), {"barycentric_kms": 1.0, "rv_kms": float("nan")})
    fm = frame_for(make_view(star="a", frame="rest"), {"barycentric_kms": 1.0, "rv_kms": 2.0})
    assert (fm.rv_kms, fm.bary_kms) == (2.0, 1.0)


def test_overlapping_strips_share_their_overlap_at_its_middle():
    from atlas.export import _own_intervals

    lo, hi = _own_intervals(np.array([10.0, 19.0, 30.0]), np.array([20.0, 29.0, 40.0]))
    np.testing.assert_allclose(lo, [10.0, 19.5, 30.0])  # 19..20 split at 19.5; 29/30 a gap
    np.testing.assert_allclose(hi, [19.5, 29.0, 40.0])
