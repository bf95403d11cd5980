"""The class-sequence picture of the demo stars: normalised spectra stacked, hot at the top."""

from __future__ import annotations

import os

import numpy as np

#: Labelled regions: (label, lo Å, hi Å) in air, observed frame (lines shift by < 2 Å).
REGIONS = (
    ("Ca II K, H", 3925.0, 3975.0),
    ("H-delta", 4093.0, 4111.0),
    ("H-gamma", 4330.0, 4350.0),
    ("He I 4471", 4466.0, 4477.0),
    ("He II 4686", 4681.0, 4691.0),
    ("H-beta", 4851.0, 4871.0),
    ("TiO", 4954.0, 5010.0),
    ("Mg b", 5164.0, 5186.0),
    ("TiO", 5447.0, 5500.0),
    ("He I 5876 / Na D", 5872.0, 5899.0),
    ("TiO", 6158.0, 6210.0),
    ("H-alpha", 6552.0, 6574.0),
    ("TiO", 7053.0, 7110.0),
)


def _smoothed(wave, flux, lo_A, hi_A, resolving_power):
    """Normalised flux on a ln grid (2 km/s) from lo_A to hi_A, smoothed to ``resolving_power``."""
    from atlas.synth.broaden import convolve_same, instrument_pixels, log_grid

    grid = log_grid(lo_A, hi_A, 2.0)
    inside = (grid >= wave[0]) & (grid <= wave[-1])
    f = np.interp(grid, wave, flux)
    kern = instrument_pixels(resolving_power, 2.0)
    sm = convolve_same(np.where(inside, f, 0.0), kern)
    wt = convolve_same(inside.astype(float), kern)
    out = np.where(inside & (wt > 0.5), sm / np.maximum(wt, 1e-9), np.nan)
    return grid[::5], out[::5]


def _flatten(g):
    """Wavelengths and normalised flux of one generated exposure (echelle orders merged)."""
    w, f, c = g.wave_A, g.flux, g.continuum
    if w.ndim == 2:
        # keep the middle 70 % of each order (highest blaze), then sort
        n = w.shape[1]
        keep = slice(int(0.15 * n), int(0.85 * n))
        w, f, c = w[:, keep].ravel(), f[:, keep].ravel(), c[:, keep].ravel()
        order = np.argsort(w)
        w, f, c = w[order], f[order], c[order]
    return w, f / c


def class_plot(generated, path, *, lo_A: float = 3850.0, hi_A: float = 7300.0, resolving_power: float = 2500.0) -> None:
    """Write a PNG of every star's normalised spectrum, stacked from hot (top) to cool."""
    import matplotlib

    matplotlib.use("Agg")
    import matplotlib.pyplot as plt

    seen = {}
    for g in generated:  # one spectrum per star
        seen.setdefault(g.obs.name, g)
    stars = sorted(seen.values(), key=lambda g: -g.obs.teff_k)
    fig, ax = plt.subplots(figsize=(16, 2.0 + 1.25 * len(stars)), dpi=100)
    step = 1.05
    top = step * (len(stars) - 1) + 1.25
    for _lab, a, b in REGIONS:
        ax.axvspan(a, b, color="0.88", zorder=0, lw=0)
    for i, g in enumerate(stars):
        w, nf = _flatten(g)
        wb, fb = _smoothed(w, nf, lo_A, hi_A, resolving_power)
        off = step * (len(stars) - 1 - i)
        ax.plot(wb, fb + off, lw=0.8, color="black")
        ax.text(hi_A + 15, off + 0.85, f"{g.obs.spectral_class}\n{g.obs.teff_k:,.0f} K", va="center", fontsize=9)
        ax.text(lo_A + 5, off + 1.02, g.obs.name, fontsize=8, color="0.3")
    last_x, level = -1e9, 0
    for lab, a, b in REGIONS:
        x = 0.5 * (a + b)
        level = (level + 1) % 2 if x - last_x < 150 else 0
        ax.text(x, top + 0.13 * level, lab, ha="center", va="bottom", fontsize=9)
        last_x = x
    ax.set_xlim(lo_A, hi_A + 190)
    ax.set_ylim(-0.05, top + 0.35)
    ax.set_xlabel(f"observed wavelength (Å; air, except the O star in vacuum), smoothed to R = {resolving_power:,.0f} for this overview")
    ax.set_ylabel("flux / continuum, offset by star")
    ax.set_title("Invented demo stars (synthetic spectra), hottest at the top")
    ax.set_yticks([])
    fig.tight_layout()
    tmp = f"{path}.tmp.png"
    fig.savefig(tmp, metadata={"Software": None})
    plt.close(fig)
    os.replace(tmp, path)
