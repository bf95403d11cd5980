"""The ``lines`` group of a star's store: the lines predicted for that star.

``to_dataset(predicted)`` turns the table of ``atlas.lines.predict.predict_depths``
into a Dataset with dimension ``line`` (written by ``atlas.store.write_lines``);
``from_dataset(ds)`` reads it back as a DataFrame with the columns of the line list
the viewer's markers use, the coarse ``strength`` class derived from the predicted
depth (``strength_of_depth``).
"""

from __future__ import annotations

import numpy as np
import pandas as pd
import xarray as xr

#: Stored columns and their dtypes.
STORED = {
    "vacuum_A": np.float64,
    "air_A": np.float64,
    "lower_eV": np.float64,
    "loggf": np.float64,
    "predicted_depth": np.float32,
}
#: Depth limits of the coarse strength classes 1, 2, 3 (4 below): our own scale,
#: chosen so class 1 are the saturated lines that dominate a strip.
STRENGTH_DEPTHS = (0.5, 0.25, 0.1)


def strength_of_depth(depth) -> np.ndarray:
    """Coarse strength class 1 (deepest) .. 4 of predicted depths (see ``STRENGTH_DEPTHS``)."""
    d = np.asarray(depth, dtype=np.float64)
    return 4 - np.searchsorted(np.array(STRENGTH_DEPTHS[::-1]), d, side="right")


def to_dataset(predicted: pd.DataFrame, **attrs) -> xr.Dataset:
    """The predicted lines as a Dataset (dimension ``line``); ``attrs`` describe the star."""
    df = predicted.sort_values("vacuum_A", kind="stable")
    data = {k: ("line", df[k].to_numpy(dtype=t)) for k, t in STORED.items()}
    # variable-length strings: Zarr v3 has no specified fixed-width unicode type
    data["species"] = ("line", df["species"].astype(str).to_numpy().astype(object))
    ds = xr.Dataset(data)
    ds.attrs.update({k: v for k, v in attrs.items() if v is not None}, medium="vacuum", frame="rest")
    return ds


def from_dataset(ds: xr.Dataset) -> pd.DataFrame:
    """The stored lines as a DataFrame: ``species``, ``air_A``, ``vacuum_A``, ``lower_eV``,
    ``loggf``, ``predicted_depth``, ``strength``, ``kind`` (atomic), ``telluric`` (False);
    ``attrs`` the group's (``teff_k``, ``logg``, ``line_fwhm_kms``, ...)."""
    out = pd.DataFrame({"species": [str(s) for s in ds["species"].values.tolist()]})
    for k in STORED:
        out[k] = ds[k].values.astype(np.float64)
    out["strength"] = strength_of_depth(out["predicted_depth"]).astype(np.int64)
    out["kind"] = "atomic"
    out["telluric"] = False
    out = out.sort_values("vacuum_A", kind="stable").reset_index(drop=True)
    out.attrs.update(ds.attrs)
    return out
