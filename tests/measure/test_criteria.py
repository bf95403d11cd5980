"""Classification criteria (atlas.measure.criteria) and the demo stars' classes."""

from __future__ import annotations

import json
import math
import re
from pathlib import Path

import numpy as np
import pytest

from atlas.measure import criteria as cr
from atlas.measure.classify import class_number

DEMO = Path(__file__).resolve().parents[2] / "demo_spectra"


def test_equivalent_width_of_a_gaussian_line_is_depth_times_sigma_times_root_two_pi():
    # EW of a Gaussian absorption line = d sigma sqrt(2 pi) (the integral of a Gaussian; common practice)
    w = np.linspace(4400.0, 4600.0, 40_001)
    d, sig = 0.3, 0.8
    f = 1.0 - d * np.exp(-0.5 * ((w - 4500.0) / sig) ** 2)
    ew, err = cr._strength(w, f, np.full(w.size, 0.01), 4500.0, 6 * sig)
    assert ew == pytest.approx(d * sig * math.sqrt(2 * math.pi), rel=1e-4)
    assert err == pytest.approx(0.01 * math.sqrt(12 * sig * (w[1] - w[0])), rel=0.01)


def test_a_fraction_of_two_lines_is_their_equivalent_width_share():
    # a / (a + b) from two Gaussian lines of known widths (common practice), vacuum positions
    w = np.linspace(4400.0, 4600.0, 40_001)
    he1, mg2 = cr._vac(4471.48), cr._vac(4481.13)
    f = 1.0 - 0.4 * np.exp(-0.5 * ((w - he1) / 0.5) ** 2) - 0.2 * np.exp(-0.5 * ((w - mg2) / 0.5) ** 2)
    vals, errs = cr.measure(w, f, np.full(w.size, 1e-3), half_A=3.0)
    k = [c.name for c in cr.CRITERIA].index("He I 4471 / Mg II 4481")
    assert vals[k] == pytest.approx(0.4 / 0.6, abs=1e-3)
    assert 0 < errs[k] < 0.01


def test_criteria_that_disagree_give_uncertain_instead_of_a_class():
    # two invented calibration curves, one rising and one falling with subclass; values
    # that put one at the earliest and the other at the latest class cannot both hold
    n = len(cr.CRITERIA)
    table = np.full((cr.SEQUENCE.size, n), 0.5)
    x = (cr.SEQUENCE - cr.SEQUENCE[0]) / (cr.SEQUENCE[-1] - cr.SEQUENCE[0])
    table[:, 0], table[:, 1] = x, 1 - x
    vals = np.full(n, np.nan)
    errs = np.full(n, np.nan)
    vals[:2], errs[:2] = (0.0, 0.0), (0.01, 0.01)
    res = cr.combine(vals, errs, table, None)
    assert res.number is None and res.class_range == "uncertain"
    vals[:2] = (0.5, 0.5)  # both at the middle: agreement, a narrow range
    res = cr.combine(vals, errs, table, None)
    assert res.number == pytest.approx(35.0, abs=0.5) and res.class_range != "uncertain"
    assert [c["name"] for c in res.criteria] == [cr.CRITERIA[0].name, cr.CRITERIA[1].name]


def _readme_truth():
    """file -> class, from demo_spectra/README.md (the input of the invented stars)."""
    rows = {}
    for line in (DEMO / "README.md").read_text().splitlines():
        m = re.match(r"\| `([^`]+)` \| [^|]+ \| ([OBAFGKM]\d(?:\.\d)?) ", line)
        if m:
            rows[m.group(1)] = m.group(2)
    return rows


@pytest.fixture(scope="module")
def demo_atlas(tmp_path_factory):
    from atlas.build import build_atlas

    files = sorted(str(p) for p in DEMO.iterdir() if p.suffix in (".fits", ".csv"))
    out = tmp_path_factory.mktemp("demo") / "atlas"
    rep = build_atlas(files, str(out), progress=False)
    assert not rep.failed
    return json.loads((out / "atlas.json").read_text())


@pytest.mark.slow
def test_demo_stars_are_classified_within_one_subclass_of_their_readme_class(demo_atlas):
    # The README's classes are what the invented spectra were made from: the thing to recover.
    truth = _readme_truth()
    assert len(truth) == 8
    got = {r["source"]: r for r in demo_atlas["stars"]}
    off = {f: (got[f]["spectral_class"], c) for f, c in truth.items()
           if got[f]["spectral_class"] is None or abs(class_number(got[f]["spectral_class"]) - class_number(c)) > 1}
    assert not off, off
    for f in truth:
        rec = got[f]
        assert rec["class_range"] and rec["class_range"] != "uncertain"
        assert rec["class_criteria"] and {"name", "value", "says"} <= set(rec["class_criteria"][0])
        assert rec["colour_basis"] == ("calibrated" if f == "lintel_12.fits" else "instrument")
