"""Shorter plans by replanning one drone at a time against all the others (a large-neighbourhood
search whose neighbourhoods are single drones; Li, Chen, Harabor, Stuckey & Koenig, "Anytime
multi-agent path finding via large neighborhood search", IJCAI 2021).

Each drone in turn, latest arrival first, gets the shortest space-time path (A* over vertex and
step, hop-distance heuristic) that conflicts with none of the other drones' actions — including
their waits at their goals for ever — and that can then wait at its own goal for ever. Its old path
is one such path, so no drone ever arrives later and the plan stays conflict-free throughout.
"""

from __future__ import annotations

import heapq
import time

import numpy as np
from scipy import sparse

from ..progress import CancelToken
from ..roadmap.graph import Roadmap


class _Occupancy:
    """``counts[t, a]``: how many drones' actions at step ``t`` conflict with action ``a``; row
    ``T`` is everyone waiting at their last vertex (what follows the plan)."""

    def __init__(self, roadmap: Roadmap, actions: np.ndarray, final: np.ndarray):
        table = roadmap.action_conflicts
        self.ptr, self.cols = table.indptr, table.indices
        self.counts = np.stack([roadmap.conflict_counts(row) for row in actions] + [roadmap.conflict_counts(final)])

    def change(self, column: np.ndarray, final: int, sign: int) -> None:
        """Add (``sign`` 1) or remove (-1) one drone's actions ``column`` ``(T,)`` and final wait."""
        for t, a in enumerate(column.tolist()):
            self.counts[t, self.cols[self.ptr[a]:self.ptr[a + 1]]] += sign
        self.counts[-1, self.cols[self.ptr[final]:self.ptr[final + 1]]] += sign


def shorten(roadmap: Roadmap, configs: np.ndarray, hops: np.ndarray, seconds: float,
            cancel: CancelToken | None = None) -> np.ndarray:
    """Configurations ``(T' + 1, N)`` (``T' ≤ T``) no later for any drone than ``configs``
    ``(T + 1, N)`` (a conflict-free plan ending at the goals); ``hops`` ``(N, V)`` hop distances to
    each drone's goal. Stops after ``seconds`` or a pass without gain."""
    cancel = cancel or CancelToken()
    deadline = time.perf_counter() + seconds
    configs = configs.copy()
    steps = configs.shape[0] - 1
    if steps == 0:
        return configs
    edge_of = _edge_lookup(roadmap)
    actions = _actions(configs, edge_of, roadmap.n_vertices)
    occupancy = _Occupancy(roadmap, actions, configs[-1])
    improved = True
    while improved and time.perf_counter() < deadline:
        improved = False
        arrival = _arrivals(configs)
        for i in np.argsort(-arrival, kind="stable").tolist():
            cancel.check()
            if time.perf_counter() > deadline:
                break
            if arrival[i] == 0:
                continue
            occupancy.change(actions[:, i], int(configs[-1, i]), -1)
            path = _space_time_path(roadmap, occupancy.counts, int(configs[0, i]), int(configs[-1, i]), hops[i],
                                    int(arrival[i]))
            if path is not None and len(path) - 1 < arrival[i]:
                column = np.r_[path, np.full(steps + 1 - len(path), path[-1])]
                configs[:, i] = column
                actions[:, i] = _actions(column[:, None], edge_of, roadmap.n_vertices)[:, 0]
                improved = True
            occupancy.change(actions[:, i], int(configs[-1, i]), 1)
    last = int(_arrivals(configs).max())
    return configs[:last + 1]


def _arrivals(configs: np.ndarray) -> np.ndarray:
    """``(N,)`` the step from which each drone stays at its last vertex."""
    away = configs != configs[-1]
    moved = away.any(axis=0)
    return np.where(moved, configs.shape[0] - np.argmax(away[::-1], axis=0), 0)


def _edge_lookup(roadmap: Roadmap) -> sparse.csr_matrix:
    v, e = roadmap.n_vertices, roadmap.edges
    ids = np.arange(1, len(e) + 1)
    m = sparse.coo_matrix((np.r_[ids, ids], (np.r_[e[:, 0], e[:, 1]], np.r_[e[:, 1], e[:, 0]])), shape=(v, v))
    return m.tocsr()


def _actions(configs: np.ndarray, edge_of: sparse.csr_matrix, n_vertices: int) -> np.ndarray:
    """``(T, N)`` action ids between consecutive configurations (wait: the vertex; move: V + edge)."""
    a, b = configs[:-1], configs[1:]
    edge = np.asarray(edge_of[a.ravel(), b.ravel()]).reshape(a.shape) - 1
    return np.where(a == b, a, n_vertices + edge)


def _space_time_path(roadmap: Roadmap, counts: np.ndarray, start: int, goal: int, hops: np.ndarray,
                     horizon: int) -> list[int] | None:
    """Fewest-step path ``start`` → ``goal`` (vertex per step) arriving by ``horizon`` whose actions
    ``a`` at step ``t`` have ``counts[min(t, T), a] == 0`` and after which waiting at ``goal`` is
    free for ever; None when there is none."""
    last_row = counts.shape[0] - 1
    blocked = np.nonzero(counts[:, goal] > 0)[0]
    earliest = int(blocked[-1]) + 1 if len(blocked) else 0  # the goal is free from this step on
    neighbours = roadmap.neighbours
    parent: dict[tuple[int, int], tuple[int, int] | None] = {(start, 0): None}
    heap = [(float(hops[start]), 0, start)]
    while heap:
        _, t, v = heapq.heappop(heap)
        if v == goal and t >= earliest:
            out, state = [], (v, t)
            while state is not None:
                out.append(state[0])
                state = parent[state]
            return out[::-1]
        if t >= horizon:
            continue
        row = counts[min(t, last_row)]
        for u, action in [(v, v)] + neighbours[v]:
            state = (u, t + 1)
            if state in parent or row[action] or t + 1 + hops[u] > horizon:
                continue
            parent[state] = (v, t)
            heapq.heappush(heap, (t + 1 + float(hops[u]), t + 1, u))
    return None
