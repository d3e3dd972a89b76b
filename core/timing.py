"""Shared time laws of straight legs and closed-form minimum durations under speed/acceleration limits.

Every drone of a straight-line transition flies ``start + s(t) (goal - start)`` with one path
parameter ``s`` shared by the fleet, rising monotonically from 0 to 1 and at rest at both ends.

* Rest-to-rest profiles (:class:`Profile`): ``s(tau)`` is one polynomial on ``tau = t / T``. A leg
  of displacement ``D`` flown in ``T`` seconds then has velocity ``D s'(tau) / T`` and acceleration
  ``D s''(tau) / T²``, so its peaks are ``k_v |D| / T`` and ``k_a |D| / T²``.
* The cruise law (:func:`cruise_timing`): speed up, cruise at constant speed, slow down, in up to
  seven polynomial pieces whose acceleration blends in and out along a rest-to-rest profile.
"""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np
from numpy.polynomial import Polynomial

from .bezier import bernstein_to_monomial_matrix, elevate_degree, monomial_to_bernstein


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


def rest_profile(name: str, order: int) -> Profile:
    """The rest-to-rest profile of degree ``2 order + 1`` whose derivatives ``1 … order`` vanish at
    both ends: Bézier control values ``order + 1`` zeros, then ``order + 1`` ones."""
    return Profile(name, (0,) * (order + 1) + (1,) * (order + 1))


#: Minimum snap, ``35τ⁴ − 84τ⁵ + 70τ⁶ − 20τ⁷`` (snap objective of Mellinger & Kumar 2011).
MIN_SNAP = rest_profile("min_snap", 3)
#: Minimum jerk, ``10τ³ − 15τ⁴ + 6τ⁵`` (Flash & Hogan 1985).
MIN_JERK = rest_profile("min_jerk", 2)
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


@dataclass(frozen=True, eq=False)
class SharedTiming:
    """The fleet's path parameter ``s(t)`` of one straight-line transition: ``durations`` ``(S,)`` s
    of its pieces and the Bézier control values ``(S, n + 1)`` of ``s`` on each (0 → 1, monotone).
    ``binding`` is the drone whose limit sets the duration."""

    durations: np.ndarray
    values: np.ndarray
    binding: int

    @property
    def duration(self) -> float:
        return float(self.durations.sum())


#: Fraction of each speed change (speeding up, slowing down) spent blending the acceleration in,
#: and as much blending it out; the middle half holds it at its peak (our choice: a shorter blend
#: saves time and costs jerk; at 1/4 the peak acceleration is 4/3 of the phase's mean).
BLEND_FRACTION = 0.25
#: Peak over mean acceleration of a speed change, ``1 / (1 - BLEND_FRACTION)``.
CRUISE_PEAK_TO_MEAN = 1.0 / (1.0 - BLEND_FRACTION)


def blend_order(degree: int) -> int:
    """Order ``m`` of the rest-to-rest profile the cruise law blends its acceleration with: the
    position pieces have degree ``2 m + 3 ≤ degree`` (``m = 3``, minimum-snap shape, at degree 9;
    ``m = 2``, minimum-jerk shape, at 7; ``m = 1`` at 5), and ``s`` is ``m + 2`` times continuously
    differentiable with derivatives ``1 … m + 2`` zero at both ends."""
    return max(1, min(3, (degree - 3) // 2))


def step_profile(name: str, degree: int) -> Profile:
    """The one-piece profile for stop-and-go steps: ``name`` itself, or for ``"cruise"`` the
    minimum-snap profile where the degree allows it, else minimum jerk."""
    if name != "cruise":
        return PROFILES[name]
    return MIN_SNAP if degree >= MIN_SNAP.degree else MIN_JERK


def shared_timing(displacement: np.ndarray, limits: np.ndarray, name: str, degree: int) -> SharedTiming:
    """The shortest shared time law of profile ``name`` (``"cruise"`` or a :data:`PROFILES` name) at
    which every leg ``(N, 3)`` (metres) keeps ``limits`` ``(N, 3)`` (max horizontal speed, max
    vertical speed, max acceleration norm), with pieces of Bézier ``degree``. A fleet that does not
    move gets one piece of :data:`MIN_TRANSITION_DURATION`."""
    if name == "cruise":
        return cruise_timing(displacement, limits, degree)
    profile = PROFILES[name]
    per_drone = minimum_duration(displacement, limits, profile)
    values = elevate_degree(np.asarray(profile.control_values, dtype=np.float64)[:, None], degree)[:, 0]
    duration = max(float(per_drone.max()), MIN_TRANSITION_DURATION)
    return SharedTiming(np.array([duration]), values[None, :], int(np.argmax(per_drone)))


def cruise_timing(displacement: np.ndarray, limits: np.ndarray, degree: int) -> SharedTiming:
    """Speed up, cruise, slow down: the shortest such shared law for legs ``(N, 3)`` under
    ``limits`` ``(N, 3)`` (see :func:`shared_timing`).

    In the normalised parameter ``s`` the peak speed ``U`` (1/s) and acceleration ``A`` (1/s²) must
    satisfy ``U ≤ U_max = min_i min(v_xy,i / |D_xy,i|, v_z,i / |D_z,i|)`` and ``A ≤ A_max =
    min_i a_i / |D_i|``. A speed change of duration ``T_p`` reaches ``U = A T_p / κ`` (``κ`` =
    :data:`CRUISE_PEAK_TO_MEAN`) and, its speed curve being point-symmetric, covers ``U T_p / 2``;
    so ``1 = U (T_p + T_c)`` with cruise time ``T_c ≥ 0`` and the total is ``T = T_p + 1 / U``.
    With ``A = A_max``, ``T(U) = κ U / A_max + 1 / U`` falls until ``U = √(A_max / κ)``, where the
    cruise vanishes: hence ``U = min(U_max, √(A_max / κ))``, ``T_p = κ U / A_max``.
    """
    d = np.asarray(displacement, dtype=np.float64)
    length = np.linalg.norm(d, axis=1)
    moving = length > 0
    if not moving.any():
        return shared_timing(d, limits, step_profile("cruise", degree).name, degree)
    with np.errstate(divide="ignore"):
        speed_room = np.minimum(limits[:, 0] / np.linalg.norm(d[:, :2], axis=1), limits[:, 1] / np.abs(d[:, 2]))
        accel_room = np.where(moving, limits[:, 2] / np.where(moving, length, 1.0), np.inf)
    u_max, a_max = float(speed_room.min()), float(accel_room.min())
    speed_bound = u_max < np.sqrt(a_max / CRUISE_PEAK_TO_MEAN)
    u = u_max if speed_bound else np.sqrt(a_max / CRUISE_PEAK_TO_MEAN)
    change = CRUISE_PEAK_TO_MEAN * u / a_max
    cruise = 1.0 / u - change if speed_bound else 0.0
    binding = int(np.argmin(speed_room) if speed_bound else np.argmin(accel_room))
    blend = rest_profile("blend", blend_order(degree)).polynomial
    rise, hold = BLEND_FRACTION * change, (1.0 - 2.0 * BLEND_FRACTION) * change
    one = Polynomial([1.0])
    # (acceleration in units of A as a polynomial of local tau, duration) per piece
    phases = [(blend, rise), (one, hold), (one - blend, rise), (Polynomial([0.0]), cruise),
              (-blend, rise), (-one, hold), (blend - one, rise)]
    durations, values = [], []
    position, speed = 0.0, 0.0
    for shape, h in phases:
        if h <= 0:
            continue
        # s(tau) = s0 + v0 h tau + A h² ∬shape; the cruise piece (shape 0) keeps v0 = U.
        s_of_tau = Polynomial([position, speed * h]) + a_max * h * h * shape.integ(2)
        durations.append(h)
        values.append(monomial_to_bernstein(s_of_tau.coef, degree))
        position = float(s_of_tau(1.0))
        speed = float(s_of_tau.deriv()(1.0)) / h
    values = np.array(values) / position  # exactly 1 at the end (round-off of the sum removed)
    values[-1, -1] = 1.0
    return SharedTiming(np.array(durations), values, binding)
