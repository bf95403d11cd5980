"""Helpers for the reader tests: small spectrum files written with astropy in each test."""

from __future__ import annotations

import numpy as np
import pytest
from astropy.io import fits


@pytest.fixture
def write_image(tmp_path):
    """Write a 1-D FITS image spectrum; returns (path, header used)."""

    def _write(flux, name="image.fits", extra_hdus=(), shape_1n=False, **cards):
        data = np.asarray(flux, dtype=np.float64)
        if shape_1n:
            data = data[np.newaxis, :]
        hdu = fits.PrimaryHDU(data)
        for k, v in cards.items():
            hdu.header[k.replace("_", "-") if k.startswith(("DATE_", "MJD_", "OBSGEO_")) else k] = v
        path = tmp_path / name
        fits.HDUList([hdu, *extra_hdus]).writeto(path)
        return path, hdu.header

    return _write


@pytest.fixture
def write_text(tmp_path):
    """Write a text file from lines; returns its path."""

    def _write(lines, name="spectrum.csv"):
        path = tmp_path / name
        path.write_text("\n".join(lines) + "\n", encoding="utf-8")
        return path

    return _write
