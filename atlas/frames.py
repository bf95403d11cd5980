"""Wavelengths between the stored frame (vacuum, observer's frame) and a displayed one.

An atlas stores vacuum wavelengths in the observer's frame.  Views (the app, the PDF
pages, the standalone HTML) show them in one of three frames (``observed``,
``barycentric``, ``rest``), in air or vacuum, in Å or nm.  The shifts are
multiplicative relativistic Doppler factors ``D(v)`` from :mod:`atlas.physics.doppler`;
air and vacuum from :mod:`atlas.physics.airvac`.

``barycentric``: lambda_bary = lambda_obs * D(v_bary), which composes the shifts as
Wright & Eastman (2014, PASP 126, 838) do (v_true = v_obs + v_bary + v_obs v_bary / c).
``rest``: lambda_rest = lambda_bary / D(rv), ``rv_kms`` being the star's barycentric
radial velocity.  With ``barycentric_kms`` unknown the barycentric frame equals the
observed one, and stellar lines are placed by ``rv_obs_kms`` (the velocity measured in
the observer's frame, before any barycentric correction) when the catalog has it; with
no velocity at all the rest frame shows no RV shift.

Plain numpy, no user interface: used by :mod:`atlas.app` and :mod:`atlas.export`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from atlas.physics import airvac, doppler
from atlas.spectrum import finite_or_none
from atlas.viewspec import FRAMES  # noqa: F401  (re-exported)


def scale(unit: str) -> float:
    """Å per displayed unit (``A`` or ``nm``): divide Å by this for the axis."""
    return 10.0 if unit == "nm" else 1.0


@dataclass(frozen=True)
class Frame:
    """One displayed frame, medium and unit for one star (velocities in km/s)."""

    frame: str = "observed"
    medium: str = "vacuum"
    rv_kms: float | None = None
    bary_kms: float | None = None
    unit: str = "A"
    rv_obs_kms: float | None = None

    @property
    def k_star(self) -> float:
        """lambda_observed / lambda_rest for the star's own lines (1 when no velocity is known)."""
        if self.rv_kms is not None and self.bary_kms is not None:
            return float(doppler.factor(self.rv_kms) / doppler.factor(self.bary_kms))
        if self.rv_obs_kms is not None:
            return float(doppler.factor(self.rv_obs_kms))
        if self.rv_kms is not None:
            return float(doppler.factor(self.rv_kms))
        return 1.0

    @property
    def k(self) -> float:
        """lambda_display_vacuum / lambda_observed_vacuum."""
        if self.frame == "observed":
            return 1.0
        if self.frame == "rest":
            return 1.0 / self.k_star
        return float(doppler.factor(self.bary_kms)) if self.bary_kms is not None else 1.0

    @property
    def scale(self) -> float:
        """Å per displayed unit."""
        return scale(self.unit)

    def to_display_A(self, wave_obs_vac_A):
        """Stored wavelengths (vacuum, observed, Å) to displayed Å (frame, medium)."""
        w = np.asarray(wave_obs_vac_A, dtype=np.float64) * self.k
        return airvac.vacuum_to_air_A(w) if self.medium == "air" else w

    def to_display(self, wave_obs_vac_A):
        """Stored Å (vacuum, observed) to displayed values (frame, medium, unit)."""
        return self.to_display_A(wave_obs_vac_A) / self.scale

    def from_display_A(self, wave_A):
        """Displayed Å (frame, medium) back to stored wavelengths (vacuum, observed)."""
        w = np.asarray(wave_A, dtype=np.float64)
        if self.medium == "air":
            w = airvac.air_to_vacuum_A(w)
        return w / self.k

    def line_obs_A(self, rest_vac_A, telluric=False) -> np.ndarray:
        """Where lines of rest vacuum Å lie in the stored (observed) frame.

        Stellar lines move with the star's radial velocity (none when it is unknown);
        telluric lines are at rest in the observer's frame.
        """
        rest = np.asarray(rest_vac_A, dtype=np.float64)
        tell = np.broadcast_to(np.asarray(telluric, dtype=bool), rest.shape)
        return np.where(tell, rest, rest * self.k_star)

    def rest_vac_to_display_A(self, rest_vac_A, telluric=False):
        """Where a line of rest vacuum wavelength (Å) appears in the displayed frame."""
        return self.to_display_A(self.line_obs_A(rest_vac_A, telluric))

    @classmethod
    def of_record(cls, frame: str, medium: str, record, unit: str = "A") -> Frame:
        """The Frame of a star's catalog record (``rv_kms``, ``barycentric_kms``, ``rv_obs_kms``)."""
        return cls(frame, medium, finite_or_none(record.get("rv_kms")),
                   finite_or_none(record.get("barycentric_kms")), unit,
                   finite_or_none(record.get("rv_obs_kms")))

    def has_star_velocity(self) -> bool:
        """True when the star's lines can be placed by a measured velocity."""
        return self.rv_kms is not None or self.rv_obs_kms is not None

    def words(self) -> str:
        """The axis words, e.g. ``wavelength (Å, air, barycentric frame)``."""
        unit = "nm" if self.unit == "nm" else "Å"
        return f"wavelength ({unit}, {self.medium}, {self.frame} frame)"
