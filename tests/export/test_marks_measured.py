"""Exports carry each mark's measurements (EW ± error, depth, centroid, FWHM)."""

from __future__ import annotations

import math
import re

import pytest

import atlas.export as ex
from tests.export.conftest import DIPS_VAC_A

ALPHA = "test-star-alpha"


def test_the_html_export_states_a_marks_equivalent_width(small_atlas, tmp_path):
    w0 = DIPS_VAC_A[1]
    out = tmp_path / "marked.html"
    ex.export_html(small_atlas, ALPHA, out, lo=w0 - 15, hi=w0 + 15, medium="vacuum",
                   marks=[[w0 - 1.2, w0 + 1.2, "the dip"]])
    text = out.read_text()
    for esc, ch in (("\\u2013", "–"), ("\\u00c5", "Å"), ("\\u00b1", "±"), ("\\u00b7", "·")):
        text = text.replace(esc, ch)  # the page's data are JSON inside the HTML
    got = re.search(r"mark 1 \(the dip\), [0-9.]+–[0-9.]+ Å: EW ([0-9.]+) ± ([0-9.]+) mÅ", text)
    assert got, "no measured mark in the page"
    # the injected dip is 1 - 0.5 exp(-x^2 / 2 sigma^2), sigma 0.3 Å: EW = 0.5 sigma sqrt(2 pi)
    # (Gaussian integral, common practice); +-4 sigma holds 99.99 % of it
    expect_mA = 0.5 * 0.3 * math.sqrt(2 * math.pi) * 1000.0
    assert float(got.group(1)) == pytest.approx(expect_mA, rel=0.03)
    assert "FWHM" in text and "depth 0.5" in text


def test_the_pdf_export_measures_marks_too(small_atlas, tmp_path):
    w0 = DIPS_VAC_A[1]
    out = tmp_path / "marked.pdf"
    res = ex.export_pdf(small_atlas, ALPHA, out, lo=w0 - 15, hi=w0 + 15, medium="vacuum",
                        marks=[[w0 - 1.2, w0 + 1.2, ""]])
    assert res["pages"] == 1 and out.stat().st_size > 0
    prep = ex.prepare(small_atlas, ex.make_view(star=ALPHA, lo=w0 - 15, hi=w0 + 15, medium="vacuum",
                                                marks=[[w0 - 1.2, w0 + 1.2, ""]]))
    assert any(n.startswith("mark 1, ") and "EW " in n for n in prep.text.notes)
