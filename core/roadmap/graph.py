"""The roadmap as plain arrays, and its action-conflict table for the search."""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property

import numpy as np
from scipy import sparse
from scipy.sparse import csgraph

from .conflicts import ConflictPairs


@dataclass(frozen=True, eq=False)
class Roadmap:
    """vertices ``(V, 3)`` metres; edges ``(E, 2)`` vertex indices (i < j), undirected, lengths
    ``(E,)`` metres; conflicts between its actions (wait at vertex v = action v, traverse edge e =
    action V + e)."""

    vertices: np.ndarray
    edges: np.ndarray
    conflicts: ConflictPairs

    @property
    def n_vertices(self) -> int:
        return len(self.vertices)

    @property
    def n_actions(self) -> int:
        return len(self.vertices) + len(self.edges)

    @cached_property
    def lengths(self) -> np.ndarray:
        return np.linalg.norm(self.vertices[self.edges[:, 1]] - self.vertices[self.edges[:, 0]], axis=1)

    @cached_property
    def length_matrix(self) -> sparse.csr_matrix:
        """Symmetric ``(V, V)`` edge-length matrix for ``scipy.sparse.csgraph``."""
        v = self.n_vertices
        m = sparse.coo_matrix((self.lengths, (self.edges[:, 0], self.edges[:, 1])), shape=(v, v))
        return (m + m.T).tocsr()

    @cached_property
    def neighbours(self) -> list[list[tuple[int, int]]]:
        """Per vertex: ``(next vertex, action id)`` for every edge leaving it."""
        out: list[list[tuple[int, int]]] = [[] for _ in range(self.n_vertices)]
        base = self.n_vertices
        for e, (u, v) in enumerate(self.edges.tolist()):
            out[u].append((v, base + e))
            out[v].append((u, base + e))
        return out

    @cached_property
    def action_conflicts(self) -> sparse.csr_matrix:
        """Symmetric boolean ``(A, A)`` table, diagonal included: actions that may not share a step."""
        v, a = self.n_vertices, self.n_actions
        c = self.conflicts
        rows = np.concatenate([c.vv[:, 0], c.ve[:, 0], c.ee[:, 0] + v])
        cols = np.concatenate([c.vv[:, 1], c.ve[:, 1] + v, c.ee[:, 1] + v])
        both = np.concatenate([rows, cols, np.arange(a)]), np.concatenate([cols, rows, np.arange(a)])
        return sparse.coo_matrix((np.ones(len(both[0]), dtype=bool), both), shape=(a, a)).tocsr()

    def conflict_counts(self, actions: np.ndarray) -> np.ndarray:
        """``(A,)`` int32: for every action, how many of ``actions`` ``(M,)`` (repeats count) it conflicts with."""
        table = self.action_conflicts
        start, stop = table.indptr[actions], table.indptr[actions + 1]
        lengths = stop - start
        offsets = np.repeat(start - np.cumsum(np.r_[0, lengths[:-1]]), lengths)
        cols = table.indices[np.arange(lengths.sum()) + offsets]
        return np.bincount(cols, minlength=self.n_actions).astype(np.int32)

    @cached_property
    def conflict_keys(self) -> np.ndarray:
        """Sorted ``a · A + b`` for every conflicting ordered action pair (fast membership tests)."""
        m = self.action_conflicts.tocoo()
        return np.sort(m.row.astype(np.int64) * self.n_actions + m.col)

    def in_conflict(self, a: np.ndarray, b: np.ndarray) -> np.ndarray:
        """Whether actions ``a`` and ``b`` (same shape, int) conflict, elementwise."""
        keys = np.asarray(a, dtype=np.int64) * self.n_actions + b
        pos = np.searchsorted(self.conflict_keys, keys)
        pos = np.minimum(pos, len(self.conflict_keys) - 1)
        return self.conflict_keys[pos] == keys

    def hop_distances(self, targets: np.ndarray) -> np.ndarray:
        """``(len(targets), V)`` number of edges on the fewest-edge path to each target (inf: none)."""
        return csgraph.shortest_path(self.length_matrix, unweighted=True, directed=False, indices=targets)

    def path_lengths(self, sources: np.ndarray) -> np.ndarray:
        """``(len(sources), V)`` shortest path length in metres from each source (inf: unreachable)."""
        return csgraph.dijkstra(self.length_matrix, directed=False, indices=sources)

    def component_labels(self) -> np.ndarray:
        return csgraph.connected_components(self.length_matrix, directed=False)[1]
