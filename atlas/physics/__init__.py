"""Physics helpers: Doppler shifts, barycentric correction, air/vacuum, Planck, colour.

Pure functions on astropy Quantities or floats whose unit is in the name
(``wave_A``, ``rv_kms``).  Importing this package switches astropy to its bundled
IERS tables so that nothing is ever downloaded at run time.
"""

from __future__ import annotations

from astropy.utils import iers

iers.conf.auto_download = False
iers.conf.auto_max_age = None
