"""The numpy Planck function the build tests use equals astropy's BlackBody."""

from __future__ import annotations

import numpy as np
import pytest
from astropy import units as u
from astropy.modeling.physical_models import BlackBody

from .conftest import fast_b_lambda


@pytest.mark.parametrize("teff_k", [3000.0, 5772.0, 9600.0, 30000.0])
def test_fast_planck_matches_astropy(teff_k):
    # Reference: astropy.modeling.physical_models.BlackBody (Planck 1901), per Å.
    unit = u.erg / (u.s * u.cm**2 * u.AA * u.sr)
    wave = np.linspace(3000.0, 11000.0, 200)
    ref = BlackBody(temperature=teff_k * u.K, scale=1.0 * unit)(wave * u.AA).to_value(unit)
    np.testing.assert_allclose(fast_b_lambda(wave, teff_k), ref, rtol=1e-10)
