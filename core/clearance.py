"""The ellipsoid clearance model, implemented once and used by every stage.

Each drone carries an axis-aligned clearance ellipsoid with half-axes ``a_i`` ``(3,)`` (metres;
taller than wide because of downwash). Two drones conflict when their relative position lies in
the Minkowski sum of their ellipsoids. For drones of the same shape that sum is the ellipsoid with
half-axes ``a_i + a_j``; for different shapes we use the enclosing ellipsoid

    Q_ij = (1 + 1/p) diag(a_i²) + (1 + p) diag(a_j²),   p = |a_i| / |a_j|,

which contains the sum for every ``p > 0`` and equals it when the shapes are similar (Kurzhanski &
Vályi, "Ellipsoidal Calculus for Estimation and Control", 1997 — outer sum bound; ``p`` chosen
to minimise the trace). The *separation ratio* ``rho = |d / r_ij|`` (``r_ij = sqrt(diag Q_ij)``)
is ≥ 1 exactly when the pair is clear.
"""

from __future__ import annotations

import numpy as np
from scipy.spatial import cKDTree


def pair_radii(axes_i: np.ndarray, axes_j: np.ndarray) -> np.ndarray:
    """Half-axes ``(M, 3)`` of the (enclosing) Minkowski-sum ellipsoid of ``(M, 3)`` pairs."""
    axes_i = np.asarray(axes_i, dtype=np.float64)
    axes_j = np.asarray(axes_j, dtype=np.float64)
    p = np.linalg.norm(axes_i, axis=-1, keepdims=True) / np.linalg.norm(axes_j, axis=-1, keepdims=True)
    return np.sqrt((1 + 1 / p) * axes_i**2 + (1 + p) * axes_j**2)


class ClearanceModel:
    """Pairwise separation for a fleet whose drone ``i`` has half-axes ``semi_axes[i]`` ``(N, 3)``.

    Built once per fleet (:attr:`core.scene.model.Fleet.clearance`) and passed to every stage.
    ``envelope`` ``(3,)`` m is the largest half-axis of any drone per axis (the shape obstacles are
    kept from); ``pair_envelope`` ``(3,)`` m is the largest pair half-axis per axis over the fleet:
    distances in coordinates divided by it never exceed the exact ratio, so KD-tree searches in
    those coordinates find a superset of the close pairs, which :meth:`ratio` then measures exactly.
    """

    def __init__(self, semi_axes: np.ndarray):
        self.semi_axes = np.asarray(semi_axes, dtype=np.float64).reshape(-1, 3)
        kinds, kind_of = np.unique(self.semi_axes, axis=0, return_inverse=True)
        #: ``(N,)`` each drone's shape index into :attr:`kind_pair_radii` (drones of equal half-axes share one).
        self.kind_of = kind_of.ravel()
        k = len(kinds)
        ii, jj = np.meshgrid(np.arange(k), np.arange(k), indexing="ij")
        #: ``(K, K, 3)`` pair half-axes for every two shapes (symmetric in the two shapes).
        self.kind_pair_radii = pair_radii(kinds[ii.ravel()], kinds[jj.ravel()]).reshape(k, k, 3)
        self.pair_envelope = self.kind_pair_radii.reshape(-1, 3).max(axis=0)
        self.envelope = kinds.max(axis=0)
        self.homogeneous = k == 1

    def radii(self, i: np.ndarray, j: np.ndarray) -> np.ndarray:
        """Pair half-axes ``(M, 3)`` for drone index arrays ``i``, ``j`` ``(M,)``."""
        return self.kind_pair_radii[self.kind_of[i], self.kind_of[j]]

    def ratio(self, i: np.ndarray, j: np.ndarray, pos_i: np.ndarray, pos_j: np.ndarray) -> np.ndarray:
        """Separation ratios ``(M,)`` of pairs ``(i, j)`` at positions ``(M, 3)`` (≥ 1 is clear)."""
        return np.linalg.norm((pos_i - pos_j) / self.radii(i, j), axis=-1)

    def scaled(self, positions: np.ndarray) -> np.ndarray:
        """Positions ``(..., 3)`` divided by :attr:`pair_envelope` (the KD-tree coordinates)."""
        return np.asarray(positions, dtype=np.float64) / self.pair_envelope

    def neighbourhood(self, positions: np.ndarray, below: float) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """One KD-tree pass over ``positions`` ``(N, 3)``.

        Returns pairs ``(M, 2)`` (``i < j``) whose ratio under the fleet's largest pair shape is
        below ``below``, those ratios ``(M,)`` (each ≤ the exact ratio), and per drone a lower bound
        ``(N,)`` on its smallest ratio to any other drone (exact for a fleet of one shape).
        """
        q = self.scaled(positions)
        tree = cKDTree(q)
        pairs = tree.query_pairs(below, output_type="ndarray")
        ratios = np.linalg.norm(q[pairs[:, 0]] - q[pairs[:, 1]], axis=-1) if len(pairs) else np.empty(0)
        if len(q) < 2:
            return pairs.reshape(-1, 2), ratios, np.full(len(q), np.inf)
        nearest, _ = tree.query(q, k=2)
        return pairs.reshape(-1, 2), ratios, nearest[:, 1]

    def bound_pairs(self, positions: np.ndarray, below: float = 1.0) -> tuple[np.ndarray, np.ndarray]:
        """Pairs ``(M, 2)`` whose ratio under the fleet's largest pair shape is below ``below``,
        with those ratios ``(M,)`` (each ≤ the exact ratio)."""
        q = self.scaled(positions)
        pairs = cKDTree(q).query_pairs(below, output_type="ndarray").reshape(-1, 2)
        return pairs, np.linalg.norm(q[pairs[:, 0]] - q[pairs[:, 1]], axis=-1)

    def close_pairs(self, positions: np.ndarray, below: float = 1.0) -> tuple[np.ndarray, np.ndarray]:
        """Pairs ``(M, 2)`` (``i < j``) with exact ratio below ``below``, and those ratios ``(M,)``."""
        pairs, _ = self.bound_pairs(positions, below)
        r = self.ratio(pairs[:, 0], pairs[:, 1], positions[pairs[:, 0]], positions[pairs[:, 1]])
        keep = r < below
        return pairs[keep], r[keep]
