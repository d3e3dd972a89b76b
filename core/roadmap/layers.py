"""One roadmap layer per drone kind, so that each drone flies a roadmap built for its own shape and
the search keeps each pair only as far apart as its own pair shape needs.

The multi-agent search knows one conflict table between actions. For a fleet of ``K`` clearance
kinds (:class:`core.clearance.ClearanceModel`) each kind has its own roadmap, sampled and checked
against obstacles with its own clearance ellipsoid: a light scout's layer passes a gap that the
heavy drone's layer has no vertex in. Drones of kind ``k`` move only on layer ``k``; an action of
layer ``k`` conflicts with one of layer ``m`` when the swept volumes touch under the pair shape of
``k`` and ``m`` (:mod:`.conflicts`, between clearance centres, in coordinates divided by those
pair half-axes). The layers never connect, so the search needs no change. A fleet of one kind
keeps its single roadmap.
"""

from __future__ import annotations

import numpy as np

from .conflicts import ConflictPairs, edge_edge, vertex_edge, vertex_vertex
from .graph import Roadmap


def layered_roadmap(layers: list[Roadmap], kind_pair_radii: np.ndarray, kind_offsets: np.ndarray
                    ) -> tuple[Roadmap, np.ndarray]:
    """The ``K`` ``layers`` (each with its own conflicts under its kind's own pair shape) as one
    roadmap, with cross-layer conflicts under ``kind_pair_radii`` ``(K, K, 3)`` metres between
    clearance centres (vertex + ``kind_offsets`` ``(K, 3)`` metres); and ``(K + 1,)`` the first
    vertex of each layer (vertex ``v`` of layer ``k`` is ``starts[k] + v``). A single layer is
    returned as it is."""
    vertex_starts = np.cumsum([0] + [layer.n_vertices for layer in layers])
    if len(layers) == 1:
        return layers[0], vertex_starts
    edge_starts = np.cumsum([0] + [len(layer.edges) for layer in layers])
    parts: list[ConflictPairs] = []
    for k, layer in enumerate(layers):
        own = layer.conflicts
        parts.append(ConflictPairs(own.vv + vertex_starts[k], own.ve + [vertex_starts[k], edge_starts[k]],
                                   own.ee + edge_starts[k]))
        for m in range(k + 1, len(layers)):
            parts.append(_across(layer, layers[m], kind_pair_radii[k, m], kind_offsets[[k, m]],
                                 (vertex_starts[k], vertex_starts[m], edge_starts[k], edge_starts[m])))
    conflicts = parts[0]
    for p in parts[1:]:
        conflicts = conflicts.merged(p)
    vertices = np.concatenate([layer.vertices for layer in layers])
    edges = np.concatenate([layer.edges + vertex_starts[k] for k, layer in enumerate(layers)])
    return Roadmap(vertices, edges.reshape(-1, 2), conflicts), vertex_starts


def _across(first: Roadmap, second: Roadmap, pair_radii: np.ndarray, offsets: np.ndarray,
            starts: tuple[int, int, int, int]) -> ConflictPairs:
    """Every conflict between an action of ``first`` and one of ``second`` (the same place
    included), measured between clearance centres (vertices + ``offsets`` ``(2, 3)`` m, one row per
    layer) in units of ``pair_radii`` ``(3,)``; indices made global by ``starts`` = (first vertex
    of each layer, first edge of each layer)."""
    vk, vm, ek, em = starts
    p = (first.vertices + offsets[0]) / pair_radii
    q = (second.vertices + offsets[1]) / pair_radii
    p0, p1 = p[first.edges[:, 0]], p[first.edges[:, 1]]
    q0, q1 = q[second.edges[:, 0]], q[second.edges[:, 1]]
    return ConflictPairs(vertex_vertex(p, q) + [vk, vm],
                         np.concatenate([vertex_edge(p, q0, q1) + [vk, em], vertex_edge(q, p0, p1) + [vm, ek]]),
                         edge_edge(p0, p1, q0, q1) + [ek, em])
