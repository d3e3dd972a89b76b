"""A voxel distance grid for one triangle mesh, in coordinates scaled by a clearance ellipsoid.

``lower_bound(p)`` never exceeds the true distance from ``p`` to the mesh (surface, and inside for
watertight meshes). Derivation of the bound ``error = √3·h + s/√3`` (pitch ``h``, triangle sample
spacing ``s = h/2``):

* every surface point lies within ``s/√3`` of a surface sample (the covering radius of a triangle
  whose edges are at most ``s`` is at most ``s/√3``: its circumradius when acute, half its longest
  edge otherwise), and every sample within ``h·√3/2`` of its voxel's centre;
* ``grid[g]`` is the exact Euclidean distance from voxel centre ``g`` to the nearest occupied voxel
  centre (scipy's exact EDT); a query point is within ``h·√3/2`` of its nearest centre ``g``.

So ``true(p) ≥ grid[g] − h√3/2 − s/√3 − h√3/2``. For a point inside a watertight mesh the same sum
bounds ``grid[g]`` from above, so the bound is ≤ 0 there.
"""

from __future__ import annotations

import numpy as np
from scipy import ndimage

from ..scene.checks import box_distance_ratio


class MeshDistanceGrid:
    """Distance lower bounds to one mesh (the triangles ``faces`` ``(F, 3)`` of ``vertices``
    ``(V, 3)``; vertices no face uses are ignored), already in scaled coordinates; ``pitch`` and
    ``pad`` in the same units; ``solid`` fills the inside by ray
    parity (only sound for watertight meshes)."""

    def __init__(self, vertices: np.ndarray, faces: np.ndarray, pitch: float, pad: float, solid: bool):
        self.pitch = float(pitch)
        self.sample_spacing = self.pitch / 2
        self.error = np.sqrt(3.0) * self.pitch + self.sample_spacing / np.sqrt(3.0)
        used = vertices[np.unique(faces)]
        self.bounds = np.array([used.min(axis=0), used.max(axis=0)])
        self.origin = self.bounds[0] - pad
        self.shape = tuple(np.ceil((self.bounds[1] - self.bounds[0] + 2 * pad) / self.pitch).astype(int) + 1)
        triangles = vertices[faces]
        occupied = np.zeros(self.shape, dtype=bool)
        occupied[tuple(self._voxel_of(_surface_samples(triangles, self.sample_spacing)).T)] = True
        if solid:
            occupied |= self._inside(triangles)
        self.grid = ndimage.distance_transform_edt(~occupied, sampling=self.pitch).astype(np.float32)

    def _voxel_of(self, points: np.ndarray) -> np.ndarray:
        index = np.floor((points - self.origin) / self.pitch).astype(np.int64)
        return np.clip(index, 0, np.array(self.shape) - 1)

    def _inside(self, triangles: np.ndarray) -> np.ndarray:
        """Voxels whose centre is inside the mesh: crossings of +z rays through column centres."""
        nx, ny, nz = self.shape
        h, o = self.pitch, self.origin
        # A tiny irrational offset keeps rays off shared edges and vertices.
        jitter = h * 1e-6 * np.array([np.sqrt(2.0), np.sqrt(3.0)])
        a, b, c = triangles[:, 0], triangles[:, 1], triangles[:, 2]
        area2 = (b[:, 0] - a[:, 0]) * (c[:, 1] - a[:, 1]) - (b[:, 1] - a[:, 1]) * (c[:, 0] - a[:, 0])
        keep = np.abs(area2) > 1e-14
        a, b, c, area2 = a[keep], b[keep], c[keep], area2[keep]
        lo = np.ceil((np.minimum(np.minimum(a, b), c)[:, :2] - o[:2] - jitter) / h - 0.5).astype(np.int64)
        hi = np.floor((np.maximum(np.maximum(a, b), c)[:, :2] - o[:2] - jitter) / h - 0.5).astype(np.int64)
        lo, hi = np.maximum(lo, 0), np.minimum(hi, [nx - 1, ny - 1])
        counts = np.zeros((nx, ny, nz + 1), dtype=np.int32)
        span = np.maximum(hi - lo + 1, 0)
        tri = np.repeat(np.arange(len(a)), span[:, 0] * span[:, 1])
        if len(tri) == 0:
            return np.zeros(self.shape, dtype=bool)
        first = np.cumsum(np.r_[0, (span[:, 0] * span[:, 1])[:-1]])
        local = np.arange(len(tri)) - first[tri]
        ix = lo[tri, 0] + local // span[tri, 1]
        iy = lo[tri, 1] + local % span[tri, 1]
        px = o[0] + (ix + 0.5) * h + jitter[0]
        py = o[1] + (iy + 0.5) * h + jitter[1]
        ta, tb, tc = a[tri], b[tri], c[tri]
        w_b = ((px - ta[:, 0]) * (tc[:, 1] - ta[:, 1]) - (py - ta[:, 1]) * (tc[:, 0] - ta[:, 0])) / area2[tri]
        w_c = ((tb[:, 0] - ta[:, 0]) * (py - ta[:, 1]) - (tb[:, 1] - ta[:, 1]) * (px - ta[:, 0])) / area2[tri]
        hit = (w_b >= 0) & (w_c >= 0) & (w_b + w_c <= 1)
        z = (ta[:, 2] + w_b * (tb[:, 2] - ta[:, 2]) + w_c * (tc[:, 2] - ta[:, 2]))[hit]
        first_above = np.clip(np.ceil((z - o[2]) / h - 0.5), 0, nz).astype(np.int64)
        np.add.at(counts, (ix[hit], iy[hit], first_above), 1)
        return (np.cumsum(counts, axis=2)[:, :, :nz] % 2) == 1

    def lower_bound(self, points: np.ndarray) -> np.ndarray:
        """Lower bounds ``(M,)`` of the distance from ``points`` ``(M, 3)`` (scaled) to the mesh."""
        index = np.floor((points - self.origin) / self.pitch).astype(np.int64)
        inside = np.all((index >= 0) & (index < np.array(self.shape)), axis=1)
        out = box_distance_ratio(points, self.bounds, np.ones(3))
        i = index[inside]
        out[inside] = self.grid[i[:, 0], i[:, 1], i[:, 2]] - self.error
        return out


def _surface_samples(triangles: np.ndarray, spacing: float) -> np.ndarray:
    """Barycentric grid points ``(K, 3)`` on every triangle ``(F, 3, 3)``, sub-triangle edges ≤ ``spacing``."""
    edges = np.linalg.norm(triangles - np.roll(triangles, 1, axis=1), axis=2).max(axis=1)
    n = np.maximum(np.ceil(edges / spacing).astype(np.int64), 1)
    out = []
    for m in np.unique(n):
        i, j = np.meshgrid(np.arange(m + 1), np.arange(m + 1), indexing="ij")
        keep = i + j <= m
        u, v = i[keep] / m, j[keep] / m
        t = triangles[n == m]
        out.append((t[:, None, 0] * (1 - u - v)[None, :, None] + t[:, None, 1] * u[None, :, None]
                    + t[:, None, 2] * v[None, :, None]).reshape(-1, 3))
    return np.concatenate(out)
