"""One roadmap layer per drone shape, so that the search keeps each pair only as far apart as its
own pair shape needs.

The multi-agent search knows one conflict table between actions. For a fleet of ``K`` clearance
shapes the roadmap is copied ``K`` times: drones of shape ``k`` move only on layer ``k``, and an
action of layer ``k`` conflicts with one of layer ``l`` when the swept volumes touch under the
pair shape of ``k`` and ``l`` (:mod:`.conflicts`, in coordinates divided by those pair half-axes).
Two light drones may then stand on points a heavy pair could not, while every cross-shape pair
keeps its own, larger clearance. The layers never connect, so the search needs no change. A fleet
of one shape keeps its single roadmap.
"""

from __future__ import annotations

import numpy as np

from .conflicts import ConflictPairs, annotate, edge_edge, vertex_edge, vertex_vertex
from .graph import Roadmap


def layered_roadmap(roadmap: Roadmap, kind_pair_radii: np.ndarray) -> Roadmap:
    """``K`` copies of ``roadmap`` (vertex ``v`` of layer ``k`` is ``k V + v``, edge ``e`` is
    ``k E + e``) with conflicts under ``kind_pair_radii`` ``(K, K, 3)`` metres (symmetric); the
    roadmap itself when ``K == 1``."""
    shapes = len(kind_pair_radii)
    if shapes == 1:
        return roadmap
    v, e = roadmap.n_vertices, len(roadmap.edges)
    parts: list[ConflictPairs] = []
    for k in range(shapes):
        own = annotate(roadmap.vertices, roadmap.edges, kind_pair_radii[k, k])
        parts.append(ConflictPairs(own.vv + k * v, own.ve + [k * v, k * e], own.ee + k * e))
        for m in range(k + 1, shapes):
            parts.append(_across(roadmap, kind_pair_radii[k, m], (k, m), (v, e)))
    conflicts = parts[0]
    for p in parts[1:]:
        conflicts = conflicts.merged(p)
    return Roadmap(np.tile(roadmap.vertices, (shapes, 1)),
                   np.concatenate([roadmap.edges + k * v for k in range(shapes)]), conflicts)


def _across(roadmap: Roadmap, pair_radii: np.ndarray, layers: tuple[int, int], sizes: tuple[int, int]
            ) -> ConflictPairs:
    """Conflicts between the actions of layer ``k`` and those of layer ``m > k`` (every ordered
    pair of the roadmap's actions, the same vertex or edge included)."""
    (k, m), (v, e) = layers, sizes
    p = roadmap.vertices / pair_radii
    s0, s1 = p[roadmap.edges[:, 0]], p[roadmap.edges[:, 1]]
    vv = vertex_vertex(p, p)
    ve = vertex_edge(p, s0, s1)  # the geometry is the same whichever layer holds the vertex
    ee = edge_edge(s0, s1, s0, s1)
    return ConflictPairs(vv + [k * v, m * v],
                         np.concatenate([ve + [k * v, m * e], ve + [m * v, k * e]]),
                         ee + [k * e, m * e])
