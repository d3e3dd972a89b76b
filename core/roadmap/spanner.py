"""Greedy graph spanner (Althöfer, Das, Dobkin, Joseph & Soares, "On sparse spanners of weighted
graphs", Discrete Comput. Geom. 9, 1993): keep an edge only if the kept graph has no path within
``stretch`` × its length. Then every shortest path of the result is within ``stretch`` of the
original graph's.
"""

from __future__ import annotations

import heapq

import numpy as np

from ..progress import CancelToken


def greedy_spanner(n_vertices: int, edges: np.ndarray, lengths: np.ndarray, stretch: float,
                   cancel: CancelToken | None = None) -> np.ndarray:
    """Indices of the kept ``edges`` ``(E, 2)`` with ``lengths`` ``(E,)`` (metres) for ``stretch`` ≥ 1."""
    cancel = cancel or CancelToken()
    adjacency: list[list[tuple[int, float]]] = [[] for _ in range(n_vertices)]
    kept = []
    for count, e in enumerate(np.argsort(lengths, kind="stable")):
        if count % 2048 == 0:
            cancel.check()
        u, v = int(edges[e, 0]), int(edges[e, 1])
        w = float(lengths[e])
        if not _within(adjacency, u, v, stretch * w):
            adjacency[u].append((v, w))
            adjacency[v].append((u, w))
            kept.append(e)
    return np.sort(np.asarray(kept, dtype=np.int64))


def _within(adjacency: list[list[tuple[int, float]]], source: int, target: int, limit: float) -> bool:
    """Whether the graph has a path ``source`` → ``target`` no longer than ``limit`` (bounded Dijkstra)."""
    best = {source: 0.0}
    heap = [(0.0, source)]
    while heap:
        d, u = heapq.heappop(heap)
        if u == target:
            return True
        if d > best[u]:
            continue
        for v, w in adjacency[u]:
            nd = d + w
            if nd <= limit and nd < best.get(v, np.inf):
                best[v] = nd
                heapq.heappush(heap, (nd, v))
    return False
