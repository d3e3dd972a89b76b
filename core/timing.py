"""Rest-to-rest time profiles and closed-form minimum durations under speed/acceleration limits.

A profile ``s(tau)`` goes from 0 to 1 on ``tau`` in [0, 1] with zero end derivatives. A straight
leg of displacement ``D`` flown in ``T`` seconds has velocity ``D s'(tau) / T`` and acceleration
``D s''(tau) / T²``, so its peaks are ``k_v |D| / T`` and ``k_a |D| / T²``.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np
from numpy.polynomial import Polynomial

from .bezier import bernstein_to_monomial_matrix


@dataclass(frozen=True)
class Profile:
    """A rest-to-rest profile given by its Bézier control values on [0, 1]."""

    name: str
    control_values: tuple[float, ...]

    @property
    def degree(self) -> int:
        return len(self.control_values) - 1

    @cached_property
    def polynomial(self) -> Polynomial:
        """``s(tau)`` in the power basis."""
        return Polynomial(bernstein_to_monomial_matrix(self.degree) @ np.array(self.control_values))

    def _peak(self, p: Polynomial) -> float:
        candidates = [0.0, 1.0] + [r.real for r in p.deriv().roots() if abs(r.imag) < 1e-12 and 0 <= r.real <= 1]
        return float(max(abs(p(c)) for c in candidates))

    @cached_property
    def peak_speed_factor(self) -> float:
        """``k_v = max |s'(tau)|`` (dimensionless)."""
        return self._peak(self.polynomial.deriv())

    @cached_property
    def peak_acceleration_factor(self) -> float:
        """``k_a = max |s''(tau)|`` (dimensionless)."""
        return self._peak(self.polynomial.deriv(2))


#: Minimum snap, ``35τ⁴ − 84τ⁵ + 70τ⁶ − 20τ⁷`` (snap objective of Mellinger & Kumar 2011).
MIN_SNAP = Profile("min_snap", (0, 0, 0, 0, 1, 1, 1, 1))
#: Minimum jerk, ``10τ³ − 15τ⁴ + 6τ⁵`` (Flash & Hogan 1985).
MIN_JERK = Profile("min_jerk", (0, 0, 0, 1, 1, 1))
PROFILES = {p.name: p for p in (MIN_SNAP, MIN_JERK)}

#: Shortest duration given to a transition in which nothing moves (seconds).
MIN_TRANSITION_DURATION = 0.1


def minimum_duration(displacement: np.ndarray, limits: np.ndarray, profile: Profile) -> np.ndarray:
    """Per-drone smallest ``T`` ``(N,)`` (seconds) for straight legs ``(N, 3)`` (metres) flown with
    ``profile`` under ``limits`` ``(N, 3)`` = (max horizontal speed, max vertical speed, max accel)."""
    d = np.asarray(displacement, dtype=np.float64)
    horizontal = np.linalg.norm(d[:, :2], axis=1)
    vertical = np.abs(d[:, 2])
    return np.maximum.reduce([
        profile.peak_speed_factor * horizontal / limits[:, 0],
        profile.peak_speed_factor * vertical / limits[:, 1],
        np.sqrt(profile.peak_acceleration_factor * np.linalg.norm(d, axis=1) / limits[:, 2]),
    ])


def trapezoid_lower_bound(displacement: np.ndarray, limits: np.ndarray) -> float:
    """Physical lower bound (seconds) on the time to fly every leg ``(N, 3)`` from rest to rest:
    the longest per-drone time of a trapezoidal speed profile at the limits along its line."""
    d = np.asarray(displacement, dtype=np.float64)
    length = np.linalg.norm(d, axis=1)
    moving = length > 0
    if not moving.any():
        return 0.0
    d, length, limits = d[moving], length[moving], limits[moving]
    unit = d / length[:, None]
    with np.errstate(divide="ignore"):
        v = np.minimum(limits[:, 0] / np.linalg.norm(unit[:, :2], axis=1), limits[:, 1] / np.abs(unit[:, 2]))
    a = limits[:, 2]
    cruise = length >= v**2 / a
    t = np.where(cruise, length / v + v / a, 2 * np.sqrt(length / a))
    return float(t.max())
