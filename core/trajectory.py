"""Fleet trajectories: one piecewise Bézier curve per drone on breakpoints shared by the fleet.

Every drone flies the same timeline (formations are reached together), so all curves share the
breakpoints; this lets evaluation and verification work on whole arrays at once.
"""

from __future__ import annotations

from dataclasses import dataclass, field
from functools import cached_property

import numpy as np

from .bezier import bernstein_basis, derivative_control_points, monomial_coefficients, split_equal_parts

#: Motion magnitudes people read off a plan: (name, derivative order, axes whose norm is taken).
MOTION_QUANTITIES = (("speed_xy", 1, slice(0, 2)), ("speed_z", 1, slice(2, 3)), ("acceleration", 2, slice(None)),
                     ("jerk", 3, slice(None)), ("snap", 4, slice(None)))


@dataclass(frozen=True, eq=False)
class FleetTrajectory:
    """Piecewise Bézier trajectories of a fleet.

    breaks : (S + 1,) float, seconds, strictly increasing, ``breaks[0] == 0``
    control_points : (N, S, n + 1, 3) float, metres — piece ``s`` of drone ``i`` has degree ``n``
    drone_ids : N drone identifiers, in fleet order
    segment_labels : S short labels ("transition ground→ring", "hold ring")
    """

    breaks: np.ndarray
    control_points: np.ndarray
    drone_ids: tuple[str, ...]
    segment_labels: tuple[str, ...] = field(default=())

    def __post_init__(self) -> None:
        breaks = np.asarray(self.breaks, dtype=np.float64)
        points = np.asarray(self.control_points, dtype=np.float64)
        if points.ndim != 4 or points.shape[-1] != 3:
            raise ValueError(f"control_points must be (N, S, n+1, 3), got {points.shape}")
        if breaks.shape != (points.shape[1] + 1,) or np.any(np.diff(breaks) <= 0):
            raise ValueError("breaks must be (S+1,) and strictly increasing")
        if len(self.drone_ids) != points.shape[0]:
            raise ValueError("one drone id per trajectory is required")
        object.__setattr__(self, "breaks", breaks)
        object.__setattr__(self, "control_points", points)
        if not self.segment_labels:
            object.__setattr__(self, "segment_labels", tuple("" for _ in range(points.shape[1])))

    @property
    def n_drones(self) -> int:
        return self.control_points.shape[0]

    @property
    def n_segments(self) -> int:
        return self.control_points.shape[1]

    @property
    def degree(self) -> int:
        return self.control_points.shape[2] - 1

    @cached_property
    def durations(self) -> np.ndarray:
        """Piece durations ``(S,)`` in seconds."""
        return np.diff(self.breaks)

    @property
    def duration(self) -> float:
        return float(self.breaks[-1])

    def derivative_points(self, order: int) -> np.ndarray:
        """Control points of the ``order``-th derivative ``(N, S, n + 1 - order, 3)`` (m/s**order)."""
        return self._derivatives[order]

    @cached_property
    def _derivatives(self) -> list[np.ndarray]:
        out = [self.control_points]
        for _ in range(4):
            out.append(derivative_control_points(out[-1], self.durations[None, :]))
        return out

    def hull_bound(self, order: int, axes: slice = slice(None)) -> np.ndarray:
        """Upper bound ``(N, S)`` of the norm of the ``order``-th derivative on each piece, from
        the Bézier convex-hull property (largest norm of its control points over ``axes``)."""
        pts = self.derivative_points(order)[..., axes]
        return np.linalg.norm(pts, axis=-1).max(axis=-1)

    def window_points(self, order: int, parts: int) -> np.ndarray:
        """Control points ``(N, S, parts, n + 1 - order, 3)`` of the ``order``-th derivative on each
        of ``parts`` equal sub-intervals of every piece (their hulls bound it more tightly)."""
        return split_equal_parts(self.derivative_points(order), parts)

    def locate(self, t: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
        """Piece index ``(T,)`` and local parameter ``tau`` ``(T,)`` for times ``t`` (clamped)."""
        t = np.clip(np.asarray(t, dtype=np.float64), 0.0, self.duration)
        seg = np.clip(np.searchsorted(self.breaks, t, side="right") - 1, 0, self.n_segments - 1)
        tau = (t - self.breaks[seg]) / self.durations[seg]
        return seg, np.clip(tau, 0.0, 1.0)

    def evaluate(self, t: np.ndarray, order: int = 0) -> np.ndarray:
        """Positions (or derivatives) of every drone at times ``t`` ``(T,)`` → ``(T, N, 3)``."""
        seg, tau = self.locate(t)
        pts = self.derivative_points(order)
        basis = bernstein_basis(pts.shape[2] - 1, tau)
        out = np.empty((len(seg), self.n_drones, 3))
        for s in np.unique(seg):
            rows = np.nonzero(seg == s)[0]
            out[rows] = np.einsum("tk,nkd->tnd", basis[rows], pts[:, s])
        return out

    def evaluate_rows(self, drones: np.ndarray, t: np.ndarray, order: int = 0) -> np.ndarray:
        """Value of drone ``drones[m]`` at time ``t[m]`` for every row → ``(M, 3)``."""
        seg, tau = self.locate(t)
        pts = self.derivative_points(order)
        basis = bernstein_basis(pts.shape[2] - 1, tau)
        return np.einsum("mk,mkd->md", basis, pts[np.asarray(drones), seg])

    def monomial_coefficients(self) -> np.ndarray:
        """Power-basis coefficients ``(N, S, n + 1, 3)`` in each piece's local time (seconds)."""
        return monomial_coefficients(self.control_points, self.durations[None, :])
