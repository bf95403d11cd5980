"""Small spectrum files written for the build tests (invented test data, not check values)."""

from __future__ import annotations

import numpy as np

C_KMS = 299792.458  # km/s, exact (SI definition of the metre)


def log_wave(start_A: float, n: int, step_kms: float) -> np.ndarray:
    """n wavelengths (Å) spaced by step_kms in velocity."""
    return start_A * np.exp(np.arange(n) * step_kms / C_KMS)


def synthetic(n=20_000, start_A=5000.0, step_kms=2.0, seed=0, lines=40, noise=0.005):
    """(wave_A, flux, continuum): a sloped continuum with Gaussian absorption lines and noise."""
    rng = np.random.default_rng(seed)
    wave = log_wave(start_A, n, step_kms)
    cont = 100.0 * (1.0 + 0.2 * (wave - wave[0]) / (wave[-1] - wave[0]))
    prof = np.ones(n)
    for c in rng.uniform(wave[0], wave[-1], lines):
        d = rng.uniform(0.1, 0.8)
        sig = c * 6.0 / C_KMS
        prof *= 1.0 - d * np.exp(-0.5 * ((wave - c) / sig) ** 2)
    flux = cont * prof * (1.0 + rng.normal(0.0, noise, n))
    return wave, flux, cont


def write_csv(path, wave, flux, *, target=None, medium="vacuum", extra=None):
    """A CSV spectrum the text reader understands (``# key: value`` metadata lines)."""
    lines = []
    if target:
        lines.append(f"# target: {target}")
    if medium:
        lines.append(f"# medium: {medium}")
    for k, v in (extra or {}).items():
        lines.append(f"# {k}: {v}")
    lines.append("wavelength_A,flux")
    body = np.column_stack([wave, flux])
    with open(path, "w") as fh:
        fh.write("\n".join(lines) + "\n")
        np.savetxt(fh, body, fmt=["%.9f", "%.6e"], delimiter=",")
    return path


def star_files(folder, count=3, n=20_000, prefix="star", seed=0):
    """``count`` CSV spectra in ``folder``; returns their paths."""
    paths = []
    for i in range(count):
        w, f, _ = synthetic(n=n, start_A=4000.0 + 300 * i, seed=seed + i)
        paths.append(write_csv(folder / f"{prefix}{i}.csv", w, f, target=f"{prefix.title()} {i}"))
    return paths


def one_line_error_check():
    """``assert_one_line_error`` from tests/conftest.py (loaded by path: tests are not a package)."""
    import importlib.util
    from pathlib import Path

    spec = importlib.util.spec_from_file_location("_striae_conftest", Path(__file__).parents[1] / "conftest.py")
    mod = importlib.util.module_from_spec(spec)
    spec.loader.exec_module(mod)
    return mod.assert_one_line_error
