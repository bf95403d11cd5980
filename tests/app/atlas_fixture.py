"""A small atlas written by hand, following DEVELOPERS.md "Atlas on disk" exactly.

Used by the app tests (and the benchmark) so they do not depend on the build.
The spectrum is invented test data: a flat continuum with Gaussian absorption
lines at chosen vacuum rest wavelengths, shifted by a chosen radial velocity.
"""

from __future__ import annotations

import hashlib
import json
import os
from pathlib import Path

import numpy as np
import xarray as xr

C_KMS = 299_792.458  # speed of light, km/s (CODATA exact value)


def log_grid(start_A: float, n: int, step_kms: float) -> np.ndarray:
    """Wavelengths (Å) equally spaced in velocity: step_kms between samples."""
    return start_A * np.exp(np.arange(n) * (step_kms / C_KMS))


def make_star_arrays(n_samples, start_A=5000.0, step_kms=1.0, rv_kms=0.0,
                     lines_vac_A=(), depth=0.6, width_kms=6.0, seed=1):
    """Invented test spectrum: (wave_A vacuum observed, flux, continuum)."""
    wave = log_grid(start_A, n_samples, step_kms)
    cont = 1000.0 * (1.0 + 0.1 * np.sin(np.linspace(0, 3, n_samples)))
    norm = np.ones(n_samples)
    f = np.sqrt((1 + rv_kms / C_KMS) / (1 - rv_kms / C_KMS))
    for lam in lines_vac_A:
        centre = lam * f
        if not (wave[0] < centre < wave[-1]):
            continue
        i = np.searchsorted(wave, centre)
        sl = slice(max(0, i - 200), i + 200)
        v = (wave[sl] / centre - 1.0) * C_KMS
        norm[sl] *= 1.0 - depth * np.exp(-0.5 * (v / width_kms) ** 2)
    rng = np.random.default_rng(seed)
    norm = norm + rng.normal(0, 0.002, n_samples)
    return wave, norm * cont, cont


def write_star(atlas_dir: Path, star_id: str, wave, flux, cont, n_pix=4000):
    """Write one star store (root group only: atlas.lod derives envelopes when a store has none); returns (store_rel, n_strips)."""
    n = len(wave)
    n_strip = -(-n // n_pix)
    pad = n_strip * n_pix - n

    def padded(a, fill):
        return np.concatenate([a, np.full(pad, fill, dtype=a.dtype)]).reshape(n_strip, n_pix)

    wave2 = padded(wave.astype("f8"), np.nan)
    flux2 = padded(flux.astype("f8"), np.nan)
    cont2 = padded(cont.astype("f8"), np.nan)
    norm2 = flux2 / cont2
    mask2 = ~np.isfinite(flux2)
    digest = hashlib.sha256(flux.tobytes()).hexdigest()[:8]
    rel = f"stars/{star_id}-{digest}.zarr"
    path = atlas_dir / rel
    chunks = {"strip": min(4, n_strip), "pixel": n_pix}
    root = xr.Dataset(
        {
            "flux": (("strip", "pixel"), flux2.astype("f4")),
            "uncertainty": (("strip", "pixel"), (np.sqrt(np.abs(flux2)) ).astype("f4")),
            "continuum": (("strip", "pixel"), cont2.astype("f4")),
            "norm_flux": (("strip", "pixel"), norm2.astype("f4")),
            "mask": (("strip", "pixel"), mask2),
            "strip_min_A": (("strip",), np.nanmin(wave2, axis=1)),
            "strip_max_A": (("strip",), np.nanmax(wave2, axis=1)),
        },
        coords={"wavelength": (("strip", "pixel"), wave2, {"units": "Angstrom", "medium": "vacuum"})},
    )
    root.chunk(chunks).to_zarr(path, mode="w", consolidated=True)
    return rel, n_strip


def write_atlas(atlas_dir, stars, strip_kms=4000.0):
    """Write ``atlas.json`` and one store per star.

    ``stars`` is a list of dicts: id, name, n_samples, rv_kms, barycentric_kms and
    optional start_A, lines_vac_A, plus any record fields to set.
    """
    atlas_dir = Path(atlas_dir)
    (atlas_dir / "stars").mkdir(parents=True, exist_ok=True)
    records = []
    for s in stars:
        bary = s.get("barycentric_kms")
        rv = s.get("rv_kms")
        # observed = rest shifted by rv (barycentric) and back by the barycentric correction
        obs_rv = 0.0
        if rv is not None:
            f_rv = np.sqrt((1 + rv / C_KMS) / (1 - rv / C_KMS))
            f_b = np.sqrt((1 + (bary or 0) / C_KMS) / (1 - (bary or 0) / C_KMS))
            obs_rv = C_KMS * ((f_rv / f_b) ** 2 - 1) / ((f_rv / f_b) ** 2 + 1)
        wave, flux, cont = make_star_arrays(
            s["n_samples"], start_A=s.get("start_A", 5000.0), rv_kms=obs_rv,
            lines_vac_A=s.get("lines_vac_A", ()), step_kms=s.get("step_kms", 1.0),
        )
        rel, n_strip = write_star(atlas_dir, s["id"], wave, flux, cont, n_pix=s.get("n_pix", 4000))
        rec = {
            "id": s["id"],
            "name": s.get("name", s["id"]),
            "store": rel,
            "source": f"{s['id']}.fits",
            "source_sha256": "0" * 64,
            "wavelength_min_A": float(wave[0]),
            "wavelength_max_A": float(wave[-1]),
            "medium": "vacuum",
            "samples": int(len(wave)),
            "strips": int(n_strip),
            "barycentric_kms": bary,
            "rv_kms": rv,
            "rv_err_kms": s.get("rv_err_kms"),
            "teff_k": s.get("teff_k"),
            "spectral_class": s.get("spectral_class"),
            "snr": s.get("snr"),
            "resolving_power": s.get("resolving_power"),
            "colour_srgb": s.get("colour_srgb"),
        }
        records.append(rec)
    cat = {
        "format": 1,
        "tool_version": "test",
        "built_utc": "2026-01-01T00:00:00Z",
        "options": {"strip_kms": strip_kms},
        "stars": records,
    }
    tmp = atlas_dir / "atlas.json.tmp"
    tmp.write_text(json.dumps(cat, indent=1))
    os.replace(tmp, atlas_dir / "atlas.json")
    return atlas_dir


#: Invented test stars: (id/target, samples, start Å, RV km/s injected)
TEST_STARS = (("test-star-a", 60_000, 5000.0, 30.0), ("test-star-b", 24_000, 6000.0, -12.0))


def write_csv(path, wave, flux, target):
    """A CSV spectrum with ``# key: value`` metadata lines (vacuum wavelengths)."""
    with open(path, "w") as fh:
        fh.write(f"# target: {target}\n# medium: vacuum\nwavelength_A,flux\n")
        np.savetxt(fh, np.column_stack([wave, flux]), fmt=["%.9f", "%.6e"], delimiter=",")
    return path


def build_test_atlas(folder, stars=TEST_STARS):
    """Write invented CSV spectra with absorption at line-list wavelengths and build them."""
    from atlas.build import build_atlas
    from atlas.lines import load_lines

    folder = Path(folder)
    lines = load_lines()
    stellar = lines[~lines["telluric"] & (lines["strength"] <= 2)]["vacuum_A"].to_numpy()
    paths = []
    for target, n, start, rv in stars:
        wave, flux, _ = make_star_arrays(n, start_A=start, rv_kms=rv, lines_vac_A=stellar)
        paths.append(write_csv(folder / f"{target}.csv", wave, flux, target))

    out = folder / "atlas"
    build_atlas([str(p) for p in paths], str(out), progress=False)
    set_known_velocities(out)
    return out


#: Velocities written into the test catalog (km/s).  25 + (-(-5)) = 30 km/s observed
#: shift for star a, as injected; -7 - 5 = -12 km/s for star b.
KNOWN = {"test-star-a": (25.0, -5.0), "test-star-b": (-7.0, 5.0)}


def set_known_velocities(atlas_dir):
    """Replace the catalog's measured rv_kms / barycentric_kms by the injected values,
    so the viewer's marker positions can be checked exactly (atomic replace)."""
    cat_path = Path(atlas_dir) / "atlas.json"
    cat = json.loads(cat_path.read_text())
    for rec in cat["stars"]:
        if rec["id"] in KNOWN:
            rec["rv_kms"], rec["barycentric_kms"] = KNOWN[rec["id"]]
            rec["rv_err_kms"] = 0.1
    tmp = cat_path.with_suffix(".tmp")
    tmp.write_text(json.dumps(cat, indent=1))
    os.replace(tmp, cat_path)
