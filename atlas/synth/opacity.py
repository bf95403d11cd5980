"""Continuous opacity per hydrogen nucleus (cm^2) of the representative layer.

Three sources, enough to set the contrast of lines from M to O stars:

* H- bound-free, cross-section taken as a constant 4e-17 cm^2 per ion across
  3,800-9,000 Å (its peak value near 8,500 Å, Wishart 1979, typed **from memory**;
  it falls to about half near 4,000 Å, neglected here), ion density from the Saha
  equation with the 0.754 eV affinity.
* H I bound-free from levels n = 2..8, Kramers' hydrogenic cross-section
  a_n(lambda) = 1.044e-26 lambda^3 / n^5 cm^2 (lambda in Å, Gaunt factor 1) below the
  edge of each level, level populations from Boltzmann (Gray 2005, eq. 8.4 and 8.8).
* Thomson scattering by free electrons, sigma_T from astropy.
H- free-free, H I free-free, helium and metal bound-free are left out (a
simplification; they change the continuum level by tens of per cent).

References
----------
Gray, D. F., *The Observation and Analysis of Stellar Photospheres*, 3rd ed. (2005), ch. 8.
Wishart, A. W. (1979), MNRAS 187, 59P (H- photo-detachment cross-section).
Kramers, H. A. (1923), Phil. Mag. 46, 836.
"""

from __future__ import annotations

import numpy as np
from astropy import constants as const

from atlas.synth.atoms import (
    K_B_EV,
    hminus_per_hi,
    hydrogen_neutral_fraction,
    ionisation_energies,
)
from atlas.synth.photosphere import Layer

SIGMA_T_CM2 = const.sigma_T.cgs.value
HC_EV_A = (const.h * const.c).to_value("eV Angstrom")  # 12398.4 eV Å
HMINUS_SIGMA_CM2 = 4.0e-17  # from memory (Wishart 1979, near its peak)
HMINUS_EDGE_A = 16419.0  # HC / 0.754 eV
CHI_H_EV = ionisation_energies("H")[0]


def stimulated_factor(wave_A, t_k):
    """1 - exp(-h c / lambda k T): correction for stimulated emission (Gray 2005, ch. 8)."""
    return -np.expm1(-HC_EV_A / (np.asarray(wave_A, dtype=np.float64) * K_B_EV * t_k))


def kappa_continuum(wave_A, lay: Layer) -> np.ndarray:
    """Continuous opacity per hydrogen nucleus (cm^2) at ``wave_A`` (Å) in layer ``lay``."""
    w = np.asarray(wave_A, dtype=np.float64)
    t, pe = lay.t_k, lay.pe_dyn
    f_hi = hydrogen_neutral_fraction(t, pe)
    stim = stimulated_factor(w, t)
    # H- bound-free.
    k_hm = np.where(w < HMINUS_EDGE_A, HMINUS_SIGMA_CM2, 0.0) * hminus_per_hi(t, pe) * f_hi * stim
    # H I bound-free from n = 2..8 (Kramers, Gaunt factor 1).
    k_h = np.zeros_like(w)
    for n in range(2, 9):
        chi_n = CHI_H_EV * (1.0 - 1.0 / n**2)  # excitation energy of level n
        edge_A = HC_EV_A / (CHI_H_EV / n**2)
        pop = 2.0 * n**2 * np.exp(-chi_n / (K_B_EV * t)) / 2.0  # N_n / N_HI, U(H I) = 2
        k_h += np.where(w <= edge_A, 1.044e-26 * w**3 / n**5, 0.0) * pop
    k_h *= f_hi * stim
    # Thomson scattering: free electrons per H nucleus.
    k_e = SIGMA_T_CM2 * lay.n_e / lay.n_h
    return k_hm + k_h + k_e
