"""Measure a mark: the viewer's numbers for a marked range are those of
``striae measure ATLAS STAR --ew LO:HI`` on the same range."""

from __future__ import annotations

import json
import os
import subprocess
import sys

import numpy as np
import pytest

from atlas.measure.marks import mark_words


@pytest.fixture
def marked(make_viewer):
    viewer = make_viewer(star="test-star-a", medium="vacuum")
    df = viewer.data.features("test-star-a")
    w = float(df.sort_values("ew_mA")["wavelength_A"].iloc[-1])  # the strongest found feature
    viewer.marks.add(w - 0.6, w + 0.6, "strong line")  # observed frame, vacuum: stored Å
    return viewer, w


def test_a_mark_is_measured_in_the_marks_list(marked):
    viewer, w = marked
    m = viewer.marks.measured
    assert m is not None and m["ew_mA"] > 50 and 0.2 < m["depth"] < 1.0
    assert abs(m["centroid_A"] - w) < 0.05
    assert 0.02 < m["fwhm_A"] < 1.2
    assert "EW" in viewer.marks.result.object and "FWHM" in viewer.marks.result.object


def test_the_marks_ew_agrees_with_striae_measure_to_one_percent(marked, built_atlas):
    viewer, w = marked
    a, b = w - 0.6, w + 0.6
    env = dict(os.environ, PYTHONPATH=os.getcwd())
    out = subprocess.run([sys.executable, "-m", "atlas", "measure", str(built_atlas), "test-star-a",
                          "--ew", f"{a!r}:{b!r}", "--json"], capture_output=True, text=True, env=env,
                         timeout=300)
    assert out.returncode == 0, out.stderr
    cli = json.loads(out.stdout)["ew"][0]
    assert viewer.marks.measured["ew_mA"] == pytest.approx(cli["ew_mA"], rel=0.01)
    assert viewer.marks.measured["depth"] == pytest.approx(cli["depth"], rel=0.01)


def test_velocity_against_the_reference_line_is_relativistic():
    # v = c (r^2 - 1) / (r^2 + 1), r = centroid / rest: relativistic Doppler (common practice)
    from atlas.physics.doppler import velocity_kms

    c = 299792.458  # km/s, exact (SI definition)
    r = 5000.5 / 5000.0
    assert velocity_kms(5000.5, 5000.0) == pytest.approx(c * (r * r - 1) / (r * r + 1), rel=1e-9)


def test_mark_words_in_nm_say_nm():
    m = {"ew_mA": 100.0, "ew_err_mA": 1.5, "depth": 0.5, "centroid_A": 5000.0, "fwhm_A": 0.4, "v_kms": 2.0}
    words = mark_words(m, "nm")
    assert "500.0000 nm" in words and "Å " not in words.replace("mÅ", "")
    assert np.isclose(float(words.split("FWHM ")[1].split()[0]), 0.04)
