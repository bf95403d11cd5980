"""``striae inspect``: readable blocks, JSON records, options, and errors per file."""

from __future__ import annotations

import json
import sys
from types import SimpleNamespace

import astropy.units as u
import numpy as np
import pytest
from astropy.coordinates import EarthLocation, SkyCoord
from astropy.io import fits
from astropy.time import Time
from astropy.utils import iers

from atlas import cli
from tests.conftest import assert_one_line_error

iers.conf.auto_download = False
iers.conf.auto_max_age = None

KEYS = {
    "file",
    "format",
    "target",
    "samples",
    "wavelength_min_A",
    "wavelength_max_A",
    "medium",
    "sampling_kms",
    "resolving_power",
    "snr",
    "obs_time_utc",
    "barycentric_kms",
    # documented extras
    "orders",
    "resolving_power_header",
    "ra_deg",
    "dec_deg",
    "site",
    "barycentric_missing",
}
N = 4000
STEP = 1e-5  # ln(lambda) step per pixel: WAVE-LOG with CDELT1 = CRVAL1 * STEP


@pytest.fixture
def fits_file(tmp_path):
    rng = np.random.default_rng(2)
    hdu = fits.PrimaryHDU(100.0 + rng.normal(0.0, 1.0, N))
    hdu.header.update(
        CTYPE1="AWAV-LOG",
        CUNIT1="Angstrom",
        CRVAL1=5000.0,
        CDELT1=5000.0 * STEP,
        CRPIX1=1.0,
        OBJECT="Invented Star 4",
        RA=150.25,
        DEC=-20.5,
        EXPTIME=900.0,
        RESPOWER=40000,
    )
    hdu.header["DATE-OBS"] = "2025-02-10T01:00:00"
    hdu.header["OBSGEO-B"] = -24.6
    hdu.header["OBSGEO-L"] = -70.4
    hdu.header["OBSGEO-H"] = 2600.0
    path = tmp_path / "star4.fits"
    hdu.writeto(path)
    return path


@pytest.fixture
def csv_file(tmp_path):
    path = tmp_path / "bare.csv"
    lines = ["wavelength_nm,flux"] + [
        f"{600 + 0.001 * i:.3f},{1 + 0.01 * (i % 3)}" for i in range(200)
    ]
    path.write_text("\n".join(lines) + "\n")
    return path


def _main(capsys, *args):
    code = cli.main(["inspect", *map(str, args)])
    out = capsys.readouterr()
    return SimpleNamespace(returncode=code, stdout=out.out, stderr=out.err)


def test_json_for_one_file_is_one_object_with_the_documented_keys(run_striae, fits_file):
    proc = run_striae("inspect", "--json", fits_file)
    assert proc.returncode == 0, proc.stderr
    rec = json.loads(proc.stdout)
    assert isinstance(rec, dict) and set(rec) == KEYS
    assert rec["file"] == str(fits_file) and rec["format"] == "fits_image"
    assert rec["target"] == "Invented Star 4" and rec["samples"] == N and rec["orders"] is None
    assert rec["medium"] == "air"  # AWAV-LOG (Greisen et al. 2006, A&A 446, 747)
    assert rec["wavelength_min_A"] == pytest.approx(5000.0)
    assert rec["wavelength_max_A"] == pytest.approx(5000.0 * np.exp(STEP * (N - 1)), rel=1e-9)
    c_kms = 299792.458  # exact by the SI definition of the metre
    assert rec["sampling_kms"] == pytest.approx(c_kms * STEP, rel=1e-6)
    assert rec["resolving_power"] == pytest.approx(
        1 / (2 * STEP), rel=1e-6
    )  # 2 px per element, common practice
    assert rec["resolving_power_header"] == 40000
    assert rec["snr"] == pytest.approx(
        100.0, rel=0.08
    )  # sigma 1 on 100, DER_SNR (Stoehr et al. 2008)
    mid = Time("2025-02-10T01:00:00", scale="utc") + 450 * u.s
    assert abs((Time(rec["obs_time_utc"], scale="utc") - mid).sec) < 1e-3
    # barycentric correction computed here directly with astropy (Wright & Eastman 2014, PASP 126, 838)
    loc = EarthLocation.from_geodetic(lon=-70.4 * u.deg, lat=-24.6 * u.deg, height=2600 * u.m)
    v = SkyCoord(150.25 * u.deg, -20.5 * u.deg).radial_velocity_correction(
        kind="barycentric", obstime=mid, location=loc
    )
    assert rec["barycentric_kms"] == pytest.approx(v.to_value(u.km / u.s), abs=1e-6)
    assert rec["barycentric_missing"] == []


def test_json_for_several_files_is_a_list(capsys, fits_file, csv_file):
    proc = _main(capsys, "--json", fits_file, csv_file)
    assert proc.returncode == 0, proc.stderr
    recs = json.loads(proc.stdout)
    assert isinstance(recs, list) and [set(r) for r in recs] == [KEYS, KEYS]
    bare = recs[1]
    assert bare["format"] == "text" and bare["medium"] == "unknown" and bare["target"] is None
    assert bare["wavelength_min_A"] == pytest.approx(6000.0)  # 600 nm = 6000 Å (SI)
    assert bare["barycentric_kms"] is None
    assert bare["barycentric_missing"] == ["time", "site", "coordinates"]


def test_readable_block_says_what_is_missing_and_how_to_give_it(capsys, csv_file):
    proc = _main(capsys, csv_file)
    assert proc.returncode == 0
    lines = proc.stdout.splitlines()
    col = lines[0].index(str(csv_file))
    assert all(len(ln) > col and ln[col - 1] == " " and ln[col] != " " for ln in lines)  # aligned
    text = proc.stdout
    assert "medium" in text and "unknown" in text and "km/s per pixel" in text
    assert "missing time, site, coordinates" in text
    assert "--time" in text and "--site" in text and "--radec" in text


def test_options_supply_time_site_and_coordinates(capsys, csv_file):
    proc = _main(
        capsys,
        "--json",
        "--site=-24.6,-70.4,2600",
        "--radec",
        "10:01:00,-20:30:00",
        "--time",
        "2025-02-10T01:07:30",
        "--medium",
        "air",
        csv_file,
    )
    assert proc.returncode == 0, proc.stderr
    rec = json.loads(proc.stdout)
    assert rec["medium"] == "air" and rec["obs_time_utc"].startswith("2025-02-10T01:07:30")
    assert rec["ra_deg"] == pytest.approx(150.25) and rec["dec_deg"] == pytest.approx(-20.5)
    loc = EarthLocation.from_geodetic(lon=-70.4 * u.deg, lat=-24.6 * u.deg, height=2600 * u.m)
    v = SkyCoord(150.25 * u.deg, -20.5 * u.deg).radial_velocity_correction(
        kind="barycentric", obstime=Time("2025-02-10T01:07:30", scale="utc"), location=loc
    )  # astropy; Wright & Eastman 2014, PASP 126, 838
    assert rec["barycentric_kms"] == pytest.approx(v.to_value(u.km / u.s), abs=1e-6)


@pytest.mark.parametrize(
    ("args", "where"),
    [
        (["--site", "91,10,100"], "--site"),
        (["--site", "10,20"], "--site"),
        (["--site", "north,east,up"], "--site"),
        (["--radec", "10:00:00"], "--radec"),
        (["--radec", "200,95"], "--radec"),
        (["--time", "last tuesday"], "--time"),
        (["--time", "2025-13-40T00:00:00"], "--time"),
        (["--wave-unit", "furlongs-per-fortnight"], "--wave-unit"),
    ],
)
def test_bad_option_values_are_one_line_errors_naming_the_option(capsys, csv_file, args, where):
    proc = _main(capsys, *args, csv_file)
    assert_one_line_error(proc, f"striae: {where}: ")
    assert proc.stdout == ""


def test_one_bad_file_among_several_with_json(capsys, fits_file, tmp_path):
    bad = tmp_path / "empty.csv"
    bad.write_text("")
    proc = _main(capsys, "--json", bad, fits_file)
    assert_one_line_error(proc, str(bad), "empty file")
    recs = json.loads(proc.stdout)
    assert [r["file"] for r in recs] == [str(fits_file)]


def test_barycentric_is_null_while_its_module_is_missing(capsys, monkeypatch, fits_file):
    monkeypatch.setitem(sys.modules, "atlas.physics.barycentric", None)  # import now fails
    proc = _main(capsys, "--json", fits_file)
    assert proc.returncode == 0, proc.stderr
    assert json.loads(proc.stdout)["barycentric_kms"] is None
    text = _main(capsys, fits_file).stdout
    assert "not available in this version" in text


def test_echelle_file_reports_orders(capsys, tmp_path):
    wave = (5000.0 + 50.0 * np.arange(3))[:, None] + 0.05 * np.arange(300)[None, :]
    flux = np.ones_like(wave) + 0.01 * (np.arange(300) % 2)
    path = tmp_path / "orders.fits"
    w = fits.ImageHDU(wave, name="WAVELENGTH")
    w.header["BUNIT"] = "Angstrom"
    fits.HDUList([fits.PrimaryHDU(flux), w]).writeto(path)
    rec = json.loads(_main(capsys, "--json", path).stdout)
    assert rec["format"] == "fits_echelle" and rec["orders"] == 3 and rec["samples"] == 900


def test_help_has_an_example(capsys):
    with pytest.raises(SystemExit) as exc:
        cli.main(["inspect", "--help"])
    assert exc.value.code == 0
    out = capsys.readouterr().out
    assert "Example: striae inspect" in out and "--wave-unit" in out and "--radec" in out


def test_inferred_wavelength_unit_is_a_one_line_note(tmp_path, capsys):
    """No unit in the file: inferred from the range (2,000-30,000 Å, common practice), said once."""
    path = tmp_path / "plain.txt"
    path.write_text("".join(f"{6560.0 + 0.05 * k:.2f} {1.0 + 0.001 * k:.4f}\n" for k in range(400)))
    assert cli.main(["inspect", str(path)]) == 0
    out = capsys.readouterr().out
    notes = [ln for ln in out.splitlines() if "unit inferred" in ln]
    assert len(notes) == 1 and notes[0].startswith("note") and "inferred as Å" in notes[0]
    assert "--wave-unit overrides" in notes[0]
    assert cli.main(["inspect", "--json", "--wave-unit", "nm", str(path)]) == 0
    rec = json.loads(capsys.readouterr().out)
    assert rec["wavelength_min_A"] == pytest.approx(65600.0)  # 1 nm = 10 Å (SI)
    assert cli.main(["inspect", "--wave-unit", "nm", str(path)]) == 0
    assert "unit inferred" not in capsys.readouterr().out


def test_a_folder_with_a_multispec_file(tmp_path, capsys):
    """WAT2 multispec, linear dispersion (published WAT header convention, from memory)."""
    folder = tmp_path / "night"
    folder.mkdir()
    hdu = fits.PrimaryHDU(np.ones((2, 500)))
    hdu.header["WAT0_001"] = "system=multispec"
    hdu.header["WAT2_001"] = (
        'wtype=multispec spec1 = "7 7 0 5000. 0.1 500 0. 1. 2." spec2 = "8 8 0 5060. 0.1 500 0. 1. 2."'
    )[:68]
    hdu.header["WAT2_002"] = (
        'wtype=multispec spec1 = "7 7 0 5000. 0.1 500 0. 1. 2." spec2 = "8 8 0 5060. 0.1 500 0. 1. 2."'
    )[68:]
    hdu.writeto(folder / "orders.fits")
    assert cli.main(["inspect", "--json", str(folder)]) == 0
    recs = json.loads(capsys.readouterr().out)
    assert len(recs) == 1 and recs[0]["format"] == "fits_multispec" and recs[0]["orders"] == 2
    assert recs[0]["wavelength_min_A"] == pytest.approx(5000.0)
    assert recs[0]["wavelength_max_A"] == pytest.approx(5060.0 + 0.1 * 499)


def test_compressed_file_is_named_as_such(tmp_path, capsys):
    """gzip magic bytes 1f 8b (RFC 1952): read after unpacking, said in one row."""
    import gzip

    path = tmp_path / "s.csv.gz"
    rows = "".join(f"{5000.0 + 0.1 * k:.1f},{1.0 + 0.001 * k:.4f}\n" for k in range(300))
    path.write_bytes(gzip.compress(("wavelength_A,flux\n" + rows).encode()))
    assert cli.main(["inspect", str(path)]) == 0
    out = capsys.readouterr().out
    assert [ln.split()[1] for ln in out.splitlines() if ln.startswith("compression")] == ["gzip"]
    assert "5000.000 – 5029.900 Å" in out
