"""Diatomic molecules in the representative layer and their schematic absorption bands.

Dissociation equilibrium of AB <-> A + B (Gray 2005, ch. 8; Tatum 1966):

    N_A N_B / N_AB = (2 pi mu k T / h^2)^(3/2) (U_A U_B / U_AB) exp(-D0 / k T)

with U_AB = g_el * (k T / h c B) * 1 / (1 - exp(-h c omega / k T)) (rigid rotor and
harmonic oscillator).  The partner B (O, H, C or N) is taken as free at its
abundance (for O: oxygen not locked in CO, A_O - A_C, common practice for
oxygen-rich cool stars); A is the neutral atom from the Saha fractions.

Molecular constants (D0 in eV, B and omega in cm^-1, ground-state electronic
weight) from Huber & Herzberg (1979), *Constants of Diatomic Molecules*, typed
**from memory** and rounded.

A band is drawn from its head as the envelope of one Fortrat branch,
lambda_J = head +/- a J^2 with rotational line strengths proportional to
(2J + 1) exp(-J(J+1) hcB / kT): per unit wavelength that envelope is an exponential,
eta = (S / L) exp(-|lambda - head| / L) with L = a J_T^2, J_T^2 = kT / hcB (Herzberg 1950),
so the band has a sharp edge at the head and fades away from it: the sawtooth of
molecular bands in cool stars.  The rotational lines are not drawn one by one (real
bands overlap many branches and sub-bands); a ripple 1 + 0.5 cos(2 pi J(lambda)) at the
positions of the branch's lines gives the band its texture.  The head is smoothed by
the Doppler width.  L is ``BAND_SCALE_A`` per molecule (our own choice, 20-45 Å).
Bands fade to the red for TiO, VO, CaH and to the violet for CN, CH, MgH, C2
(from memory).  The band's total oscillator strength is a per-molecule value ``F_BAND``
(TiO and VO 0.01, CaH 0.004, CN and C2 0.002, MgH 0.002, CH 0.001: rough values
of the order of published band-system f-values, from memory) times a factor from
the coarse ``strength`` class of its head in the line list (1 -> 1, 2 -> 0.4,
3 -> 0.15, 4 -> 0.05: our own rough scale, not a measurement).  Carbon locked in CO
(D0 = 11.09 eV, from memory) is not available to CH, CN and C2.  It is a schematic
band, not a line-by-line molecular calculation.

References
----------
Gray, D. F., *The Observation and Analysis of Stellar Photospheres*, 3rd ed. (2005), ch. 8.
Tatum, J. B. (1966), Publ. Dom. Astrophys. Obs. 13, 1 (dissociation equilibria).
Huber, K. P. & Herzberg, G. (1979), *Constants of Diatomic Molecules*.
Herzberg, G. (1950), *Spectra of Diatomic Molecules* (band heads, Fortrat parabola).
"""

from __future__ import annotations

import math

import numpy as np
import pandas as pd
from astropy import constants as const
from scipy.special import erf

from atlas.synth.atoms import (
    _H_CGS,
    _K_B_CGS,
    K_B_EV,
    abundance,
    mass_g,
    partition_function,
    stage_fractions,
)
from atlas.synth.opacity import kappa_continuum, stimulated_factor
from atlas.synth.photosphere import Layer
from atlas.synth.strengths import R_E_CM, doppler_sigma_A

_C_CGS = const.c.cgs.value
_HC_K = _H_CGS * _C_CGS / _K_B_CGS  # cm K

#: molecule: (atom A, partner B, D0 eV, B cm^-1, omega cm^-1, g_el, fades to "red"/"violet")
MOLECULES: dict[str, tuple[str, str, float, float, float, float, str]] = {
    "TiO": ("Ti", "O", 6.87, 0.535, 1009.0, 6.0, "red"),
    "VO": ("V", "O", 6.44, 0.546, 1011.0, 4.0, "red"),
    "CaH": ("Ca", "H", 1.70, 4.23, 1298.0, 2.0, "red"),
    "MgH": ("Mg", "H", 1.34, 5.82, 1495.0, 2.0, "violet"),
    "CH": ("C", "H", 3.47, 14.19, 2858.0, 4.0, "violet"),
    "CN": ("C", "N", 7.72, 1.90, 2069.0, 2.0, "violet"),
    "C2": ("C", "C", 6.21, 1.82, 1855.0, 1.0, "violet"),
    "CO": ("C", "O", 11.09, 1.93, 2170.0, 1.0, "none"),
}

#: Band oscillator strength by coarse strength class of the head (our own rough scale).
F_BAND = {"TiO": 0.01, "VO": 0.01, "CaH": 0.004, "MgH": 0.002, "CH": 0.001, "CN": 0.002, "C2": 0.002}
CLASS_FACTOR = {1: 1.0, 2: 0.4, 3: 0.15, 4: 0.05}
BAND_SCALE_A = {"TiO": 45.0, "VO": 45.0, "CaH": 30.0, "MgH": 25.0, "CH": 20.0, "CN": 25.0, "C2": 25.0}


def molecular_partition(mol: str, t_k: float) -> float:
    """Rigid-rotor, harmonic-oscillator partition function of ``mol`` at ``t_k`` (K)."""
    _, _, _, b, omega, g_el, _ = MOLECULES[mol]
    rot = t_k / (_HC_K * b)
    vib = 1.0 / (1.0 - math.exp(-_HC_K * omega / t_k))
    return g_el * rot * vib


def equilibrium_constant(mol: str, t_k: float) -> float:
    """N_A N_B / N_AB (cm^-3) for molecule ``mol`` at ``t_k`` (K) (see module doc)."""
    a, b, d0, *_ = MOLECULES[mol]
    m_a, m_b = mass_g(a), mass_g(b)
    mu = m_a * m_b / (m_a + m_b)
    return (
        (2.0 * math.pi * mu * _K_B_CGS * t_k / _H_CGS**2) ** 1.5
        * partition_function(a, 0, t_k)
        * partition_function(b, 0, t_k)
        / molecular_partition(mol, t_k)
        * math.exp(-d0 / (K_B_EV * t_k))
    )


def _free_abundance(symbol: str, lay: Layer) -> float:
    """Atoms of ``symbol`` per H nucleus not locked in CO (C and O only; others all free)."""
    a_c, a_o = abundance("C"), abundance("O")
    if symbol not in ("C", "O"):
        return abundance(symbol)
    # CO forms from neutral C and O; O is in excess (A_O > A_C).
    x = (
        float(stage_fractions("O", lay.t_k, lay.pe_dyn)[0]) * float(stage_fractions("C", lay.t_k, lay.pe_dyn)[0])
        * (a_o - a_c) * lay.n_h / equilibrium_constant("CO", lay.t_k)
    )
    co = a_c * x / (1.0 + x)
    return a_c - co if symbol == "C" else a_o - co


def molecule_fraction(mol: str, lay: Layer) -> float:
    """N(molecule) per hydrogen nucleus in the layer (dissociation equilibrium, see module doc)."""
    a, b, *_ = MOLECULES[mol]
    t = lay.t_k
    n_b = _free_abundance(b, lay) * float(stage_fractions(b, t, lay.pe_dyn)[0]) * lay.n_h
    f_neutral = float(stage_fractions(a, t, lay.pe_dyn)[0])
    x = f_neutral * n_b / equilibrium_constant(mol, t)
    return _free_abundance(a, lay) * x / (1.0 + x)


def add_bands(wave_A: np.ndarray, eta: np.ndarray, lines: pd.DataFrame, lay: Layer, *, micro_kms: float = 1.5, eps: float = 3e-4) -> np.ndarray:
    """Add the opacity ratio of every molecular band head in ``lines`` to ``eta`` on ``wave_A`` (Å)."""
    rows = lines[(lines["kind"].astype(str) == "band_head") & lines["species"].astype(str).isin(list(F_BAND))]
    t = lay.t_k
    for _, row in rows.iterrows():
        mol = str(row["species"])
        head = float(row["vacuum_A"])
        strength = pd.to_numeric(row["strength"], errors="coerce")
        cls = int(np.clip(strength if pd.notna(strength) else 3, 1, 4))
        n_mol = molecule_fraction(mol, lay)
        kappa = float(kappa_continuum(head, lay))
        s_band = (
            math.pi * R_E_CM * (head * 1e-8) ** 2 * F_BAND[mol] * CLASS_FACTOR[cls] * n_mol
            * float(stimulated_factor(head, t)) / kappa * 1e8
        )  # Å
        scale = BAND_SCALE_A[mol]
        peak = s_band / scale
        if peak < eps:
            continue
        reach = scale * math.log(peak / eps)
        sign = 1.0 if MOLECULES[mol][6] == "red" else -1.0
        lo, hi = (head - 1.0, head + reach) if sign > 0 else (head - reach, head + 1.0)
        a, b = np.searchsorted(wave_A, [lo, hi])
        if b <= a:
            continue
        d = sign * (wave_A[a:b] - head)  # distance into the band (Å)
        jt2 = t / (_HC_K * MOLECULES[mol][3])
        a_fortrat = scale / jt2
        j = np.sqrt(np.clip(d, 0.0, None) / a_fortrat)
        mass = mass_g(MOLECULES[mol][0]) + mass_g(MOLECULES[mol][1])
        sig = float(doppler_sigma_A(head, t, mass, micro_kms))
        edge = 0.5 * (1.0 + erf(d / (math.sqrt(2.0) * sig)))
        eta[a:b] += peak * np.exp(-np.clip(d, 0.0, None) / scale) * (1.0 + 0.5 * np.cos(2.0 * math.pi * j)) * edge
    return eta
