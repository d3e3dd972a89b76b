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
    s = np.asarray(profile.control_values, dtype=np.float64)
    points = starts[:, None, :] + s[None, :, None] * (goals - starts)[:, None, :]
    return elevate_degree(points, degree)


def shared_leg_points(starts: np.ndarray, goals: np.ndarray, timing: SharedTiming) -> np.ndarray:
    """Control points ``(N, S, n + 1, 3)`` of straight legs ``starts`` → ``goals`` ``(N, 3)`` flown on
    the shared law ``timing`` (the Bézier form is affine, so ``start + s (goal - start)`` per value)."""
    return starts[:, None, None, :] + timing.values[None, :, :, None] * (goals - starts)[:, None, None, :]


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
