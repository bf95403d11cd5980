"""Physical constants used across the package, each defined once, from astropy.constants."""

from __future__ import annotations

from astropy import constants as _const

#: Speed of light in km/s (CODATA, through astropy.constants).
C_KMS: float = float(_const.c.to_value("km/s"))
