"""Speed and acceleration limits as linear constraints on derivative control points.

A norm limit ``‖v‖ ≤ c`` is replaced by a polytope ``{|d_k · v| ≤ s c}`` inscribed in the ball:
``s`` is the reciprocal of the polytope's circumradius, so every point of the polytope satisfies
the limit and, by the Bézier convex-hull property, so does the whole derivative curve.
"""

from __future__ import annotations

from functools import cache

import numpy as np
from scipy.spatial import HalfspaceIntersection

#: Horizontal speed: four directions 45° apart in the xy-plane (a regular octagon).
HORIZONTAL_DIRECTIONS = np.array([[np.cos(a), np.sin(a), 0.0] for a in np.arange(4) * np.pi / 4])
#: Acceleration: the 3 axes, 6 face diagonals and 4 body diagonals of a cube (13 slab pairs).
_CUBE = [(1, 0, 0), (0, 1, 0), (0, 0, 1), (1, 1, 0), (1, -1, 0), (1, 0, 1), (1, 0, -1), (0, 1, 1), (0, 1, -1),
         (1, 1, 1), (1, 1, -1), (1, -1, 1), (-1, 1, 1)]
ACCELERATION_DIRECTIONS = np.array(_CUBE, dtype=float) / np.linalg.norm(_CUBE, axis=1)[:, None]


@cache
def _inscribed_scale(directions: tuple[tuple[float, ...], ...]) -> float:
    """``1 / max ‖x‖`` over ``{x : |d · x| ≤ 1}`` (3D; in-plane directions get a unit z slab)."""
    d = np.array(directions)
    if np.allclose(d[:, 2], 0.0):
        d = np.vstack([d, [0.0, 0.0, 1.0]])
        planar = True
    else:
        planar = False
    halfspaces = np.vstack([np.c_[d, -np.ones(len(d))], np.c_[-d, -np.ones(len(d))]])
    vertices = HalfspaceIntersection(halfspaces, np.zeros(3)).intersections
    radius = np.linalg.norm(vertices[:, :2] if planar else vertices, axis=1).max()
    return float(1.0 / radius)


def inscribed_scale(directions: np.ndarray) -> float:
    """Factor ``s`` with ``{|d_k · x| ≤ s c}`` inside the ball (or disc, for in-plane ``d``) of radius ``c``."""
    return _inscribed_scale(tuple(map(tuple, np.round(directions, 15))))


def safe_step_durations(starts: np.ndarray, ends: np.ndarray, limits: np.ndarray, degree: int) -> np.ndarray:
    """Shortest step durations ``(K,)`` (s) at which every drone can fly its straight step
    ``starts[:, k]`` → ``ends[:, k]`` ``(N, K, 3)`` stopping at both ends within the polytope limits,
    so the first QP always has a feasible point (see :func:`stop_at_vertices_points`).

    Those control points are 0 … 0, 1 … 1 along the step: the velocity control points peak at
    ``n L / h`` (one difference), the acceleration ones at ``n (n - 1) L / h²``.
    """
    d = ends - starts
    horizontal = np.linalg.norm(d[..., :2], axis=-1)
    vertical = np.abs(d[..., 2])
    length = np.linalg.norm(d, axis=-1)
    n = degree
    vh = limits[:, None, 0] * inscribed_scale(HORIZONTAL_DIRECTIONS)
    a = limits[:, None, 2] * inscribed_scale(ACCELERATION_DIRECTIONS)
    per_drone = np.maximum.reduce([n * horizontal / vh, n * vertical / limits[:, None, 1],
                                   np.sqrt(n * (n - 1) * length / a)])
    return per_drone.max(axis=0)


def stop_at_vertices_points(starts: np.ndarray, ends: np.ndarray, degree: int) -> np.ndarray:
    """Control points ``(N, K, n + 1, 3)``: each step ``(N, K, 3)`` flown as (start × ⌈(n+1)/2⌉,
    end × the rest), which stops at both ends with derivatives up to ``⌈(n+1)/2⌉ - 1`` zero."""
    first = (degree + 1 + 1) // 2
    at_end = np.arange(degree + 1) >= first
    return np.where(at_end[:, None], ends[..., None, :], starts[..., None, :])
