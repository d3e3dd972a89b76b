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

Two refinements come from the scene (:class:`core.scene.model.Fleet`): a per-pair table may give a
pair of drone types its own half-axes instead of the enclosing sum, and each type may shift its
clearance centre ``c_i = p_i − shift_i e_z`` below the drone. The ratio is then measured between
clearance centres, ``rho = |(c_j − c_i) / r_ij|``: against a drone of smaller shift, a drone of
larger shift needs ``r_z + Δshift`` of vertical room below it and ``r_z − Δshift`` above it (the
pair region is shifted downward under the upper, heavier drone). Every stage — formation checks,
roadmap conflicts, corridors, string pulling, the discrete and continuous verifiers — measures in
those centres, so they all keep the same rule.
"""

from __future__ import annotations

from collections.abc import Mapping

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

    shifts : ``(N,)`` metres (default 0), how far below drone ``i`` its clearance centre sits:
        pair shapes are measured between clearance centres, so a drone of larger shift needs that
        much more room below it and that much less above it against a drone of smaller shift (a
        heavier drone's downwash), while two drones of equal shift keep a symmetric pair shape.
    labels, overrides : per-pair half-axes that replace the enclosing sum — ``overrides`` maps
        ``(label a, label b)`` (either order) to ``(3,)`` metres, ``labels`` ``(N,)`` gives each
        drone's label (the fleet uses drone type indices).

    Built once per fleet (:attr:`core.scene.model.Fleet.clearance`) and passed to every stage.
    Drones of equal half-axes, shift and override label share a *kind* (:attr:`kind_of`).
    ``envelope`` ``(3,)`` m is the largest half-axis of any drone per axis; ``pair_envelope``
    ``(3,)`` m is the largest pair half-axis per axis over the fleet: distances between clearance
    centres (:meth:`centres`) divided by it never exceed the exact ratio, so KD-tree searches in
    those coordinates find a superset of the close pairs, which :meth:`ratio` then measures exactly.
    """

    def __init__(self, semi_axes: np.ndarray, shifts: np.ndarray | None = None, labels: np.ndarray | None = None,
                 overrides: Mapping[tuple[int, int], np.ndarray] | None = None):
        self.semi_axes = np.asarray(semi_axes, dtype=np.float64).reshape(-1, 3)
        n = len(self.semi_axes)
        shifts = np.zeros(n) if shifts is None else np.asarray(shifts, dtype=np.float64).reshape(n)
        overrides = dict(overrides or {})
        overridden = {label for pair in overrides for label in pair}
        labels = np.full(n, -1) if labels is None else np.asarray(labels).reshape(n)
        own_label = np.array([label if label in overridden else -1 for label in labels.tolist()], dtype=np.float64)
        keys, first, kind_of = np.unique(np.c_[self.semi_axes, shifts, own_label], axis=0, return_index=True,
                                         return_inverse=True)
        #: ``(N,)`` each drone's kind: index into :attr:`kind_axes`, :attr:`kind_shift`, :attr:`kind_pair_radii`.
        self.kind_of = kind_of.ravel()
        self.kind_axes, self.kind_shift = keys[:, :3], keys[:, 3]
        k = len(keys)
        ii, jj = np.meshgrid(np.arange(k), np.arange(k), indexing="ij")
        #: ``(K, K, 3)`` pair half-axes for every two kinds (symmetric in the two kinds).
        self.kind_pair_radii = pair_radii(self.kind_axes[ii.ravel()], self.kind_axes[jj.ravel()]).reshape(k, k, 3)
        kind_label = labels[first]
        for a in range(k):
            for b in range(k):
                pair = (int(kind_label[a]), int(kind_label[b]))
                given = overrides.get(pair, overrides.get(pair[::-1]))
                if given is not None and keys[a, 4] >= 0 and keys[b, 4] >= 0:
                    self.kind_pair_radii[a, b] = given
        #: ``(K, 3)`` each kind's clearance centre relative to the drone, metres: ``(0, 0, −shift)``
        #: counted from the smallest shift (only differences matter; a fleet of one shift has none).
        self.kind_offsets = np.c_[np.zeros((k, 2)), self.kind_shift.min() - self.kind_shift]
        #: ``(N, 3)`` each drone's clearance centre relative to its position, metres.
        self.offsets = self.kind_offsets[self.kind_of]
        self.pair_envelope = self.kind_pair_radii.reshape(-1, 3).max(axis=0)
        self.envelope = self.kind_axes.max(axis=0)
        self.homogeneous = k == 1
        self.shifted = bool(np.any(self.kind_shift != self.kind_shift[0]))

    def radii(self, i: np.ndarray, j: np.ndarray) -> np.ndarray:
        """Pair half-axes ``(M, 3)`` for drone index arrays ``i``, ``j`` ``(M,)``."""
        return self.kind_pair_radii[self.kind_of[i], self.kind_of[j]]

    def centres(self, positions: np.ndarray) -> np.ndarray:
        """Clearance centres of fleet positions ``(N, ..., 3)`` (drone index first), metres."""
        positions = np.asarray(positions, dtype=np.float64)
        if not self.shifted:
            return positions
        return positions + self.offsets.reshape((len(self.offsets),) + (1,) * (positions.ndim - 2) + (3,))

    def ratio(self, i: np.ndarray, j: np.ndarray, pos_i: np.ndarray, pos_j: np.ndarray) -> np.ndarray:
        """Separation ratios ``(M,)`` of pairs ``(i, j)`` at positions ``(M, 3)`` (≥ 1 is clear)."""
        gap = (pos_i + self.offsets[i]) - (pos_j + self.offsets[j])
        return np.linalg.norm(gap / self.radii(i, j), axis=-1)

    def scaled(self, positions: np.ndarray) -> np.ndarray:
        """Clearance centres of fleet positions ``(N, 3)`` divided by :attr:`pair_envelope` (the
        KD-tree coordinates)."""
        return self.centres(positions) / self.pair_envelope

    def kind_ratios(self, a: np.ndarray, b: np.ndarray) -> np.ndarray:
        """Ratios ``(M, K, K)`` of points ``a``, ``b`` ``(M, 3)`` were a drone of kind ``k`` on ``a``
        and one of kind ``m`` on ``b`` (for formation points, whose occupants vary)."""
        gap = (a[:, None, None] + self.kind_offsets[None, :, None]) - (b[:, None, None] + self.kind_offsets[None, None])
        return np.linalg.norm(gap / self.kind_pair_radii[None], axis=-1)

    @property
    def shift_slack(self) -> float:
        """Largest ``|shift_k − shift_m| / r_km,z`` over kind pairs: a lower bound on a pair's ratio
        from point distances in :attr:`pair_envelope` units alone must subtract it (0 without shifts)."""
        if not self.shifted:
            return 0.0
        return float(np.max(np.abs(self.kind_shift[:, None] - self.kind_shift[None]) / self.kind_pair_radii[..., 2]))

    def neighbourhood(self, positions: np.ndarray, below: float) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
        """One KD-tree pass over fleet ``positions`` ``(N, 3)``.

        Returns pairs ``(M, 2)`` (``i < j``) whose ratio under the fleet's largest pair shape is
        below ``below``, those ratios ``(M,)`` (each ≤ the exact ratio), and per drone a lower bound
        ``(N,)`` on its smallest ratio to any other drone (exact for a fleet of one kind).
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
        """Pairs ``(M, 2)`` of fleet ``positions`` ``(N, 3)`` whose ratio under the fleet's largest
        pair shape is below ``below``, with those ratios ``(M,)`` (each ≤ the exact ratio)."""
        q = self.scaled(positions)
        pairs = cKDTree(q).query_pairs(below, output_type="ndarray").reshape(-1, 2)
        return pairs, np.linalg.norm(q[pairs[:, 0]] - q[pairs[:, 1]], axis=-1)

    def close_pairs(self, positions: np.ndarray, below: float = 1.0) -> tuple[np.ndarray, np.ndarray]:
        """Pairs ``(M, 2)`` (``i < j``) of fleet ``positions`` ``(N, 3)`` with exact ratio below
        ``below``, and those ratios ``(M,)``."""
        pairs, _ = self.bound_pairs(positions, below)
        r = self.ratio(pairs[:, 0], pairs[:, 1], positions[pairs[:, 0]], positions[pairs[:, 1]])
        keep = r < below
        return pairs[keep], r[keep]
