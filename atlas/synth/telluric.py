"""Telluric (Earth's atmosphere) absorption in the observer's frame: O2 and H2O lines.

The line list gives telluric bands as pairs of rows (``band start`` and ``band end``
in their source text); any other ``telluric`` row is one line.  A band is filled
with a schematic forest of lines, never shifted by the star's velocity: O2 bands as
a regular series of doublets whose spacing grows away from the head (the P branch
of a band, Herzberg 1950), H2O bands as an irregular forest (about one line per Å,
positions and strengths from a generator started at the band's start wavelength, so
every run is the same).  A line's zenith optical depth at centre comes from the row's
coarse ``strength`` class (1 -> 1.5, 2 -> 0.5, 3 -> 0.15,
4 -> 0.04: our own rough scale, not a measurement), scaled by the airmass (and, for
H2O, by the precipitable water relative to 10 mm).  The profile is a Voigt with
Doppler width of air at 260 K and a pressure HWHM of 0.07 cm^-1 (a typical
air-broadening coefficient at 1 atm, from memory of the HITRAN database's range
0.05-0.1 cm^-1 atm^-1).  Transmission = exp(-tau) (Beer-Lambert law).

References
----------
Herzberg, G. (1950), *Spectra of Diatomic Molecules* (band structure).
Gordon, I. E. et al. (2022), JQSRT 277, 107949 (HITRAN2020: line shape conventions).
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd

from atlas.synth.atoms import _K_B_CGS, AMU_G
from atlas.synth.profiles import voigt
from atlas.synth.strengths import C_KMS

TAU_BY_STRENGTH = {1: 1.5, 2: 0.5, 3: 0.15, 4: 0.04}
AIR_T_K = 260.0
PRESSURE_HWHM_CM1 = 0.07
MASS_AMU = {"O2": 32.0, "H2O": 18.0}


def _forest(species: str, start_A: float, end_A: float, tau0: float):
    """Centres (Å) and central optical depths of the schematic lines of one band."""
    if species == "O2":
        n = 36
        k = np.arange(n, dtype=np.float64)
        first = start_A + (end_A - start_A) * (k / n) ** 0.8
        c = np.concatenate([first, first + 0.9])
        t = np.concatenate([np.exp(-k / 14.0)] * 2) * tau0
        return c, t
    rng = np.random.default_rng(int(round(start_A)))
    n = max(int(end_A - start_A), 1)
    c = np.sort(rng.uniform(start_A, end_A, n))
    t = tau0 * 10.0 ** rng.uniform(-2.0, 0.0, n)
    return c, t


def telluric_lines(lines: pd.DataFrame):
    """(species, centre Å, zenith central optical depth) of every telluric line drawn."""
    rows = lines[lines["kind"].astype(str) == "telluric"].sort_values("vacuum_A")
    out = []
    open_band: dict[str, float] = {}
    for _, row in rows.iterrows():
        sp = str(row["species"])
        c = float(row["vacuum_A"])
        strength = pd.to_numeric(row["strength"], errors="coerce")
        t0 = TAU_BY_STRENGTH[int(np.clip(strength if pd.notna(strength) else 3, 1, 4))]
        src = str(row.get("source", ""))
        if "band start" in src:
            open_band[sp] = c
        elif "band end" in src and sp in open_band:
            cs, ts = _forest(sp, open_band.pop(sp), c, t0)
            out.extend((sp, ci, ti) for ci, ti in zip(cs, ts, strict=True))
        else:
            out.append((sp, c, t0))
    return out


def transmission(wave_A: np.ndarray, lines: pd.DataFrame, *, airmass: float = 1.2, pwv_mm: float = 10.0) -> np.ndarray:
    """Telluric transmission (0..1) at observed vacuum wavelengths ``wave_A`` (Å, sorted)."""
    w = np.asarray(wave_A, dtype=np.float64)
    tau = np.zeros_like(w)
    for sp, c, t0 in telluric_lines(lines):
        if not (w[0] - 3.0 < c < w[-1] + 3.0):
            continue
        t0 = t0 * airmass * (pwv_mm / 10.0 if sp == "H2O" else 1.0)
        m = MASS_AMU.get(sp, 30.0) * AMU_G
        sigma = c * math.sqrt(_K_B_CGS * AIR_T_K / m) / 1e5 / C_KMS
        gamma = (c * 1e-8) ** 2 * PRESSURE_HWHM_CM1 * 1e8
        a, b = np.searchsorted(w, [c - 2.0, c + 2.0])
        tau[a:b] += t0 * voigt(w[a:b] - c, sigma, gamma) / voigt(0.0, sigma, gamma)
    return np.exp(-tau)
