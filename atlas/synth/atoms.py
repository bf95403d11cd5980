"""Atomic data and LTE populations: abundances, ionization energies, Saha and Boltzmann.

Temperatures in K, electron pressure ``pe_dyn`` in dyn cm^-2, energies in eV.

Data (each table says where it comes from):

* Abundances log eps (log N/N_H + 12): Asplund, Grevesse, Sauval & Scott (2009),
  ARA&A 47, 481, table 1 (photospheric values), typed **from memory**.
* Ionization energies: NIST Atomic Spectra Database (ground-state ionization
  energies), typed **from memory** (rounded to 0.01 eV).
* Partition functions: constant values, the ground-term statistical weight or an
  approximate value near 5000-6000 K (after the tables in Gray, *The Observation and
  Analysis of Stellar Photospheres*, appendix D), typed **from memory**; their change
  with temperature is neglected, a simplification of this model.

References
----------
Saha, M. N. (1920), Phil. Mag. 40, 472 (ionization equilibrium).
Gray, D. F., *The Observation and Analysis of Stellar Photospheres*, 3rd ed. (2005),
ch. 1 and 8 (Boltzmann and Saha equations in the forms used here).
"""

from __future__ import annotations

import math

import numpy as np
from astropy import constants as const

K_B_EV = const.k_B.to_value("eV/K")  # eV/K
_K_B_CGS = const.k_B.cgs.value
_H_CGS = const.h.cgs.value
_M_E_CGS = const.m_e.cgs.value
AMU_G = const.u.cgs.value

#: symbol: (log eps, mass in amu, ionization energies eV (I, II, III, ...),
#: partition functions (I, II, III, ...)); all typed from memory (see module doc).
ELEMENTS: dict[str, tuple[float, float, tuple[float, ...], tuple[float, ...]]] = {
    "H": (12.00, 1.008, (13.60,), (2.0, 1.0)),
    "He": (10.93, 4.003, (24.59, 54.42), (1.0, 2.0, 1.0)),
    "Li": (1.05, 6.94, (5.39, 75.64), (2.0, 1.0, 2.0)),
    "C": (8.43, 12.011, (11.26, 24.38, 47.89, 64.49), (9.3, 5.9, 1.0, 2.0, 1.0)),
    "N": (7.83, 14.007, (14.53, 29.60, 47.45, 77.47), (4.0, 9.0, 5.9, 1.0, 2.0)),
    "O": (8.69, 15.999, (13.62, 35.12, 54.94, 77.41), (8.8, 4.0, 9.0, 5.8, 1.0)),
    "Na": (6.24, 22.990, (5.14, 47.29), (2.0, 1.0, 6.0)),
    "Mg": (7.60, 24.305, (7.65, 15.04, 80.14), (1.0, 2.0, 1.0, 6.0)),
    "Al": (6.45, 26.982, (5.99, 18.83, 28.45), (5.8, 1.0, 2.0, 1.0)),
    "Si": (7.51, 28.085, (8.15, 16.35, 33.49, 45.14), (9.3, 5.7, 1.0, 2.0, 1.0)),
    "S": (7.12, 32.06, (10.36, 23.34, 34.86), (8.8, 4.0, 9.0, 6.0)),
    "K": (5.03, 39.098, (4.34, 31.63), (2.0, 1.0, 6.0)),
    "Ca": (6.34, 40.078, (6.11, 11.87, 50.91), (1.0, 2.0, 1.0, 6.0)),
    "Sc": (3.15, 44.956, (6.56, 12.80, 24.76), (10.0, 22.0, 10.0, 1.0)),
    "Ti": (4.95, 47.867, (6.83, 13.58, 27.49), (30.0, 55.0, 23.0, 10.0)),
    "V": (3.93, 50.942, (6.75, 14.62, 29.31), (45.0, 35.0, 25.0, 20.0)),
    "Cr": (5.64, 51.996, (6.77, 16.49, 30.96), (10.0, 7.0, 25.0, 20.0)),
    "Mn": (5.43, 54.938, (7.43, 15.64, 33.67), (6.0, 7.0, 10.0, 20.0)),
    "Fe": (7.50, 55.845, (7.90, 16.20, 30.65), (27.0, 42.0, 25.0, 20.0)),
    "Co": (4.99, 58.933, (7.88, 17.08, 33.50), (30.0, 28.0, 20.0, 20.0)),
    "Ni": (6.22, 58.693, (7.64, 18.17, 35.19), (30.0, 10.0, 20.0, 20.0)),
    "Sr": (2.87, 87.62, (5.69, 11.03, 42.89), (1.0, 2.0, 1.0, 6.0)),
    "Y": (2.21, 88.906, (6.22, 12.22, 20.52), (10.0, 13.0, 10.0, 1.0)),
    "Zr": (2.58, 91.224, (6.63, 13.13, 23.17), (40.0, 50.0, 20.0, 10.0)),
    "Cu": (4.19, 63.546, (7.73, 20.29, 36.84), (2.0, 1.0, 9.0, 1.0)),
    "Zn": (4.56, 65.38, (9.39, 17.96, 39.72), (1.0, 2.0, 1.0, 1.0)),
    "Eu": (0.52, 151.96, (5.67, 11.24, 24.92), (8.0, 15.0, 8.0, 1.0)),
    "Ba": (2.18, 137.33, (5.21, 10.00, 35.84), (2.0, 4.0, 1.0, 6.0)),
}

#: Roman numerals for ionization stages (``Fe II`` = stage 1, once ionized).
ROMAN = ("I", "II", "III", "IV", "V", "VI")

#: Ionization energy of the negative hydrogen ion H- (eV): NIST ASD electron
#: affinity of H, 0.754 eV, typed from memory.
HMINUS_EV = 0.754


def parse_species(species: str) -> tuple[str, int] | None:
    """``"Fe II"`` -> ``("Fe", 1)``; None when the text is not an atom with a stage we know."""
    parts = str(species).split()
    if len(parts) != 2 or parts[0] not in ELEMENTS or parts[1] not in ROMAN:
        return None
    stage = ROMAN.index(parts[1])
    if stage >= len(ELEMENTS[parts[0]][3]):
        return None
    return parts[0], stage


def abundance(symbol: str) -> float:
    """Number of atoms of ``symbol`` per hydrogen nucleus (Asplund et al. 2009, from memory)."""
    return 10.0 ** (ELEMENTS[symbol][0] - 12.0)


def mass_g(symbol: str) -> float:
    """Atomic mass of ``symbol`` in grams."""
    return ELEMENTS[symbol][1] * AMU_G


def saha_phi(t_k, chi_ev, u_lower, u_upper):
    """Saha function Phi(T) = Pe * N_upper / N_lower (dyn cm^-2) for one ionization step.

    Phi = 2 (U_upper / U_lower) (2 pi m_e k T / h^2)^(3/2) k T exp(-chi / k T),
    constants from astropy (CODATA).

    References
    ----------
    Saha (1920); Gray (2005), eq. 1.20.
    """
    t = np.asarray(t_k, dtype=np.float64)
    thermal = (2.0 * math.pi * _M_E_CGS * _K_B_CGS * t / _H_CGS**2) ** 1.5
    return 2.0 * (u_upper / u_lower) * thermal * _K_B_CGS * t * np.exp(-chi_ev / (K_B_EV * t))


def stage_fractions(symbol: str, t_k: float, pe_dyn: float) -> np.ndarray:
    """Fractions of ``symbol`` in each ionization stage (I, II, ...) in LTE; they sum to 1.

    References
    ----------
    Saha (1920); Gray (2005), ch. 1.
    """
    _, _, chis, us = ELEMENTS[symbol]
    logs = [0.0]  # log of N_stage / N_I
    for i, chi in enumerate(chis):
        phi = saha_phi(t_k, chi, us[i], us[i + 1])
        logs.append(logs[-1] + math.log(max(float(phi), 1e-300) / pe_dyn))
    logs = np.array(logs)
    w = np.exp(logs - logs.max())
    return w / w.sum()


def boltzmann_factor(t_k, lower_ev):
    """exp(-E_lower / k T): with g_lower / U gives the level's share of its stage.

    References
    ----------
    Boltzmann; Gray (2005), eq. 1.18.
    """
    return np.exp(-np.asarray(lower_ev, dtype=np.float64) / (K_B_EV * np.asarray(t_k)))


def partition_function(symbol: str, stage: int) -> float:
    """Partition function of ``symbol`` in ``stage`` (0 = neutral): a constant (see module doc)."""
    return ELEMENTS[symbol][3][stage]


def hydrogen_neutral_fraction(t_k: float, pe_dyn: float) -> float:
    """Fraction of hydrogen that is neutral (H I) in LTE, from the Saha equation."""
    return float(stage_fractions("H", t_k, pe_dyn)[0])


def hminus_per_hi(t_k: float, pe_dyn: float) -> float:
    """N(H-) / N(H I) in LTE: Pe / Phi(H-) with U(H-) = 1, U(H I) = 2.

    References
    ----------
    Gray (2005), ch. 8 (the negative hydrogen ion); Saha (1920).
    """
    return pe_dyn / float(saha_phi(t_k, HMINUS_EV, 1.0, 2.0))
