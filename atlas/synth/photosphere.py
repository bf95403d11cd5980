"""One representative layer of a stellar photosphere: temperature, pressures, densities.

The model is a one-layer ("reversing layer") picture: lines and continuum are
evaluated at a single temperature and pressure per star.  Temperature ``t_k`` in K,
pressures in dyn cm^-2, number densities in cm^-3.

* Layer temperature: the grey Eddington relation T^4 = 3/4 Teff^4 (tau + 2/3) at a
  typical optical line-forming depth tau = 0.2 (Eddington 1926; Gray 2005, ch. 9;
  the choice of tau is common practice for a one-layer model).
* Electron and gas pressure of dwarfs (log g = 4.5) against Teff: a smooth table
  after the trend of model photospheres shown in Gray (2005), ch. 9 (Pe and Pg near
  tau_5000 ~ 0.2-0.5 versus Teff), typed **from memory** and rounded; scaled to
  other gravities as Pe, Pg proportional to g^(1/2) (from memory, a rough mean of the
  g^(1/3)..g^(2/3) scalings quoted by Gray for cool photospheres).

References
----------
Gray, D. F., *The Observation and Analysis of Stellar Photospheres*, 3rd ed. (2005), ch. 9.
Eddington, A. S. (1926), *The Internal Constitution of the Stars* (grey atmosphere).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from atlas.synth.atoms import _K_B_CGS, abundance

#: Teff (K) and log10 Pe, log10 Pg (dyn cm^-2) of a log g = 4.5 photosphere (from memory).
_TEFF = np.array([2500, 3000, 3500, 4000, 4500, 5000, 5800, 6500, 7500, 8500, 10000, 15000, 20000, 30000, 40000, 50000.0])
_LOG_PE = np.array([-0.3, 0.0, 0.3, 0.55, 0.8, 1.05, 1.4, 1.7, 2.1, 2.4, 2.6, 2.9, 3.0, 3.1, 3.2, 3.25])
_LOG_PG = np.array([5.35, 5.3, 5.2, 5.1, 5.0, 4.9, 4.8, 4.6, 4.35, 4.15, 3.9, 3.7, 3.7, 3.8, 3.9, 4.0])

#: Optical depth of the representative layer (common practice for a one-layer model).
TAU_LAYER = 0.2

#: Gravity of the tabulated photospheres (cgs, log10).
LOGG_REF = 4.5


def layer_temperature_k(teff_k: float, tau: float = TAU_LAYER) -> float:
    """Temperature (K) at optical depth ``tau`` of a grey Eddington atmosphere.

    References
    ----------
    Eddington (1926); Gray (2005), eq. 9.8: T^4 = 3/4 Teff^4 (tau + 2/3).
    """
    return float(teff_k) * (0.75 * (tau + 2.0 / 3.0)) ** 0.25


def log_pe(teff_k: float, logg: float = LOGG_REF) -> float:
    """log10 electron pressure (dyn cm^-2) of the representative layer (from memory, see module doc)."""
    return float(np.interp(teff_k, _TEFF, _LOG_PE)) + 0.5 * (logg - LOGG_REF)


def log_pg(teff_k: float, logg: float = LOGG_REF) -> float:
    """log10 gas pressure (dyn cm^-2) of the representative layer (from memory, see module doc)."""
    return float(np.interp(teff_k, _TEFF, _LOG_PG)) + 0.5 * (logg - LOGG_REF)


@dataclass(frozen=True)
class Layer:
    """The representative layer of one star: T (K), Pe and Pg (dyn cm^-2), densities (cm^-3)."""

    teff_k: float
    logg: float
    t_k: float
    pe_dyn: float
    pg_dyn: float

    @property
    def n_e(self) -> float:
        """Electron number density (cm^-3): Pe / k T."""
        return self.pe_dyn / (_K_B_CGS * self.t_k)

    @property
    def n_h(self) -> float:
        """Hydrogen nuclei per cm^3: heavy particles (Pg - Pe) / k T shared with helium."""
        heavy = max(self.pg_dyn - self.pe_dyn, 0.1 * self.pg_dyn) / (_K_B_CGS * self.t_k)
        return heavy / (1.0 + abundance("He"))


def layer(teff_k: float, logg: float = LOGG_REF) -> Layer:
    """The representative layer of a star with ``teff_k`` (K) and ``logg`` (cgs)."""
    return Layer(
        teff_k=float(teff_k),
        logg=float(logg),
        t_k=layer_temperature_k(teff_k),
        pe_dyn=10.0 ** log_pe(teff_k, logg),
        pg_dyn=10.0 ** log_pg(teff_k, logg),
    )
