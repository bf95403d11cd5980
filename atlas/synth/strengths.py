"""Line strengths and widths for one star: the integrated line-to-continuum opacity ratio.

For an atomic line of species X stage s, lower level energy chi (eV) and gf:

    S = pi r_e lambda^2 gf (A_X f_s(T, Pe) exp(-chi / kT) / U_s) (1 - e^{-hc/lambda kT}) / kappa_c

in Å: the line opacity per hydrogen nucleus integrated over wavelength, divided by
the continuous opacity per hydrogen nucleus (``atlas.synth.opacity``).  A line's
opacity ratio at wavelength lambda is ``eta = S * phi(lambda)`` with a normalised
profile phi (Å^-1); ``atlas.synth.model`` turns the summed eta into depth.

Widths:

* Doppler: b^2 = 2 k T / m + xi^2 (thermal plus microturbulence xi), Gaussian
  sigma = lambda b / (c sqrt 2) (Gray 2005, ch. 11).
* Lorentzian damping of metal lines: radiative (classical rate 0.2223 / lambda_cm^2
  s^-1, Gray 2005, eq. 11.14), van der Waals gamma_6 = 10^-7.8 N_H (T / 10^4)^0.3 and
  quadratic Stark gamma_4 = 10^-5.5 N_e (rad s^-1; typical per-perturber
  constants, typed **from memory**), HWHM = lambda^2 gamma / (4 pi c).
* Hydrogen: the linear Stark effect in the Holtsmark normal field
  F0 = 2.61 e N_e^(2/3); characteristic width
  dlambda_0 = 1.5 e a0 F0 [n_u (n_u - 1) - n_l (n_l - 1)] lambda^2 / (h c)
  (Gray 2005, ch. 11; typed from memory), used as the scale of a profile
  with Holtsmark-like wings proportional to dlambda^-5/2 (``atlas.synth.profiles``).

Lines with no ``loggf`` in the list get log gf from their coarse ``strength`` class
(1 -> 0.0, 2 -> -0.7, 3 -> -1.5, 4 -> -2.3; our own rough scale, not a measurement),
and lines with no ``lower_eV`` get 0 eV with resonance-line behaviour.

References
----------
Gray, D. F., *The Observation and Analysis of Stellar Photospheres*, 3rd ed. (2005),
ch. 11 (line absorption coefficient, broadening) and ch. 13 (curve of growth).
"""

from __future__ import annotations

import math
from dataclasses import dataclass

import numpy as np
import pandas as pd
from astropy import constants as const

from atlas.physics.constants import C_KMS
from atlas.synth.atoms import (
    _K_B_CGS,
    K_B_EV,
    abundance,
    boltzmann_factor,
    mass_g,
    parse_species,
    partition_function,
    stage_fractions,
)
from atlas.synth.opacity import HC_EV_A, kappa_continuum, stimulated_factor
from atlas.synth.photosphere import Layer

C_CGS = const.c.cgs.value
R_E_CM = (const.e.gauss**2 / (const.m_e * const.c**2)).cgs.value  # classical electron radius
E_ESU = const.e.gauss.value
A0_CM = const.a0.cgs.value
H_CGS = const.h.cgs.value

#: log gf for lines without one, by coarse strength class (our own rough scale).
LOGGF_BY_STRENGTH = {1: 0.0, 2: -0.7, 3: -1.5, 4: -2.3}

PROFILE_VOIGT = 0
PROFILE_HYDROGEN = 1


@dataclass(frozen=True)
class LineSet:
    """Per-line arrays for one star (all in Å, vacuum): centre, S, sigma, gamma, profile kind."""

    center_A: np.ndarray
    strength_A: np.ndarray  # integrated opacity ratio S (Å)
    sigma_A: np.ndarray  # Gaussian (Doppler) standard deviation
    gamma_A: np.ndarray  # Lorentzian HWHM (Voigt) or Stark scale (hydrogen)
    kind: np.ndarray  # PROFILE_VOIGT or PROFILE_HYDROGEN
    species: np.ndarray
    row: np.ndarray | None = None  # position of each line in the input table


    def __len__(self) -> int:
        return len(self.center_A)

    def take(self, idx) -> LineSet:
        """The lines at positions ``idx`` (indices or a boolean mask)."""
        row = None if self.row is None else self.row[idx]
        return LineSet(self.center_A[idx], self.strength_A[idx], self.sigma_A[idx], self.gamma_A[idx],
                       self.kind[idx], self.species[idx], row)


def doppler_sigma_A(wave_A, t_k: float, mass_grams, micro_kms: float):
    """Gaussian standard deviation (Å) of thermal plus microturbulent Doppler broadening."""
    b2 = 2.0 * _K_B_CGS * t_k / np.asarray(mass_grams) / 1e10 + micro_kms**2  # (km/s)^2
    return np.asarray(wave_A) * np.sqrt(b2) / (C_KMS * math.sqrt(2.0))


def damping_hwhm_A(wave_A, lay: Layer):
    """Lorentzian HWHM (Å) of a metal line: radiative + van der Waals + Stark (see module doc)."""
    w = np.asarray(wave_A, dtype=np.float64)
    gamma = 0.2223 / (w * 1e-8) ** 2
    gamma = gamma + 10.0**-7.8 * lay.n_h * (lay.t_k / 1e4) ** 0.3 + 10.0**-5.5 * lay.n_e
    return (w * 1e-8) ** 2 * gamma / (4.0 * math.pi * C_CGS) * 1e8


def hydrogen_levels(lower_ev, wave_A):
    """Principal quantum numbers (n_lower, n_upper) of a hydrogen line from E_lower and lambda."""
    chi = 13.598
    e_up = np.asarray(lower_ev) + HC_EV_A / np.asarray(wave_A)
    n_l = np.rint(1.0 / np.sqrt(np.clip(1.0 - np.asarray(lower_ev) / chi, 1e-6, None)))
    n_u = np.rint(1.0 / np.sqrt(np.clip(1.0 - e_up / chi, 1e-6, None)))
    return n_l, n_u


def stark_scale_A(wave_A, n_l, n_u, lay: Layer):
    """Characteristic linear-Stark width (Å) of a hydrogen line in the Holtsmark field (see module doc)."""
    f0 = 2.61 * E_ESU * lay.n_e ** (2.0 / 3.0)
    de = 1.5 * E_ESU * A0_CM * f0 * (n_u * (n_u - 1) - n_l * (n_l - 1))  # erg
    w_cm = np.asarray(wave_A) * 1e-8
    return w_cm**2 * de / (H_CGS * C_CGS) * 1e8


def atomic_lines(lines: pd.DataFrame, lay: Layer, *, micro_kms: float = 1.5) -> LineSet:
    """Strengths and widths of every atomic line of ``lines`` that this model knows.

    ``lines`` has the columns of ``atlas.lines.load_lines()``; rows of kind
    ``band_head`` or ``telluric`` and species we have no data for are skipped.
    """
    if len(lines) == 0:
        return _empty()
    pos = np.flatnonzero(lines["kind"].astype(str).to_numpy() == "atomic")
    rows = lines.iloc[pos]
    codes, names = pd.factorize(rows["species"].astype(str))
    parsed = [parse_species(s) for s in names]
    known = np.array([p is not None for p in parsed] + [False], dtype=bool)
    ok = known[codes]
    if not ok.any():
        return _empty()
    pos, rows, codes = pos[ok], rows[ok], codes[ok]
    wave = rows["vacuum_A"].to_numpy(dtype=np.float64)
    loggf = pd.to_numeric(rows["loggf"], errors="coerce").to_numpy(dtype=np.float64)
    cls = pd.to_numeric(rows["strength"], errors="coerce").fillna(3).clip(1, 4).astype(int).to_numpy()
    fallback = np.array([0.0] + [LOGGF_BY_STRENGTH[c] for c in range(1, 5)])[cls]
    loggf = np.where(np.isfinite(loggf), loggf, fallback)
    chi = pd.to_numeric(rows["lower_eV"], errors="coerce").fillna(0.0).to_numpy(dtype=np.float64)

    t, pe = lay.t_k, lay.pe_dyn
    frac: dict[str, np.ndarray] = {}
    pop_of = np.zeros(len(names))
    mass_of = np.ones(len(names))
    is_h_of = np.zeros(len(names), dtype=bool)
    for j, p in enumerate(parsed):
        if p is None:
            continue
        sym, stage = p
        if sym not in frac:
            frac[sym] = stage_fractions(sym, t, pe)
        pop_of[j] = abundance(sym) * frac[sym][stage] / partition_function(sym, stage, t)
        mass_of[j] = mass_g(sym)
        is_h_of[j] = sym == "H"
    pop = pop_of[codes] * boltzmann_factor(t, chi)
    kappa = kappa_continuum(wave, lay)
    s_cm = math.pi * R_E_CM * (wave * 1e-8) ** 2 * 10.0**loggf * pop * stimulated_factor(wave, t)
    strength_A = s_cm / kappa * 1e8

    sigma = doppler_sigma_A(wave, t, mass_of[codes], micro_kms)
    gamma = damping_hwhm_A(wave, lay)
    is_h = is_h_of[codes]
    prof = np.where(is_h, PROFILE_HYDROGEN, PROFILE_VOIGT)
    if is_h.any():
        n_l, n_u = hydrogen_levels(chi[is_h], wave[is_h])
        gamma[is_h] = stark_scale_A(wave[is_h], n_l, n_u, lay)
    return LineSet(
        center_A=wave,
        strength_A=strength_A,
        sigma_A=sigma,
        gamma_A=gamma,
        kind=prof,
        species=np.asarray(names, dtype=object)[codes],
        row=pos,
    )


def _empty() -> LineSet:
    z = np.zeros(0)
    return LineSet(z, z, z, z, np.zeros(0, dtype=int), np.zeros(0, dtype=object), np.zeros(0, dtype=np.int64))


def thermal_energy_ev(t_k: float) -> float:
    """k T in eV."""
    return K_B_EV * t_k
