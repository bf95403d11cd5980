"""Class templates: Teff per class and the grid's shape."""

from __future__ import annotations

import numpy as np
import pytest

from atlas.errors import InputError
from atlas.synth.templates import CLASS_TEFF_K, template_grid

# Pecaut & Mamajek (2013, ApJS 208, 9), dwarf Teff as in Mamajek's online table
# version 2022.04.16 (from memory).
PECAUT_MAMAJEK_TEFF_K = {
    "O5": 41400, "O9": 33300, "B0": 31400, "B5": 15700, "A0": 9700, "A5": 8100,
    "F0": 7220, "F5": 6550, "G0": 5930, "G5": 5660, "K0": 5270, "K5": 4440,
    "M0": 3850, "M3": 3430, "M5": 3060,
}


def test_class_teff_follow_pecaut_mamajek():
    assert CLASS_TEFF_K == pytest.approx(PECAUT_MAMAJEK_TEFF_K)
    teffs = list(CLASS_TEFF_K.values())
    assert all(a > b for a, b in zip(teffs, teffs[1:], strict=False))  # O5 hottest ... M5 coolest
    assert {c[0] for c in CLASS_TEFF_K} == set("OBAFGKM")


def test_template_grid_is_normalised_and_labelled():
    wave = np.linspace(4820.0, 4900.0, 1601)  # around H-beta (vacuum 4862.7 Å)
    ds = template_grid(wave, R=20000, classes=["A0", "G0", "M3"])
    assert ds["flux"].dims == ("class", "sample")
    assert list(ds["class"].values) == ["A0", "G0", "M3"]
    assert ds["teff_k"].sel({"class": "A0"}) == 9700
    f = ds["flux"].values
    assert np.isfinite(f).all() and (f <= 1.0 + 1e-9).all() and (f > 0).all()
    # H-beta absorbs most in the A0 template (common practice: Balmer lines peak in A stars).
    ew = np.trapezoid(1.0 - f, wave, axis=1)
    assert ew[0] > 2 * ew[1] and ew[0] > 2 * ew[2], ew


@pytest.mark.parametrize(
    "kwargs, where",
    [
        (dict(wave_A=np.array([5000.0, 4999.0]), R=1000), "wave_A"),
        (dict(wave_A=np.linspace(5000, 5010, 10), R=-5), "R"),
        (dict(wave_A=np.linspace(5000, 5010, 10), R=1000, classes=["Q7"]), "classes"),
        (dict(wave_A=np.linspace(5000, 5010, 10), R=1000, medium="glass"), "medium"),
    ],
)
def test_template_grid_rejects_bad_input(kwargs, where):
    with pytest.raises(InputError) as err:
        template_grid(**kwargs)
    assert err.value.where == where
