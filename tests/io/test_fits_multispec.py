"""Echelle images with per-order dispersion in WAT2 header cards.

Each file is written here following the published description of the ``WAT``
header convention (multispec system; details from memory of that document, as in
atlas/io/wat.py): the attribute string split into 68-character pieces over
``WAT2_001``, ``WAT2_002``, ...; ``specN = "ap beam dtype w1 dw nw z aplow aphigh
[wt w0 ftype ...]"``.  Expected wavelengths are computed in the test from the
convention's formulas (Chebyshev/Legendre by their three-term recurrences, the
splines by the convention's own basis), not by the reader's code.
"""

from __future__ import annotations

import numpy as np
import pytest
from astropy.io import fits

import atlas.io
from atlas.errors import InputError
from atlas.spectrum import is_echelle

N = 300
PMIN, PMAX = 1.0, float(N)


def _header_cards(header, specs, units="angstroms"):
    header["WAT0_001"] = "system=multispec"
    header["WAT1_001"] = f"wtype=multispec label=Wavelength units={units}"
    text = "wtype=multispec " + " ".join(f'spec{i + 1} = "{s}"' for i, s in enumerate(specs))
    for k in range(0, len(text), 68):
        header[f"WAT2_{k // 68 + 1:03d}"] = text[k : k + 68]
    header["CTYPE1"] = "MULTISPE"
    header["CTYPE2"] = "MULTISPE"


def _write(path, data, specs, **cards):
    hdu = fits.PrimaryHDU(np.asarray(data, dtype=np.float32))
    _header_cards(hdu.header, specs, cards.pop("units", "angstroms"))
    hdu.header.update(cards)
    hdu.writeto(path)
    return path


def _cheb_by_recurrence(n, coef):
    """sum c_i T_i(n), T_0 = 1, T_1 = n, T_{k+1} = 2 n T_k - T_{k-1} (Chebyshev polynomials)."""
    t_prev, t = np.ones_like(n), n
    out = coef[0] * t_prev + (coef[1] * t if len(coef) > 1 else 0.0)
    for c in coef[2:]:
        t_prev, t = t, 2.0 * n * t - t_prev
        out = out + c * t
    return out


def _legendre_by_recurrence(n, coef):
    """sum c_i P_i(n), (k + 1) P_{k+1} = (2k + 1) n P_k - k P_{k-1} (Legendre polynomials)."""
    p_prev, p = np.ones_like(n), n
    out = coef[0] * p_prev + coef[1] * p
    for k, c in enumerate(coef[2:], start=1):
        p_prev, p = p, ((2 * k + 1) * n * p - k * p_prev) / (k + 1)
        out = out + c * p
    return out


def _spec(ap, dtype, w1, dw, nw, z=0.0, terms=""):
    return f"{ap} {ap} {dtype} {w1} {dw} {nw} {z} 10. 20. {terms}".strip()


PIX = np.arange(1, N + 1, dtype=float)
NORM = (2 * PIX - (PMAX + PMIN)) / (PMAX - PMIN)
CHEB = [5250.0, 120.0, -3.5, 0.8]


def test_linear_log_and_chebyshev_orders(tmp_path):
    cheb_terms = f"1. 0. 1 {len(CHEB)} {PMIN} {PMAX} " + " ".join(map(str, CHEB))
    specs = [
        _spec(61, 0, 4800.0, 0.05, N),
        _spec(62, 1, 3.70, 1e-5, N),
        _spec(63, 2, 5130.0, 0.8, N, terms=cheb_terms),
    ]
    flux = np.vstack([np.full(N, 1.0), np.full(N, 2.0), np.full(N, 3.0)])
    path = _write(tmp_path / "ms.fits", flux, specs, AIRORVAC="air", OBJECT="Invented Star 12")
    assert atlas.io.detect(path) == "fits_multispec"
    ds = atlas.io.read(path)
    assert is_echelle(ds) and ds.sizes == {"order": 3, "sample": N}
    w = ds["wavelength"].values
    np.testing.assert_allclose(w[0], 4800.0 + 0.05 * (PIX - 1), rtol=0, atol=1e-9)
    np.testing.assert_allclose(w[1], 10 ** (3.70 + 1e-5 * (PIX - 1)), rtol=1e-12)
    # the Chebyshev order, against the recurrence and against numpy.polynomial evaluated by hand
    np.testing.assert_allclose(w[2], _cheb_by_recurrence(NORM, CHEB), rtol=1e-12)
    by_numpy = np.polynomial.Chebyshev(CHEB, domain=[PMIN, PMAX])(PIX)
    np.testing.assert_allclose(w[2], by_numpy, rtol=1e-12)
    assert ds["wavelength"].attrs["medium"] == "air"
    assert ds.attrs["apertures"] == "61,62,63"
    assert not ds["mask"].values.any()


def test_legendre_weights_and_redshift(tmp_path):
    leg = [6000.0, 150.0, 2.0, -0.4]
    z = 1.5e-4
    terms = (
        f"0.5 1.0 2 {len(leg)} {PMIN} {PMAX} "
        + " ".join(map(str, leg))
        + f" 0.5 -1.0 2 {len(leg)} {PMIN} {PMAX} "
        + " ".join(map(str, leg))
    )
    path = _write(tmp_path / "leg.fits", np.ones(N), [_spec(1, 2, 0, 0, N, z=z, terms=terms)])
    ds = atlas.io.read(path)
    expect = (
        0.5 * (1.0 + _legendre_by_recurrence(NORM, leg))
        + 0.5 * (-1.0 + _legendre_by_recurrence(NORM, leg))
    ) / (1 + z)
    assert ds["flux"].dims == ("sample",)
    np.testing.assert_allclose(ds["wavelength"].values, expect, rtol=1e-12)
    assert ds["wavelength"].attrs["medium"] == "unknown"


def _cubic_by_hand(p, npieces, coef):
    """The convention's cubic spline: s, j = int(s), a = j + 1 - s, b = s - j and its four weights."""
    s = (p - PMIN) / (PMAX - PMIN) * npieces
    j = np.minimum(s.astype(int), npieces - 1)
    a, b = (j + 1) - s, s - j
    x0, x1 = a**3, 1 + 3 * a * (1 + a * b)
    x2, x3 = 1 + 3 * b * (1 + a * b), b**3
    c = np.asarray(coef)
    return x0 * c[j] + x1 * c[j + 1] + x2 * c[j + 2] + x3 * c[j + 3]


def test_cubic_and_linear_spline_orders(tmp_path):
    npc = 4
    cub = [850.0, 860.0, 870.0, 881.0, 893.0, 906.0, 920.0]  # npieces + 3
    lin = [5000.0, 5020.0, 5041.0, 5063.0, 5086.0]  # npieces + 1
    specs = [
        _spec(1, 2, 0, 0, N, terms=f"1. 0. 3 {npc} {PMIN} {PMAX} " + " ".join(map(str, cub))),
        _spec(2, 2, 0, 0, N, terms=f"1. 0. 4 {npc} {PMIN} {PMAX} " + " ".join(map(str, lin))),
    ]
    ds = atlas.io.read(_write(tmp_path / "sp.fits", np.ones((2, N)), specs))
    np.testing.assert_allclose(
        ds["wavelength"].values[0], _cubic_by_hand(PIX, npc, cub), rtol=1e-12
    )
    s = (PIX - PMIN) / (PMAX - PMIN) * npc
    j = np.minimum(s.astype(int), npc - 1)
    by_hand = (j + 1 - s) * np.take(lin, j) + (s - j) * np.take(lin, j + 1)
    np.testing.assert_allclose(ds["wavelength"].values[1], by_hand, rtol=1e-12)


def test_three_band_image_with_sigma_band_and_valid_pixels(tmp_path):
    rows, nw = 2, N - 20
    data = np.ones((4, rows, N))
    data[3] = 0.05  # the sigma band
    specs = [_spec(1, 0, 5000.0, 0.1, nw), _spec(2, 0, 5040.0, 0.1, nw)]
    path = _write(
        tmp_path / "b.fits",
        data,
        specs,
        units="nanometers",
        BANDID1="spectrum - background fit, weights variance, clean no",
        BANDID2="raw - background fit, weights none, clean no",
        BANDID3="background - background fit",
        BANDID4="sigma - background fit, weights variance, clean no",
    )
    ds = atlas.io.read(path)
    assert ds.sizes == {"order": rows, "sample": N}
    np.testing.assert_allclose(ds["uncertainty"].values, 0.05, rtol=1e-6)
    w = ds["wavelength"].values
    np.testing.assert_allclose(w[0, :nw], 10.0 * (5000.0 + 0.1 * (PIX[:nw] - 1)), rtol=1e-12)
    assert ds["mask"].values[:, nw:].all() and not ds["mask"].values[:, :nw].any()


def test_wat_pieces_that_end_in_a_space_are_joined(tmp_path):
    """A 68-character piece ending in a space: FITS readers trim it, the reader pads it back."""
    base = 'wtype=multispec spec1 = "'
    pad = 67 - len(base) - len("1 1 0 5000.0")
    text = base + " " * pad + f'1 1 0 5000.0 0.1 {N} 0. 1. 2."'
    assert text[67] == " " and text[66] == "0" and text[68] == "0"
    hdu = fits.PrimaryHDU(np.ones(N, dtype=np.float32))
    hdu.header["WAT0_001"] = "system=multispec"
    hdu.header["WAT2_001"], hdu.header["WAT2_002"] = text[:68], text[68:]
    assert len(str(hdu.header["WAT2_001"])) == 67  # the trailing space is gone on reading
    hdu.writeto(tmp_path / "a.fits")
    ds = atlas.io.read(tmp_path / "a.fits")
    np.testing.assert_allclose(ds["wavelength"].values, 5000.0 + 0.1 * (PIX - 1))


@pytest.mark.parametrize(
    ("spec", "fragment"),
    [
        (_spec(1, 7, 5000.0, 0.1, N), "dispersion type 7"),
        (_spec(1, 2, 0, 0, N, terms="1. 0. 5 3 1 2 3 4 5 6"), "type 5 is not supported"),
        (_spec(1, 2, 0, 0, N, terms="1. 0. 1 4 1. 300. 5000. 1."), "needs 4 coefficients"),
        ("1 1 0 5000", "at least 9"),
    ],
)
def test_bad_spec_lines_are_one_line_errors(tmp_path, spec, fragment):
    path = _write(tmp_path / "bad.fits", np.ones(N), [spec])
    with pytest.raises(InputError, match=fragment):
        atlas.io.read(path)


def test_missing_spec_for_a_line(tmp_path):
    path = _write(tmp_path / "m.fits", np.ones((3, N)), [_spec(1, 0, 5000.0, 0.1, N)] * 2)
    with pytest.raises(InputError, match="spec3 missing"):
        atlas.io.read(path)


def test_ltv_ltm_map_image_pixels_to_physical_pixels(tmp_path):
    """Logical l = LTM1_1 p + LTV1 (convention, from memory): a cut starting at physical
    pixel 11 has LTV1 = -10, so image pixel 1 is p = 11; LTV2 = -1 skips the first line."""
    specs = [_spec(1, 0, 4000.0, 0.1, 400), _spec(2, 0, 5000.0, 0.1, 400)]
    path = _write(tmp_path / "cut.fits", np.ones((1, N)), specs, LTV1=-10.0, LTV2=-1.0)
    ds = atlas.io.read(path)
    np.testing.assert_allclose(ds["wavelength"].values, 5000.0 + 0.1 * (PIX + 10.0 - 1.0))
    assert ds.attrs["apertures"] == "2"
