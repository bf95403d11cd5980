"""CSV/TSV spectra: unit from the column suffix or --wave-unit, '# key: value' metadata."""

from __future__ import annotations

import astropy.units as u
import numpy as np
import pytest
from astropy.coordinates import SkyCoord
from astropy.time import Time

import atlas.io
from atlas.errors import InputError

WAVE_A = [6562.0, 6562.5, 6563.0, 6563.5, 6564.0, 6564.5]
FLUX = [1.0, 0.9, 0.5, 0.6, 0.95, 1.0]


def _rows(wave, flux=FLUX, sep=","):
    return [sep.join(map(repr, r)) for r in zip(wave, flux, strict=True)]


@pytest.mark.parametrize(
    ("column", "scale"),
    [
        ("wavelength_A", 1.0),
        ("wavelength_nm", 0.1),
        ("wavelength_um", 1e-4),
        ("wavelength [nm]", 0.1),
        ("Wavelength(um)", 1e-4),
    ],
)
def test_header_suffix_gives_the_unit(write_text, column, scale):
    path = write_text([f"{column},flux", *_rows([w * scale for w in WAVE_A])])
    ds = atlas.io.read(path)
    # converted independently with astropy.units
    unit = {1.0: u.AA, 0.1: u.nm, 1e-4: u.um}[scale]
    expect = (np.array(WAVE_A) * scale * unit).to_value(u.AA)
    np.testing.assert_allclose(ds["wavelength"].values, expect, rtol=1e-12)
    np.testing.assert_allclose(ds["wavelength"].values, WAVE_A, rtol=1e-12)
    np.testing.assert_array_equal(ds["flux"].values, FLUX)
    assert ds.attrs["format"] == "text"


def test_wave_unit_option_for_a_bare_column(write_text):
    path = write_text(["wavelength,flux", *_rows([w / 10 for w in WAVE_A])])
    # no unit anywhere: 656.2-656.45 lies only in the nm range (common practice ranges)
    ds = atlas.io.read(path)
    np.testing.assert_allclose(ds["wavelength"].values, WAVE_A, rtol=1e-12)
    assert "inferred as nm" in ds.attrs["wave_unit_inferred"]
    ds = atlas.io.read(path, wave_unit="nm")
    np.testing.assert_allclose(ds["wavelength"].values, WAVE_A, rtol=1e-12)
    assert "wave_unit_inferred" not in ds.attrs


def test_wave_unit_option_that_contradicts_the_column(write_text):
    path = write_text(["wavelength_A,flux", *_rows(WAVE_A)])
    with pytest.raises(InputError, match="disagrees") as exc:
        atlas.io.read(path, wave_unit="nm")
    assert exc.value.where == str(path) and "--wave-unit" in exc.value.reason
    # the same unit spelled differently is fine
    assert atlas.io.read(path, wave_unit="Angstrom").sizes["sample"] == 6


def test_tsv_with_uncertainty_and_whitespace_table(write_text):
    lines = ["wavelength_A\tflux\terror"] + [
        f"{w}\t{f}\t0.05" for w, f in zip(WAVE_A, FLUX, strict=True)
    ]
    ds = atlas.io.read(write_text(lines, name="s.tsv"))
    np.testing.assert_allclose(ds["uncertainty"].values, 0.05)
    lines = ["wavelength_A   flux   variance"] + [
        f"{w}  {f}  0.04" for w, f in zip(WAVE_A, FLUX, strict=True)
    ]
    ds = atlas.io.read(write_text(lines, name="s.dat"))
    np.testing.assert_allclose(ds["uncertainty"].values, 0.2)


def test_descending_rows_are_reversed(write_text):
    ds = atlas.io.read(write_text(["wavelength_A,flux", *_rows(WAVE_A[::-1], FLUX)]))
    np.testing.assert_allclose(ds["wavelength"].values, WAVE_A)
    np.testing.assert_allclose(ds["flux"].values, FLUX[::-1])


def test_nan_and_empty_cells_are_masked_not_dropped(write_text):
    lines = ["wavelength_A,flux"] + _rows(WAVE_A)
    lines[2] = f"{WAVE_A[1]},nan"
    lines[4] = f"{WAVE_A[3]},"
    ds = atlas.io.read(write_text(lines))
    assert ds.sizes["sample"] == 6
    np.testing.assert_array_equal(ds["mask"].values, [False, True, False, True, False, False])


def test_comment_metadata(write_text):
    lines = [
        "# target: Invented Star 12",
        "# medium: air",
        "# ra: 05:14:32.3",
        "# dec: -08:12:06",
        "# obs_start_utc: 2023-11-02T03:10:00",
        "# exposure_s: 1200",
        "# site_lat_deg: 31.96",
        "# site_lon_deg: -111.6",
        "# site_height_m: 2096",
        "# resolving_power: 60000",
        "# flux_unit: normalized",
        "# a free comment: ignored",
        "wavelength_A,flux",
        *_rows(WAVE_A),
    ]
    ds = atlas.io.read(write_text(lines))
    a = ds.attrs
    assert ds["wavelength"].attrs["medium"] == "air"
    assert a["target"] == "Invented Star 12"
    ref = SkyCoord("05:14:32.3", "-08:12:06", unit=(u.hourangle, u.deg))  # astropy.coordinates
    assert a["ra_deg"] == pytest.approx(ref.ra.deg, abs=1e-9)
    assert a["dec_deg"] == pytest.approx(ref.dec.deg, abs=1e-9)
    # start + exposure / 2 is mid-exposure (common practice)
    mid = Time("2023-11-02T03:10:00", scale="utc") + 600 * u.s
    assert abs((Time(a["obs_time_utc"], scale="utc") - mid).sec) < 1e-3
    assert (a["site_lat_deg"], a["site_lon_deg"], a["site_height_m"]) == (31.96, -111.6, 2096.0)
    assert a["resolving_power"] == 60000.0 and a["flux_unit"] == "normalized"
    assert (
        atlas.io.read(write_text(lines, name="b.csv"), medium="vacuum")["wavelength"].attrs[
            "medium"
        ]
        == "vacuum"
    )


@pytest.mark.parametrize(
    ("comment", "fragment"),
    [
        ("# medium: glass", "'# medium' must be air or vacuum"),
        ("# ra_deg: 400\n# dec_deg: 10", "'# ra_deg' RA '400' is outside"),
        ("# obs_time_utc: last night", "'# obs_time_utc'"),
        ("# resolving_power: -3", "'# resolving_power' has an impossible value"),
    ],
)
def test_bad_comment_values_name_the_line(write_text, comment, fragment):
    lines = [comment, "wavelength_A,flux", *_rows(WAVE_A)]
    with pytest.raises(InputError, match="line 1: ") as exc:
        atlas.io.read(write_text(lines))
    assert fragment in exc.value.reason


def test_headerless_numbers_with_four_columns_are_refused(write_text):
    rows = [f"{w},1.0,0.1,7" for w in WAVE_A]
    with pytest.raises(InputError, match="no header line and 4 columns"):
        atlas.io.read(write_text(rows))


def test_byte_order_mark_and_crlf_line_ends(tmp_path):
    path = tmp_path / "excel.csv"
    body = "\r\n".join(["wavelength_A;flux", *_rows(WAVE_A, sep=";")]) + "\r\n"
    path.write_bytes(b"\xef\xbb\xbf" + body.encode())
    assert atlas.io.detect(path) == "text"
    np.testing.assert_allclose(atlas.io.read(path)["wavelength"].values, WAVE_A)


def test_wavenumber_is_not_a_wavelength_column_and_plural_is(write_text):
    with pytest.raises(InputError, match="no spectral axis"):
        atlas.io.read(write_text(["wavenumber,flux", *_rows(WAVE_A)]))
    ds = atlas.io.read(
        write_text(["Wavelengths,flux", *_rows(WAVE_A)], name="b.csv"), wave_unit="A"
    )
    np.testing.assert_allclose(ds["wavelength"].values, WAVE_A)
