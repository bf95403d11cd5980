"""Every layout the readers take, through ``striae build`` to the viewer's first strip.

Each file is written here with astropy/numpy following its published convention, and
its wavelengths are computed independently from that convention:

- linear and log-linear axes: FITS WCS Paper I (Greisen & Calabretta 2002, A&A 395,
  1061), ``x = CRVAL1 + CDELT1 (p - CRPIX1)`` (``CD1_1`` in place of ``CDELT1``), and the
  older linear-dispersion cards ``DC-FLAG`` (1 = log10 of the wavelength) and
  ``W0``/``WPC`` (their description is from memory; see atlas/io/fits_linear.py);
- per-order ``WAT2`` dispersion (types 0 linear, 1 log-linear; published description,
  from memory; see atlas/io/wat.py);
- tile compression: FITS Standard 4.0 (Pence et al. 2010, A&A 524, A42, sect. 10);
- gzip RFC 1952 and bzip2 (Python's ``bz2``), by their magic bytes;
- binary tables with ``TUNIT``: FITS Standard 4.0, sect. 7.3.

``striae inspect --json`` must give each file's samples, range and medium; the atlas's
first strip, read as the viewer reads it (``AtlasData.window``), must hold the file's
bluest samples with their wavelengths and fluxes unchanged (vacuum files: no
conversion).
"""

from __future__ import annotations

import bz2
import gzip
import json

import numpy as np
import pytest
from astropy.io import fits

from atlas import cli
from atlas.app.data import AtlasData
from atlas.build import build_atlas

N = 3000
P = np.arange(1, N + 1, dtype=float)
LIN = 5000.0 + 0.05 * (P - 1.0)  # CRVAL1 = 5000, CDELT1 = 0.05, CRPIX1 = 1
LOG = 10 ** (3.699 + 4e-6 * (P - 1.0))  # DC-FLAG = 1: log10 of the wavelength


def _flux(wave):
    """A sloping continuum with a few absorption dips (invented test data)."""
    f = 1.0 + 2e-5 * (wave - wave[0])
    for c in wave[[400, 1300, 2200]]:
        f *= 1.0 - 0.4 * np.exp(-0.5 * ((wave - c) / 0.15) ** 2)
    return f


def _image(path, data, **cards):
    hdu = fits.PrimaryHDU(np.asarray(data, dtype=np.float64))
    hdu.header.update(OBJECT="Invented Round Trip", **{k.replace("DC_FLAG", "DC-FLAG"): v for k, v in cards.items()})
    hdu.writeto(path)
    return path


def _packed(path, pack):
    raw = path.read_bytes()
    path.unlink()
    out = path.with_name(path.name + (".gz" if pack is gzip.compress else ".bz2"))
    out.write_bytes(pack(raw))
    return out


def _wat2(header, specs):
    text = "wtype=multispec " + " ".join(f'spec{k + 1} = "{s}"' for k, s in enumerate(specs))
    for k in range(0, len(text), 68):
        header[f"WAT2_{k // 68 + 1:03d}"] = text[k : k + 68]
    header.update(WAT0_001="system=multispec", WAT1_001="wtype=multispec label=Wavelength units=angstroms")


def linear_ctype(tmp):
    return _image(tmp / "a.fits", _flux(LIN), CTYPE1="LINEAR", CRVAL1=5000.0, CDELT1=0.05, CRPIX1=1.0,
                  VACUUM=True), LIN


def no_ctype_cd(tmp):
    return _image(tmp / "b.fits", _flux(LIN), CRVAL1=5000.0, CD1_1=0.05, CRPIX1=1.0, AIRORVAC="vac"), LIN


def dc_flag_log(tmp):
    return _image(tmp / "c.fits", _flux(LOG), CRVAL1=3.699, CDELT1=4e-6, CRPIX1=1.0, DC_FLAG=1,
                  VACUUM=True), LOG


def w0_wpc(tmp):
    return _image(tmp / "d.fits", _flux(LIN), W0=5000.0, WPC=0.05, VACUUM=True), LIN


def gzip_linear(tmp):
    path, wave = linear_ctype(tmp)
    return _packed(path, gzip.compress), wave


def bzip2_linear(tmp):
    path, wave = linear_ctype(tmp)
    return _packed(path, bz2.compress), wave


def tile_compressed(tmp):
    header = fits.Header()
    header.update(CTYPE1="WAVE", CUNIT1="Angstrom", CRVAL1=5000.0, CDELT1=0.05, CRPIX1=1.0)
    comp = fits.CompImageHDU(_flux(LIN), header, compression_type="GZIP_1", quantize_level=0.0)
    path = tmp / "e.fz"
    fits.HDUList([fits.PrimaryHDU(), comp]).writeto(path)
    return path, LIN


def degenerate_1_1_n(tmp):
    return _image(tmp / "f.fits", _flux(LIN)[np.newaxis, np.newaxis, :], CTYPE1="LINEAR", CRVAL1=5000.0,
                  CDELT1=0.05, CRPIX1=1.0, VACUUM=True), LIN


def multispec_orders(tmp):
    red = 5140.0 + 0.05 * (P - 1.0)
    hdu = fits.PrimaryHDU(np.vstack([_flux(red), _flux(LOG)]))
    _wat2(hdu.header, [f"1 61 0 5140. 0.05 {N} 0. 1. 2.", f"2 62 1 3.699 4e-6 {N} 0. 1. 2."])
    hdu.header.update(AIRORVAC="vac", OBJECT="Invented Round Trip")
    path = tmp / "g.fits"
    hdu.writeto(path)
    return path, LOG, red  # the bluest order is the second row


def bands_orders_pixels(tmp):
    data = np.stack([np.vstack([_flux(LIN)]), np.full((1, N), 0.01)])  # band 1 spectrum, band 2 sigma
    hdu = fits.PrimaryHDU(data)
    _wat2(hdu.header, [f"1 1 0 5000. 0.05 {N} 0. 1. 2."])
    hdu.header.update(AIRORVAC="vac", BANDID1="spectrum", BANDID2="sigma - per pixel")
    path = tmp / "h.fits"
    hdu.writeto(path)
    return path, LIN


def wavelength_hdu(tmp):
    wave_hdu = fits.ImageHDU(LIN / 10.0, name="WAVELENGTH")
    wave_hdu.header["BUNIT"] = "nm"
    path = tmp / "i.fits"
    primary = fits.PrimaryHDU(_flux(LIN))
    primary.header["AIRORVAC"] = "vac"
    fits.HDUList([primary, wave_hdu]).writeto(path)
    return path, LIN


def many_row_table(tmp):
    cols = [
        fits.Column(name="WAVE", format="D", unit="Angstrom", array=LIN),
        fits.Column(name="FLUX", format="D", array=_flux(LIN)),
        fits.Column(name="IVAR", format="D", array=np.full(N, 1e4)),
        fits.Column(name="QUALITY", format="J", array=np.zeros(N, np.int32)),
    ]
    hdu = fits.BinTableHDU.from_columns(cols)
    hdu.header["TCTYP1"] = "WAVE"
    path = tmp / "j.fits"
    fits.HDUList([fits.PrimaryHDU(), hdu]).writeto(path)
    return path, LIN


def one_row_table(tmp):
    cols = [
        fits.Column(name="WAVELENGTH", format=f"{N}D", unit="Angstrom", array=LIN[np.newaxis]),
        fits.Column(name="FLUX", format=f"{N}D", array=_flux(LIN)[np.newaxis]),
    ]
    hdu = fits.BinTableHDU.from_columns(cols)
    hdu.header["TCTYP1"] = "WAVE"
    path = tmp / "k.fits"
    fits.HDUList([fits.PrimaryHDU(), hdu]).writeto(path)
    return path, LIN


def text_headerless(tmp):
    rows = [f"{w:.4f}\t{f:.9E}".replace("E", "D") for w, f in zip(LIN, _flux(LIN), strict=True)]
    path = tmp / "l.txt"
    path.write_text("! an invented station's export\n# medium: vacuum\n" + "\n".join(rows) + "\n\n\n")
    return path, LIN


def text_csv_header(tmp):
    rows = [f"{w:.4f},{f:.9f},0.01" for w, f in zip(LIN, _flux(LIN), strict=True)]
    rows.insert(1500, "; a comment in the middle")
    path = tmp / "m.csv.gz"
    path.write_bytes(gzip.compress(("# medium: vacuum\nLambda,Flux,Sigma\n" + "\n".join(rows) + "\n").encode()))
    return path, LIN


LAYOUTS = [linear_ctype, no_ctype_cd, dc_flag_log, w0_wpc, gzip_linear, bzip2_linear, tile_compressed,
           degenerate_1_1_n, multispec_orders, bands_orders_pixels, wavelength_hdu, many_row_table,
           one_row_table, text_headerless, text_csv_header]


@pytest.mark.parametrize("layout", LAYOUTS, ids=[f.__name__ for f in LAYOUTS])
def test_inspect_json_gives_samples_range_and_medium(tmp_path, layout, capsys):
    path, *orders = layout(tmp_path)
    assert cli.main(["inspect", str(path), "--json"]) == 0
    got = json.loads(capsys.readouterr().out)
    every = np.concatenate(orders)
    assert got["samples"] == every.size
    np.testing.assert_allclose([got["wavelength_min_A"], got["wavelength_max_A"]], [every.min(), every.max()],
                               rtol=1e-12)
    assert got["medium"] == "vacuum"


@pytest.mark.parametrize("layout", LAYOUTS, ids=[f.__name__ for f in LAYOUTS])
def test_every_layout_reaches_the_viewers_first_strip(tmp_path, layout):
    path, wave, *_ = layout(tmp_path)
    atlas = tmp_path / "atlas"
    report = build_atlas([str(path)], str(atlas), progress=False)
    assert not report.failed, report.failed
    data = AtlasData(atlas)
    (star,) = data.star_ids
    first = data.window(star, 0, 0.0, 1e9, 10**6, flux="raw")
    assert first["level"] == 0  # real samples, not envelopes
    ok = np.isfinite(first["wavelength"])
    w = np.asarray(first["wavelength"][ok], dtype=np.float64)
    f = np.asarray(first["flux"][ok], dtype=np.float64)
    assert 20 < w.size <= N  # an echelle order is one strip
    np.testing.assert_allclose(w, wave[: w.size], rtol=2e-7)  # float32 in the viewer's points
    np.testing.assert_allclose(f, _flux(wave)[: w.size], rtol=2e-6)
