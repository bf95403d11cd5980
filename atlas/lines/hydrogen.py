"""Wavelengths, lower-level energies and gf-values of hydrogen-like ions, computed.

Used to write the H I (Balmer, Paschen) and He II rows of ``data/lines.csv``.

Levels: the Dirac energy of a point nucleus with the reduced mass,

    T(n, j) = (2 R_M / alpha^2) * (1 - [1 + (Z alpha / (n - d_j))^2]^(-1/2)),
    d_j = j + 1/2 - sqrt((j + 1/2)^2 - (Z alpha)^2),  R_M = R_inf / (1 + m_e / M),

as wavenumbers below the ionisation limit.  The Lamb shift and hyperfine structure
are left out: the Lamb shift of 2s1/2 (about 0.035 cm^-1, from memory) moves
H-alpha components by about 0.015 Å, below the 0.03 Å we check to.

A line (n_lower -> n_upper) is the set of its electric-dipole fine-structure
components (l' = l +- 1, |j' - j| <= 1).  Each component's strength is

    S = (2j + 1)(2j' + 1) {l j 1/2; j' l' 1}^2 max(l, l') |<n l|r|n' l'>|^2,

with the radial integral computed numerically from the hydrogenic radial
functions.  The line's wavelength is the strength-weighted mean of the components'
vacuum wavenumbers (what a spectrum of a star, where the fine structure is
unresolved and the lower sublevels are populated by their weights, shows), and
its gf-value is (2/3) (Delta E / E_h) S_total in atomic units.

Constants: CODATA 2018 (Tiesinga et al. 2021, Rev. Mod. Phys. 93, 025010) from
``astropy.constants.codata2018``: R_inf = 10973731.568160 m^-1,
alpha = 7.2973525693e-3, m_e = 9.1093837015e-31 kg, m_p = 1.67262192369e-27 kg,
h, c, e exact.  The alpha-particle mass for He II comes from ``scipy.constants``
(CODATA 2022, 6.644657345e-27 kg; the 2018 value differs by 1.4 parts in 10^9).

References
----------
Bethe, H. A. & Salpeter, E. E. (1957), Quantum Mechanics of One- and Two-Electron
Atoms (Dirac levels, hydrogenic radial integrals, line strengths).
Condon, E. U. & Shortley, G. H. (1935), The Theory of Atomic Spectra (LS line strengths).
Racah, G. (1942), Phys. Rev. 62, 438 (6j symbols).
"""

from __future__ import annotations

import functools
import math
from dataclasses import dataclass
from fractions import Fraction

import numpy as np
import scipy.constants as sc
from astropy.constants import codata2018 as C18
from scipy.integrate import simpson
from scipy.special import eval_genlaguerre, gammaln

R_INF_PER_M = C18.Ryd.value  # 10973731.568160 m^-1 (CODATA 2018)
ALPHA = C18.alpha.value  # 7.2973525693e-3 (CODATA 2018)
M_E_KG = C18.m_e.value  # 9.1093837015e-31 kg (CODATA 2018)
M_P_KG = C18.m_p.value  # 1.67262192369e-27 kg (CODATA 2018)
M_ALPHA_KG = sc.physical_constants["alpha particle mass"][0]  # CODATA 2022 in scipy
#: h c / e in eV m: converts wavenumber (m^-1) to eV (h, c, e exact in CODATA 2018).
HC_EV_M = C18.h.value * C18.c.value / C18.e.value

NUCLEUS_MASS_KG = {1: M_P_KG, 2: M_ALPHA_KG}
SPECIES = {1: "H I", 2: "He II"}


def rydberg_per_m(z: int) -> float:
    """Rydberg constant R_M (m^-1) for the reduced mass of an electron and nucleus of charge ``z``."""
    return R_INF_PER_M / (1.0 + M_E_KG / NUCLEUS_MASS_KG[z])


def term_per_m(n: int, j: float, z: int = 1) -> float:
    """Binding energy (m^-1, wavenumber) of level n, j of a hydrogen-like ion: Dirac, reduced mass.

    References
    ----------
    Bethe & Salpeter (1957), eq. 16.1 (Dirac energy levels).
    """
    za = z * ALPHA
    k = j + 0.5
    d = k - math.sqrt(k * k - za * za)
    x = (za / (n - d)) ** 2
    one_minus_f = -math.expm1(-0.5 * math.log1p(x))
    return 2.0 * rydberg_per_m(z) / ALPHA**2 * one_minus_f


def _factorial(n: int) -> int:
    return math.factorial(n)


def _triangle(a: Fraction, b: Fraction, c: Fraction) -> Fraction | None:
    if a + b < c or a + c < b or b + c < a or (a + b + c).denominator != 1:
        return None
    return Fraction(
        _factorial(int(a + b - c)) * _factorial(int(a - b + c)) * _factorial(int(-a + b + c)),
        _factorial(int(a + b + c + 1)),
    )


def wigner_6j(j1, j2, j3, j4, j5, j6) -> float:
    """The Wigner 6j symbol {j1 j2 j3; j4 j5 j6} (Racah's formula), exact then as a float.

    References
    ----------
    Racah (1942), Phys. Rev. 62, 438; Edmonds (1957), Angular Momentum in Quantum Mechanics, eq. 6.3.7.
    """
    a, b, c, d, e, f = (Fraction(x).limit_denominator(2) for x in (j1, j2, j3, j4, j5, j6))
    deltas = [_triangle(a, b, c), _triangle(a, e, f), _triangle(d, b, f), _triangle(d, e, c)]
    if any(t is None for t in deltas):
        return 0.0
    pref = deltas[0] * deltas[1] * deltas[2] * deltas[3]
    sums = [a + b + c, a + e + f, d + b + f, d + e + c]
    tops = [a + b + d + e, a + c + d + f, b + c + e + f]
    total = Fraction(0)
    for t in range(int(max(sums)), int(min(tops)) + 1):
        den = 1
        for s in sums:
            den *= _factorial(int(t - s))
        for tp in tops:
            den *= _factorial(int(tp - t))
        total += Fraction((-1) ** t * _factorial(t + 1), den)
    return float(total) * math.sqrt(float(pref))


def _radial(n: int, l: int, r: np.ndarray) -> np.ndarray:  # noqa: E741
    # Normalised hydrogenic radial function R_nl(r) for Z = 1, r in Bohr radii.
    rho = 2.0 * r / n
    with np.errstate(divide="ignore"):
        log_rho_l = l * np.log(rho) if l else np.zeros_like(rho)
    log_env = (
        0.5 * (3 * math.log(2.0 / n) + gammaln(n - l) - math.log(2 * n) - gammaln(n + l + 1))
        + log_rho_l
        - rho / 2
    )
    return np.exp(log_env) * eval_genlaguerre(n - l - 1, 2 * l + 1, rho)


@functools.lru_cache(maxsize=8)
def _grid(block: int) -> tuple[np.ndarray, np.ndarray]:
    # x grid (r = x^2, dense near the nucleus) wide enough for every n <= 20 * block.
    nmax = 20 * block
    x = np.linspace(0.0, math.sqrt(4.0 * nmax * nmax + 60.0), 20000 * block + 1)
    return x, x * x


@functools.lru_cache(maxsize=512)
def _radial_on_grid(n: int, l: int, block: int) -> np.ndarray:  # noqa: E741
    return _radial(n, l, _grid(block)[1])


def radial_integral(n1: int, l1: int, n2: int, l2: int) -> float:
    """<n1 l1 | r | n2 l2> for hydrogen (Z = 1, infinite nuclear mass), in Bohr radii.

    Numerical quadrature (Simpson) on a grid dense near the nucleus (r = x^2).  For a
    hydrogen-like ion of charge Z and reduced mass mu divide by Z mu/m_e.

    References
    ----------
    Bethe & Salpeter (1957), section 63 (radial integrals; their table 13 for checks).
    """
    block = max(1, math.ceil(max(n1, n2) / 20))
    x, r = _grid(block)
    integrand = _radial_on_grid(n1, l1, block) * _radial_on_grid(n2, l2, block) * r**3 * (2.0 * x)
    return float(simpson(integrand, x=x))


@dataclass(frozen=True)
class Component:
    """One fine-structure component: lower and upper (l, j), vacuum wavenumber (m^-1), strength (a.u.)."""

    l_low: int
    j_low: float
    l_up: int
    j_up: float
    sigma_per_m: float
    strength: float


@dataclass(frozen=True)
class Line:
    """A hydrogen-like line: its components and their strength-weighted mean."""

    z: int
    n_low: int
    n_up: int
    vacuum_A: float
    lower_eV: float
    loggf: float
    components: tuple[Component, ...]

    @property
    def species(self) -> str:
        return SPECIES[self.z]


def line(n_low: int, n_up: int, z: int = 1) -> Line:
    """Compute the line n_low -> n_up of H I (z=1) or He II (z=2).

    Returns vacuum wavelength (Å, strength-weighted mean of the fine-structure
    components), the lower level's energy above the ion's ground state (eV,
    strength-weighted over the lower sublevels), and log10(gf).
    """
    if not 1 <= n_low < n_up:
        raise ValueError("need 1 <= n_low < n_up")
    mu_ratio = 1.0 / (1.0 + M_E_KG / NUCLEUS_MASS_KG[z])  # mu / m_e
    ground = term_per_m(1, 0.5, z)
    comps = []
    for l1 in range(n_low):
        for l2 in (l1 - 1, l1 + 1):
            if not 0 <= l2 < n_up:
                continue
            rad = radial_integral(n_low, l1, n_up, l2) / (z * mu_ratio)
            s_l = max(l1, l2) * rad * rad
            for j1 in (l1 - 0.5, l1 + 0.5):
                if j1 < 0:
                    continue
                for j2 in (l2 - 0.5, l2 + 0.5):
                    if j2 < 0 or abs(j2 - j1) > 1:
                        continue
                    w6 = wigner_6j(l1, j1, 0.5, j2, l2, 1)
                    s = (2 * j1 + 1) * (2 * j2 + 1) * w6 * w6 * s_l
                    if s <= 0:
                        continue
                    sigma = term_per_m(n_low, j1, z) - term_per_m(n_up, j2, z)
                    comps.append(Component(l1, j1, l2, j2, sigma, s))
    strengths = np.array([c.strength for c in comps])
    sigmas = np.array([c.sigma_per_m for c in comps])
    lowers = np.array([ground - term_per_m(n_low, c.j_low, z) for c in comps])
    sigma_mean = float(np.sum(strengths * sigmas) / strengths.sum())
    lower_eV = float(np.sum(strengths * lowers) / strengths.sum()) * HC_EV_M
    # g f = (2/3) (Delta E / E_h) S, with E_h = 2 h c R_inf and S in (e a0)^2.
    gf = (2.0 / 3.0) * float(np.sum(strengths * sigmas)) / (2.0 * R_INF_PER_M)
    return Line(z, n_low, n_up, 1e10 / sigma_mean, lower_eV, math.log10(gf), tuple(comps))
