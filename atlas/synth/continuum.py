"""The stellar continuum: the Planck function at the effective temperature.

A thin wrapper so the rest of ``atlas.synth`` has one place to get it from; the
physics lives in ``atlas.physics.planck`` (astropy's BlackBody underneath).

References
----------
Planck, M. (1901), Ann. Phys. 309, 553.
"""

from __future__ import annotations

import numpy as np


def planck_b_lambda(wave_A, teff_k: float) -> np.ndarray:
    """B_lambda(Teff) in erg s^-1 cm^-2 Å^-1 sr^-1 at ``wave_A`` (Å)."""
    from atlas.physics.planck import b_lambda

    return np.asarray(b_lambda(np.asarray(wave_A, dtype=np.float64), float(teff_k)), dtype=np.float64)
