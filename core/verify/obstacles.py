"""Obstacle-mesh clearance of fleet trajectories, with exact surface distances (trimesh).

Independent of the planner's voxel field: for each clearance shape the mesh is scaled by the
ellipsoid's half-axes, so "ellipsoid touches the mesh" is "scaled surface distance < 1". The
distance changes no faster than the scaled speed (convex hull of the velocity control points), so
:func:`certify` proves whole intervals. A curve that never comes within that distance of the
surface cannot cross it, so it is inside a watertight mesh for the whole flight exactly when its
start is: that single point is tested with ``contains``.
"""

from __future__ import annotations

import numpy as np
import trimesh

from ..progress import CancelToken
from ..trajectory import FleetTrajectory
from .checker import Rows, certify_unit_ratio_rows
from .report import Violation
from .spec import VerificationSpec

_WINDOWS = 4


def check_obstacles(traj: FleetTrajectory, spec: VerificationSpec, *,
                    cancel: CancelToken | None = None) -> list[Violation]:
    """Every drone's clearance ellipsoid clear of every obstacle mesh over the whole flight."""
    violations: list[Violation] = []
    _n, _n_seg = traj.n_drones, traj.n_segments
    points = traj.window_points(0, _WINDOWS)  # (N, S, W, n+1, 3): hulls of each window
    speed = np.linalg.norm(traj.window_points(1, _WINDOWS), axis=-1).max(axis=-1)  # (N, S, W)
    starts = traj.evaluate(np.array([0.0]))[0]
    for axes in np.unique(spec.semi_axes, axis=0):
        drones = np.nonzero(np.all(spec.semi_axes == axes, axis=1))[0]
        for name, mesh in spec.meshes:
            scaled = trimesh.Trimesh(mesh.vertices / axes, mesh.faces, process=False)
            bounds = scaled.bounds
            hull = points[drones] / axes
            near = _hull_box_distance(hull, bounds) < 1.0  # (n_d, S, W)
            d, s, w = np.nonzero(near)
            width = traj.durations[s] / _WINDOWS
            t_lo = traj.breaks[s] + w * width
            rows = Rows(drones[d], t_lo, t_lo + width, s, speed[drones[d], s, w] / axes.min())

            def margin(r, t, rows=rows, scaled=scaled, axes=axes):
                if cancel is not None:
                    cancel.check()
                p = traj.evaluate_rows(rows.a[r], t) / axes
                if len(p) == 0:
                    return np.empty(0)
                return trimesh.proximity.closest_point(scaled, p)[1] - 1.0

            violations += certify_unit_ratio_rows(
                "obstacle", rows, margin, traj, spec.drone_ids,
                lambda m, name=name: f"clearance ellipsoid touches mesh {name!r} (scaled distance {m:.3f} < 1)",
                cancel)
            if mesh.is_watertight:
                inside = np.nonzero(scaled.contains(starts[drones] / axes))[0]
                violations += [Violation(
                    kind="obstacle", drones=(spec.drone_ids[drones[k]],), time=0.0,
                    position=tuple(float(c) for c in starts[drones[k]]), measured=0.0, required=1.0,
                    detail=f"starts inside mesh {name!r}", proven=True) for k in inside]
    return violations


def _hull_box_distance(hulls: np.ndarray, bounds: np.ndarray) -> np.ndarray:
    """Distance between the bounding box of each set of hull points ``(..., K, 3)`` and the box
    ``bounds`` ``(2, 3)`` (scaled units): a lower bound on the curve's distance to anything in it."""
    low, high = hulls.min(axis=-2), hulls.max(axis=-2)
    gap = np.maximum(bounds[0] - high, 0.0) + np.maximum(low - bounds[1], 0.0)
    return np.linalg.norm(gap, axis=-1) if gap.size else np.zeros(gap.shape[:-1])
