"""Build tests: a faster Planck evaluation for in-process builds.

``atlas.physics.planck.b_lambda`` builds an astropy ``BlackBody`` model on every call
(about 30 ms), and the colour step fits a Planck curve with ~150 such calls, i.e.
about 5 s per star.  In-process build tests swap in the same law written with numpy
(checked against the original in ``test_fast_planck_matches_astropy``), so the suite
stays inside its time budget.  Builds run as subprocesses (the CLI tests) use the
original unchanged.
"""

from __future__ import annotations

import numpy as np
import pytest


def fast_b_lambda(wave_A, teff_k):
    """Planck B_lambda in erg s^-1 cm^-2 Å^-1 sr^-1 (Planck 1901), constants from astropy (CODATA 2018)."""
    from astropy import constants as const

    h = const.h.cgs.value
    c = const.c.cgs.value
    k = const.k_B.cgs.value
    lam = np.asarray(wave_A, dtype=np.float64) * 1e-8  # cm
    with np.errstate(over="ignore"):
        b = 2.0 * h * c**2 / lam**5 / np.expm1(h * c / (lam * k * float(teff_k)))
    return b * 1e-8  # per cm -> per Å


@pytest.fixture(autouse=True)
def _fast_planck(monkeypatch):
    try:
        from atlas.physics import planck
    except ImportError:
        yield
        return
    monkeypatch.setattr(planck, "b_lambda", fast_b_lambda)
    yield
