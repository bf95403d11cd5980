"""Wavelengths between the stored frame (vacuum, observed) and the displayed one.

The atlas stores vacuum wavelengths in the observer's frame.  The viewer shows them
in one of three frames (``observed``, ``barycentric``, ``rest``), in air or vacuum,
in Å or nm.  The shifts are multiplicative Doppler factors from
:mod:`atlas.physics.doppler`; air/vacuum from :mod:`atlas.physics.airvac`.

``barycentric``: lambda_bary = lambda_obs * D(v_bary), which composes the shifts as
Wright & Eastman (2014, PASP 126, 838) do (v_true = v_obs + v_bary + v_obs v_bary / c,
to first order in the cross term).  ``rest``: lambda_rest = lambda_bary / D(rv), with
``rv_kms`` the star's barycentric radial velocity.  When the barycentric correction is
unknown (``barycentric_kms`` null) the barycentric frame is unavailable and ``rest``
takes ``rv_kms`` as measured in the observer's frame.

No panel or bokeh here: plain numpy.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from atlas.physics import airvac, doppler


@dataclass(frozen=True)
class Frame:
    """One displayed frame and medium for one star (velocities in km/s)."""

    frame: str = "observed"
    medium: str = "vacuum"
    rv_kms: float | None = None
    bary_kms: float | None = None

    @property
    def k(self) -> float:
        """lambda_display_vacuum / lambda_observed_vacuum."""
        if self.frame == "observed":
            return 1.0
        k = doppler.factor(self.bary_kms) if self.bary_kms is not None else 1.0
        if self.frame == "rest":
            k /= doppler.factor(self.rv_kms) if self.rv_kms is not None else 1.0
        return float(k)

    def to_display_A(self, wave_obs_vac_A):
        """Stored wavelengths (vacuum, observed, Å) to displayed Å (frame, medium)."""
        w = np.asarray(wave_obs_vac_A, dtype=np.float64) * self.k
        return airvac.vacuum_to_air_A(w) if self.medium == "air" else w

    def from_display_A(self, wave_A):
        """Displayed Å (frame, medium) back to stored wavelengths (vacuum, observed)."""
        w = np.asarray(wave_A, dtype=np.float64)
        if self.medium == "air":
            w = airvac.air_to_vacuum_A(w)
        return w / self.k

    def rest_vac_to_display_A(self, rest_vac_A, telluric=False):
        """Where a line of rest vacuum wavelength (Å) appears in the displayed frame.

        Stellar lines move with the star's radial velocity; telluric lines are at rest
        in the observer's frame.
        """
        rest = np.asarray(rest_vac_A, dtype=np.float64)
        tell = np.broadcast_to(np.asarray(telluric, dtype=bool), rest.shape)
        obs = rest.copy()
        star = ~tell
        if self.rv_kms is not None:
            k_star = doppler.factor(self.rv_kms)
            if self.bary_kms is not None:
                k_star /= doppler.factor(self.bary_kms)
            obs[star] = rest[star] * k_star
        return self.to_display_A(obs)


def scale(unit: str) -> float:
    """Divide Å by this for the axis unit (``A`` or ``nm``)."""
    return 10.0 if unit == "nm" else 1.0
