"""The planner's clearance field: "does the clearance ellipsoid centred at p touch an obstacle, and
how much margin is left?" for many points and segments at once.

Everything is measured in coordinates scaled by the ellipsoid's half-axes, where the ellipsoid is
the unit ball; a *margin* is then "scaled distance to the nearest obstacle − 1" (≥ 0: free), a
conservative lower bound (see :mod:`core.obstacles.voxels` for the mesh error bound). Obstacles are
the site's meshes, its keep-out boxes and the flight volume's faces (which drone centres may touch).
"""

from __future__ import annotations

import hashlib
from collections.abc import Sequence

import numpy as np

from ..scene.checks import box_distance_ratio
from ..scene.meshes import SiteMesh
from .voxels import MeshDistanceGrid

#: Default voxel pitch in scaled units (fractions of the clearance radius).
DEFAULT_PITCH = 0.2


class ClearanceField:
    """Conservative clearance margins for one clearance ellipsoid ``semi_axes`` ``(3,)`` (metres).

    meshes : placed site meshes; flight_volume : ``(2, 3)`` box for drone centres; keep_out :
    ``(2, 3)`` boxes; pitch : voxel size in scaled units.
    """

    def __init__(self, semi_axes: np.ndarray, meshes: Sequence[SiteMesh], flight_volume: np.ndarray,
                 keep_out: Sequence[np.ndarray] = (), pitch: float = DEFAULT_PITCH):
        self.semi_axes = np.asarray(semi_axes, dtype=float)
        self.flight_volume = np.asarray(flight_volume, dtype=float)
        self.keep_out = [np.asarray(b, dtype=float) for b in keep_out]
        self.mesh_names = tuple(m.name for m in meshes)
        self.mesh_digests = tuple(_digest(m) for m in meshes)
        self.grids = [
            MeshDistanceGrid(m.mesh.vertices / self.semi_axes, m.mesh.faces, pitch, pad=2.0 + 2 * pitch,
                             solid=m.watertight)
            for m in meshes
        ]
        self.error_bound = max((g.error for g in self.grids), default=0.0)

    def margins(self, points: np.ndarray) -> np.ndarray:
        """Conservative margin ``(M,)`` of points ``(M, 3)`` in metres (scaled units out; < 0: collision)."""
        return self.margin_parts(points).min(axis=0)

    def margin_parts(self, points: np.ndarray) -> np.ndarray:
        """Margins ``(1 + boxes + meshes, M)``: flight volume, each keep-out box, each mesh."""
        points = np.atleast_2d(points)
        scaled = points / self.semi_axes
        lo, hi = self.flight_volume / self.semi_axes
        parts = [np.minimum(scaled - lo, hi - scaled).min(axis=1)]
        parts += [box_distance_ratio(points, box, self.semi_axes) - 1.0 for box in self.keep_out]
        parts += [g.lower_bound(scaled) - 1.0 for g in self.grids]
        return np.stack(parts)

    def blocking(self, points: np.ndarray) -> list[str]:
        """Names of what each point ``(M, 3)`` collides with ('' where free): volume, box or mesh."""
        names = ["flight volume"] + [f"keep-out box {k}" for k in range(len(self.keep_out))] \
            + [f"mesh {n!r}" for n in self.mesh_names]
        parts = self.margin_parts(points)
        worst = parts.argmin(axis=0)
        return [names[w] if parts[w, k] < 0 else "" for k, w in enumerate(worst)]

    def segments_clear(self, a: np.ndarray, b: np.ndarray, spacing: float | None = None) -> np.ndarray:
        """Whether each segment ``a``–``b`` (``(M, 3)`` metres) keeps a clearance margin ≥ 0 everywhere.

        The flight volume is convex, so both ends inside it suffice; boxes and meshes use
        :meth:`segment_margins`.
        """
        a, b = np.atleast_2d(a), np.atleast_2d(b)
        lo, hi = self.flight_volume
        inside = np.all((a >= lo) & (a <= hi) & (b >= lo) & (b <= hi), axis=1)
        return inside & (self.segment_margins(a, b, spacing) >= 0)

    def segment_margins(self, a: np.ndarray, b: np.ndarray, spacing: float | None = None) -> np.ndarray:
        """Lower bound ``(M,)`` on the margin to keep-out boxes and meshes along segments ``a``–``b``
        (``(M, 3)`` metres; scaled units out, ``inf`` without such obstacles).

        Points every ``spacing`` scaled units (default: the voxel pitch); margins are 1-Lipschitz in
        scaled coordinates, so every point of the segment has at least the smallest sample margin
        minus half a sample spacing.
        """
        a, b = np.atleast_2d(a), np.atleast_2d(b)
        if not self.keep_out and not self.grids:
            return np.full(len(a), np.inf)
        spacing = spacing or (self.grids[0].pitch if self.grids else DEFAULT_PITCH)
        length = np.linalg.norm((b - a) / self.semi_axes, axis=1)
        n = np.maximum(np.ceil(length / spacing).astype(np.int64), 1)
        row = np.repeat(np.arange(len(a)), n + 1)
        offsets = np.cumsum(np.r_[0, n[:-1] + 1])
        frac = (np.arange(len(row)) - offsets[row]) / n[row]
        points = a[row] + frac[:, None] * (b - a)[row]
        bound = self.margin_parts(points)[1:].min(axis=0) - 0.5 * (length[row] / n[row])
        return np.minimum.reduceat(bound, offsets)


def _digest(mesh: SiteMesh) -> str:
    """Hash of a placed mesh's geometry (for cache keys)."""
    h = hashlib.sha256(np.ascontiguousarray(mesh.mesh.vertices, dtype=np.float64).tobytes())
    h.update(np.ascontiguousarray(mesh.mesh.faces, dtype=np.int64).tobytes())
    h.update(b"solid" if mesh.watertight else b"surface")
    return h.hexdigest()
