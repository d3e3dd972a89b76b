"""Roadmap construction: low-discrepancy samples of free space, nearest-neighbour edges that keep
clear of obstacles, a greedy spanner, then formation points attached as extra vertices."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.spatial import cKDTree
from scipy.stats import qmc

from ..errors import PlanningError
from ..obstacles import ClearanceField
from ..progress import CancelToken, ProgressCallback, no_progress
from .conflicts import annotate, annotate_added
from .graph import Roadmap
from .spanner import greedy_spanner


@dataclass(frozen=True)
class RoadmapSettings:
    """samples : free-space samples drawn (before rejection); neighbours : edges tried per vertex;
    stretch : spanner stretch factor ≥ 1; seed : sampler seed."""

    samples: int = 1500
    neighbours: int = 12
    stretch: float = 1.5
    seed: int = 0


def sample_free(field: ClearanceField, count: int, seed: int) -> np.ndarray:
    """Free points ``(≤count, 3)`` of the flight volume: a scrambled Halton sequence (scipy.stats.qmc)
    with the points whose clearance margin is negative removed."""
    lo, hi = field.flight_volume
    points = qmc.scale(qmc.Halton(d=3, scramble=True, seed=seed).random(count), lo, hi)
    return points[field.margins(points) >= 0.0]


def nearest_edges(points: np.ndarray, k: int, among: np.ndarray | None = None) -> np.ndarray:
    """Undirected candidate edges ``(E, 2)`` (i < j) to the ``k`` nearest neighbours of each point.

    Without ``among``: within ``points``. With it: from each row of ``among`` (indices into
    ``points``) to its neighbours in all of ``points``.
    """
    tree = cKDTree(points)
    query = np.arange(len(points)) if among is None else np.asarray(among)
    k = min(k + 1, len(points))
    _, nbr = tree.query(points[query], k=k)
    nbr = nbr.reshape(len(query), -1)
    pairs = np.c_[np.repeat(query, nbr.shape[1]), nbr.ravel()]
    pairs = pairs[(pairs[:, 0] != pairs[:, 1]) & (pairs[:, 1] < len(points))]
    return np.unique(np.sort(pairs, axis=1), axis=0)


def clear_neighbour_edges(field: ClearanceField, points: np.ndarray, k: int, among: np.ndarray | None = None
                          ) -> np.ndarray:
    """The :func:`nearest_edges` ``(E, 2)`` whose segments keep clear of every obstacle."""
    candidates = nearest_edges(points, k, among)
    return candidates[field.segments_clear(points[candidates[:, 0]], points[candidates[:, 1]])]


def build_roadmap(field: ClearanceField, pair_envelope: np.ndarray, settings: RoadmapSettings, *,
                  progress: ProgressCallback = no_progress, cancel: CancelToken | None = None) -> Roadmap:
    """Sampled sparse roadmap with its conflicts; ``pair_envelope`` ``(3,)``: pair clearance half-axes (m)."""
    cancel = cancel or CancelToken()
    progress("roadmap", 0.0, "sampling free space")
    vertices = sample_free(field, settings.samples, settings.seed)
    if len(vertices) < 2:
        raise PlanningError("roadmap: fewer than two free samples in the flight volume; "
                            "the obstacles (with clearance) fill it")
    cancel.check()
    progress("roadmap", 0.2, f"checking edges of {len(vertices)} vertices")
    edges = clear_neighbour_edges(field, vertices, settings.neighbours)
    cancel.check()
    progress("roadmap", 0.5, f"spanner of {len(edges)} edges")
    lengths = np.linalg.norm(vertices[edges[:, 1]] - vertices[edges[:, 0]], axis=1)
    edges = edges[greedy_spanner(len(vertices), edges, lengths, settings.stretch, cancel)]
    cancel.check()
    progress("roadmap", 0.7, f"conflicts of {len(vertices)} vertices, {len(edges)} edges")
    roadmap = Roadmap(vertices, edges, annotate(vertices, edges, pair_envelope))
    progress("roadmap", 1.0, f"{roadmap.conflicts.count} conflicts")
    return roadmap


def attach_points(roadmap: Roadmap, points: np.ndarray, field: ClearanceField, pair_envelope: np.ndarray,
                  neighbours: int) -> tuple[Roadmap, np.ndarray]:
    """``roadmap`` with ``points`` ``(P, 3)`` added as vertices (each joined to its nearest
    neighbours by clear edges, conflicts extended) and the vertex index of each point ``(P,)``."""
    n_old, e_old = roadmap.n_vertices, len(roadmap.edges)
    vertices = np.concatenate([roadmap.vertices, points])
    index = np.arange(n_old, n_old + len(points))
    edges = np.concatenate([roadmap.edges, clear_neighbour_edges(field, vertices, neighbours, among=index)])
    added = annotate_added(vertices, edges, n_old, e_old, pair_envelope)
    return Roadmap(vertices, edges, roadmap.conflicts.merged(added)), index
