"""Obstacle-free transitions: every drone flies a straight line on one shared time profile."""

from __future__ import annotations

import numpy as np
from scipy.spatial import cKDTree

from .bezier import elevate_degree
from .timing import Profile, SharedTiming


def straight_leg_points(starts: np.ndarray, goals: np.ndarray, profile: Profile, degree: int) -> np.ndarray:
    """Bézier control points ``(N, degree + 1, 3)`` of rest-to-rest straight legs ``starts`` →
    ``goals`` ``(N, 3)`` following ``profile`` (whose degree must not exceed ``degree``)."""
    if profile.degree > degree:
        raise ValueError(f"profile {profile.name} needs degree >= {profile.degree}, got {degree}")
    s = elevate_degree(np.asarray(profile.control_values, dtype=np.float64)[:, None], degree)[:, 0]
    return _on_legs(starts, goals, s[None, :])[:, 0]


def shared_leg_points(starts: np.ndarray, goals: np.ndarray, timing: SharedTiming) -> np.ndarray:
    """Control points ``(N, S, n + 1, 3)`` of straight legs ``starts`` → ``goals`` ``(N, 3)`` flown on
    the shared law ``timing`` (the Bézier form is affine, so ``start + s (goal - start)`` per value)."""
    return _on_legs(starts, goals, timing.values)


def _on_legs(starts: np.ndarray, goals: np.ndarray, values: np.ndarray) -> np.ndarray:
    """``(N, S, n + 1, 3)`` points ``start + s (goal − start)`` for control values ``(S, n + 1)``,
    clipped to [0, 1], with ``s = 0`` and ``s = 1`` giving the start and goal bit for bit and every
    coordinate kept between the start's and the goal's: in floating point ``a + 1.0 (b − a)`` need
    not be ``b``, and a landing pad on the floor of the flight volume was missed by 1e-15 m below
    it (the curve, a convex combination of its control points, then stays in the box they span)."""
    s = np.clip(values, 0.0, 1.0)[None, :, :, None]
    a, b = starts[:, None, None, :], goals[:, None, None, :]
    inner = np.clip(a + s * (b - a), np.minimum(a, b), np.maximum(a, b))
    return np.where(s == 1.0, b, np.where(s == 0.0, a, inner))


def hold_points(positions: np.ndarray, degree: int) -> np.ndarray:
    """Control points ``(N, degree + 1, 3)`` of drones hovering at ``positions`` ``(N, 3)``."""
    return np.repeat(positions[:, None, :], degree + 1, axis=1)


def synchronized_spacing_holds(starts: np.ndarray, goals: np.ndarray, pair_envelope: np.ndarray) -> bool:
    """True when starts and goals are each pairwise at least √2 apart in coordinates divided by the
    pair radii ``pair_envelope`` (3,) — with a minimum-sum-of-squares assignment, synchronized straight
    lines then keep every pair at ratio ≥ 1 (Turpin, Michael & Kumar, IJRR 2014)."""
    def spaced(points):
        scaled = points / pair_envelope
        return len(points) < 2 or cKDTree(scaled).query(scaled, k=2)[0][:, 1].min() >= np.sqrt(2)

    return bool(spaced(starts) and spaced(goals))
