"""The in-memory Spectrum: an ``xarray.Dataset`` following one set of conventions.

Dimensions ``sample`` (or ``order``, ``sample`` for multi-order echelle data);
variables ``flux``, optional ``uncertainty``, ``mask`` (True = bad); coordinate
``wavelength`` in Å (float64) with attribute ``medium`` = ``vacuum`` | ``air`` |
``unknown``.  Dataset attributes (each present only when known, never guessed):
``target``, ``ra_deg``, ``dec_deg``, ``obs_time_utc`` (ISO, mid-exposure if
known), ``exposure_s``, ``site_lat_deg``, ``site_lon_deg``, ``site_height_m``,
``resolving_power``, ``source_path``, ``source_sha256``, ``flux_unit``,
``format``.
"""

from __future__ import annotations

import hashlib
import math
import os

import numpy as np
import xarray as xr

MEDIA = ("vacuum", "air", "unknown")

#: Dataset attributes a Spectrum may carry (each only when known).
KNOWN_ATTRS = (
    "target",
    "ra_deg",
    "dec_deg",
    "obs_time_utc",
    "exposure_s",
    "site_lat_deg",
    "site_lon_deg",
    "site_height_m",
    "resolving_power",
    "source_path",
    "source_sha256",
    "flux_unit",
    "format",
)


def make_spectrum(
    wave_A,
    flux,
    uncertainty=None,
    mask=None,
    *,
    medium: str = "unknown",
    **attrs,
) -> xr.Dataset:
    """Build a Spectrum Dataset from arrays (wavelength in Å).

    1-D arrays give dimension ``sample``; 2-D arrays give ``order``, ``sample``.
    NaN or infinite flux is masked (not dropped). Attributes whose value is
    ``None`` are left out, so missing metadata stays absent.
    """
    wave = np.asarray(wave_A, dtype=np.float64)
    flux = np.asarray(flux, dtype=np.float64)
    dims = ("sample",) if flux.ndim == 1 else ("order", "sample")
    bad = ~np.isfinite(flux)
    if mask is not None:
        bad = bad | np.asarray(mask, dtype=bool)
    data_vars = {"flux": (dims, flux), "mask": (dims, bad)}
    if uncertainty is not None:
        data_vars["uncertainty"] = (dims, np.asarray(uncertainty, dtype=np.float64))
    if medium not in MEDIA:
        raise ValueError(f"medium must be one of {MEDIA}, not {medium!r}")
    ds = xr.Dataset(
        data_vars,
        coords={"wavelength": (dims, wave, {"units": "Angstrom", "medium": medium})},
        attrs={k: v for k, v in attrs.items() if v is not None},
    )
    return ds


def finite_or_none(value) -> float | None:
    """``value`` as a float when it is a finite number, else None (None, NaN, inf, text)."""
    try:
        v = float(value)
    except (TypeError, ValueError):
        return None
    return v if math.isfinite(v) else None


def medium_of(ds: xr.Dataset) -> str:
    """The wavelength medium of a Spectrum: ``vacuum``, ``air`` or ``unknown``."""
    return ds["wavelength"].attrs.get("medium", "unknown")


def is_echelle(ds: xr.Dataset) -> bool:
    """True when the Spectrum keeps separate echelle orders."""
    return "order" in ds.dims


def sha256_of(path: str | os.PathLike) -> str:
    """Hex SHA-256 of a file's bytes."""
    h = hashlib.sha256()
    with open(path, "rb") as fh:
        for block in iter(lambda: fh.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()
