"""Which roadmap actions cannot happen in the same synchronized time step.

An *action* is waiting at a vertex or traversing an edge (either way) during one step. Two actions
conflict when the swept clearance volumes can touch: in coordinates scaled by the pair clearance
half-axes, vertex–vertex distance, vertex–segment distance or segment–segment distance below 1.
The segment–segment test ignores where each drone is within the step, so the result holds for any
timing inside the step (smoothing relies on that). Candidates are pruned with KD-trees on segment
midpoints, then measured exactly with :mod:`core.geometry`.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.spatial import cKDTree

from ..geometry import point_segment_distance, segment_segment_distance

_CHUNK = 200_000


@dataclass(frozen=True)
class ConflictPairs:
    """Conflicting index pairs: ``vv`` (vertex, vertex) with i < j, ``ve`` (vertex, edge), ``ee``
    (edge, edge) with i < j — all ``(P, 2)`` int arrays; an action always conflicts with itself."""

    vv: np.ndarray
    ve: np.ndarray
    ee: np.ndarray

    @property
    def count(self) -> int:
        return len(self.vv) + len(self.ve) + len(self.ee)

    def merged(self, other: ConflictPairs) -> ConflictPairs:
        return ConflictPairs(*(np.concatenate([a, b]) for a, b in
                               ((self.vv, other.vv), (self.ve, other.ve), (self.ee, other.ee))))


def vertex_vertex(points_a: np.ndarray, points_b: np.ndarray | None = None) -> np.ndarray:
    """Pairs of scaled points ``(M, 3)`` closer than 1: within ``points_a`` (i < j) or across to ``points_b``."""
    tree_a = cKDTree(points_a)
    if points_b is None:
        return tree_a.query_pairs(1.0 - 1e-12, output_type="ndarray").astype(np.int64).reshape(-1, 2)
    return _sparse_pairs(tree_a, cKDTree(points_b), 1.0 - 1e-12)


def vertex_edge(points: np.ndarray, seg_a: np.ndarray, seg_b: np.ndarray) -> np.ndarray:
    """(point, segment) pairs with distance < 1; all inputs scaled, ``(M, 3)`` / ``(E, 3)``."""
    if len(points) == 0 or len(seg_a) == 0:
        return np.empty((0, 2), dtype=np.int64)
    mid, half = (seg_a + seg_b) / 2, np.linalg.norm(seg_b - seg_a, axis=1) / 2
    cand = _sparse_pairs(cKDTree(points), cKDTree(mid), 1.0 + half.max())
    out = []
    for c in _chunks(cand):
        c = c[np.linalg.norm(points[c[:, 0]] - mid[c[:, 1]], axis=1) < 1.0 + half[c[:, 1]]]
        d = point_segment_distance(points[c[:, 0]], seg_a[c[:, 1]], seg_b[c[:, 1]])
        out.append(c[d < 1.0])
    return _stack(out)


def edge_edge(a0: np.ndarray, a1: np.ndarray, b0: np.ndarray | None = None, b1: np.ndarray | None = None
              ) -> np.ndarray:
    """Segment pairs with distance < 1: within ``a`` (i < j) or between ``a`` and ``b`` (scaled)."""
    same = b0 is None
    b0, b1 = (a0, a1) if same else (b0, b1)
    if len(a0) == 0 or len(b0) == 0:
        return np.empty((0, 2), dtype=np.int64)
    mid_a, half_a = (a0 + a1) / 2, np.linalg.norm(a1 - a0, axis=1) / 2
    mid_b, half_b = (b0 + b1) / 2, np.linalg.norm(b1 - b0, axis=1) / 2
    radius = 1.0 + half_a.max() + half_b.max()
    tree_a = cKDTree(mid_a)
    cand = (tree_a.query_pairs(radius, output_type="ndarray").astype(np.int64).reshape(-1, 2) if same
            else _sparse_pairs(tree_a, cKDTree(mid_b), radius))
    out = []
    for c in _chunks(cand):
        i, j = c[:, 0], c[:, 1]
        c = c[np.linalg.norm(mid_a[i] - mid_b[j], axis=1) < 1.0 + half_a[i] + half_b[j]]
        i, j = c[:, 0], c[:, 1]
        d = segment_segment_distance(a0[i], a1[i], b0[j], b1[j])
        out.append(c[d < 1.0])
    return _stack(out)


def annotate(vertices: np.ndarray, edges: np.ndarray, pair_envelope: np.ndarray) -> ConflictPairs:
    """All conflicts of a roadmap: ``vertices`` ``(V, 3)`` metres, ``edges`` ``(E, 2)``, pair
    clearance half-axes ``pair_envelope`` ``(3,)`` metres."""
    p = vertices / pair_envelope
    return ConflictPairs(vertex_vertex(p), vertex_edge(p, p[edges[:, 0]], p[edges[:, 1]]),
                         edge_edge(p[edges[:, 0]], p[edges[:, 1]]))


def annotate_added(vertices: np.ndarray, edges: np.ndarray, n_old_vertices: int, n_old_edges: int,
                   pair_envelope: np.ndarray) -> ConflictPairs:
    """Conflicts involving vertices ``≥ n_old_vertices`` or edges ``≥ n_old_edges`` (appended to a
    roadmap whose own conflicts are already known); same arguments as :func:`annotate`."""
    p = vertices / pair_envelope
    s0, s1 = p[edges[:, 0]], p[edges[:, 1]]
    nv, ne = n_old_vertices, n_old_edges
    vv_new = vertex_vertex(p[nv:])
    vv_cross = vertex_vertex(p[nv:], p[:nv])
    vv = np.concatenate([vv_new + nv, np.c_[vv_cross[:, 1], vv_cross[:, 0] + nv]])
    ve_new_vertices = vertex_edge(p[nv:], s0, s1) + [nv, 0]
    ve_old_vertices = vertex_edge(p[:nv], s0[ne:], s1[ne:]) + [0, ne]
    ee_new = edge_edge(s0[ne:], s1[ne:]) + ne
    ee_cross = edge_edge(s0[:ne], s1[:ne], s0[ne:], s1[ne:]) + [0, ne]
    return ConflictPairs(vv, np.concatenate([ve_new_vertices, ve_old_vertices]), np.concatenate([ee_new, ee_cross]))


def _sparse_pairs(tree_a: cKDTree, tree_b: cKDTree, radius: float) -> np.ndarray:
    m = tree_a.sparse_distance_matrix(tree_b, radius, output_type="ndarray")
    return np.c_[m["i"], m["j"]].astype(np.int64)


def _chunks(pairs: np.ndarray):
    for k in range(0, max(len(pairs), 1), _CHUNK):
        yield pairs[k:k + _CHUNK]


def _stack(parts: list[np.ndarray]) -> np.ndarray:
    return np.concatenate(parts).astype(np.int64).reshape(-1, 2) if parts else np.empty((0, 2), dtype=np.int64)
