"""Broken copies of good files: every read ends in a Spectrum or an InputError, nothing else."""

from __future__ import annotations

import io
import warnings

import numpy as np
import pytest
from astropy.io import fits
from hypothesis import HealthCheck, given, settings
from hypothesis import strategies as st

import atlas.io
from atlas.errors import InputError


def _image_bytes() -> bytes:
    hdu = fits.PrimaryHDU(np.linspace(1.0, 2.0, 100))
    hdu.header.update(
        CTYPE1="WAVE",
        CUNIT1="Angstrom",
        CRVAL1=5000.0,
        CDELT1=0.1,
        CRPIX1=1.0,
        OBJECT="x",
        RA=10.0,
        DEC=5.0,
    )
    buf = io.BytesIO()
    fits.HDUList([hdu, fits.ImageHDU(np.full(100, 0.1), name="ERROR")]).writeto(buf)
    return buf.getvalue()


def _table_bytes() -> bytes:
    cols = [
        fits.Column(name="wave", format="D", array=np.linspace(400, 410, 50), unit="nm"),
        fits.Column(name="flux", format="D", array=np.ones(50)),
    ]
    buf = io.BytesIO()
    fits.HDUList([fits.PrimaryHDU(), fits.BinTableHDU.from_columns(cols)]).writeto(buf)
    return buf.getvalue()


CSV = (
    "# target: a\n# ra: 10:00:00\n# dec: 5\nwavelength_nm,flux,err\n"
    + "".join(f"{500 + i * 0.01:.2f},{1 + i % 3},0.1\n" for i in range(50))
).encode()
GOOD = {"image.fits": _image_bytes(), "table.fits": _table_bytes(), "s.csv": CSV}


def _read_or_refuse(path):
    with warnings.catch_warnings():
        warnings.simplefilter("ignore")
        try:
            ds = atlas.io.read(path)
        except InputError as exc:
            assert "\n" not in exc.message and exc.where == str(path)
            return
    assert ds["flux"].size > 0


@pytest.mark.parametrize("name", sorted(GOOD))
@settings(
    max_examples=25, deadline=None, suppress_health_check=[HealthCheck.function_scoped_fixture]
)
@given(data=st.data())
def test_damaged_files_are_read_or_refused_cleanly(tmp_path, name, data):
    good = bytearray(GOOD[name])
    kind = data.draw(st.sampled_from(["cut", "overwrite"]))
    if kind == "cut":
        damaged = good[: data.draw(st.integers(0, len(good) - 1))]
    else:
        at = data.draw(st.integers(0, len(good) - 1))
        junk = data.draw(st.binary(min_size=1, max_size=40))
        damaged = good[:at] + junk + good[at + len(junk) :]
    path = tmp_path / name
    path.write_bytes(bytes(damaged))
    _read_or_refuse(path)
