"""Roadmap construction: low-discrepancy samples of free space plus samples near obstacles and in
narrow passages, nearest-neighbour edges that keep clear of obstacles, a greedy spanner, then
formation points attached as extra vertices (with free samples around them)."""

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
    """samples : uniform free-space samples drawn (before rejection); neighbours : edges tried per
    vertex; stretch : spanner stretch factor ≥ 1; seed : sampler seed; passage_seeds : points
    drawn to seed the passage samplers, as a multiple of ``samples`` (0: uniform sampling only)."""

    samples: int = 1500
    neighbours: int = 12
    stretch: float = 1.5
    seed: int = 0
    passage_seeds: float = 4.0


#: Standard deviations (scaled units: clearance radii) of the Gaussian sampler's partner point and
#: of the bridge test's second end.
GAUSSIAN_SIGMA = 1.0
BRIDGE_SIGMA = 2.5
#: Partners tried per seed point in collision by the Gaussian sampler and by the bridge test (its
#: successes are rare and its points the valuable ones).
GAUSSIAN_TRIES = 2
BRIDGE_TRIES = 16
#: Free points drawn around each bridge-test point (σ = :data:`CLOUD_SIGMA` clearance radii), so
#: that a passage point has neighbours to join it to the space on either side.
PASSAGE_CLOUD = 8
CLOUD_SIGMA = 1.5


def sample_free(field: ClearanceField, count: int, seed: int) -> np.ndarray:
    """Free points ``(≤count, 3)`` of the flight volume: a scrambled Halton sequence (scipy.stats.qmc)
    with the points whose clearance margin is negative removed."""
    lo, hi = field.flight_volume
    points = qmc.scale(qmc.Halton(d=3, scramble=True, seed=seed).random(count), lo, hi)
    return points[field.margins(points) >= 0.0]


def sample_passages(field: ClearanceField, seeds: int, seed: int) -> np.ndarray:
    """Free points near obstacles and in narrow passages, from ``seeds`` uniform points (a second
    scrambled Halton sequence) of which those in collision seed two samplers:

    * Gaussian sampling (Boor, Overmars & van der Stappen, "The Gaussian sampling strategy for
      probabilistic roadmap planners", ICRA 1999): a partner at a normal offset (σ =
      :data:`GAUSSIAN_SIGMA`) that is free is kept — a free point near an obstacle's surface;
    * the bridge test (Hsu, Jiang, Reif & Sun, "The bridge test for sampling narrow passages with
      probabilistic roadmap planners", ICRA 2003): a partner (σ = :data:`BRIDGE_SIGMA`) also in
      collision whose midpoint is free gives that midpoint — a point between two obstacles —
      and a small cloud of free points around it (:data:`PASSAGE_CLOUD`).

    Offsets are drawn in coordinates scaled by the clearance ellipsoid, so they follow the drone's shape.
    """
    if seeds <= 0 or not (field.grids or field.keep_out):
        return np.empty((0, 3))
    lo, hi = field.flight_volume
    points = qmc.scale(qmc.Halton(d=3, scramble=True, seed=seed + 1).random(seeds), lo, hi)
    blocked = points[_obstacle_margins(field, points) < 0.0]
    if not len(blocked):
        return np.empty((0, 3))
    rng = np.random.default_rng(seed)
    gaussian = np.repeat(blocked, GAUSSIAN_TRIES, axis=0)
    gaussian = gaussian + rng.normal(scale=GAUSSIAN_SIGMA, size=gaussian.shape) * field.semi_axes
    first = np.repeat(blocked, BRIDGE_TRIES, axis=0)
    other = first + rng.normal(scale=BRIDGE_SIGMA, size=first.shape) * field.semi_axes
    inside = np.all((other >= lo) & (other <= hi), axis=1)
    other_blocked = ~inside | (_obstacle_margins(field, other) < 0.0)
    middle = 0.5 * (first + other)[other_blocked]
    middle = middle[field.margins(middle) >= 0.0]
    cloud = np.repeat(middle, PASSAGE_CLOUD, axis=0)
    cloud = cloud + rng.normal(scale=CLOUD_SIGMA, size=cloud.shape) * field.semi_axes
    candidates = np.concatenate([gaussian, cloud])  # margins < 0 outside the flight volume too
    return np.concatenate([middle, candidates[field.margins(candidates) >= 0.0]])


def _obstacle_margins(field: ClearanceField, points: np.ndarray) -> np.ndarray:
    """Grid-only margins ``(M,)`` to keep-out boxes and meshes (a quick "in collision?" for seeds;
    cheap, and pessimistic only near surfaces, where either answer is a useful seed)."""
    return field.margin_parts(points, exact=False)[1:].min(axis=0)


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
    vertices = np.concatenate([sample_free(field, settings.samples, settings.seed),
                               sample_passages(field, int(settings.passage_seeds * settings.samples), settings.seed)])
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


#: Extra free samples drawn around each formation point when it is attached (see :func:`attach_points`).
APPROACH_SAMPLES = 4


def approach_samples(field: ClearanceField, points: np.ndarray, pair_envelope: np.ndarray, per_point: int,
                     seed: int) -> np.ndarray:
    """Free points ``(≤ P·per_point, 3)`` scattered around formation ``points`` ``(P, 3)``: Gaussian
    offsets with one pair clearance ``pair_envelope`` ``(3,)`` m as standard deviation per axis,
    kept where the clearance margin is ≥ 0 and not inside another point's pair clearance.

    Uniform samples are sparse where a formation packs many drones into a small space; without
    ways in and out between its points, drones must pass through occupied points to reach theirs.
    """
    if per_point <= 0 or not len(points):
        return np.empty((0, 3))
    rng = np.random.default_rng(seed)
    extra = np.repeat(points, per_point, axis=0) + rng.normal(size=(len(points) * per_point, 3)) * pair_envelope
    distance, _ = cKDTree(points / pair_envelope).query(extra / pair_envelope)
    extra = extra[distance >= 1.0]
    return extra[field.margins(extra) >= 0.0]  # < 0 outside the flight volume too


def attach_points(roadmap: Roadmap, points: np.ndarray, field: ClearanceField, pair_envelope: np.ndarray,
                  neighbours: int, approach: int = APPROACH_SAMPLES, seed: int = 0, attach: np.ndarray | None = None
                  ) -> tuple[Roadmap, np.ndarray]:
    """``roadmap`` with ``points`` ``(P, 3)`` added as vertices (each joined to its nearest
    neighbours by clear edges, conflicts extended) and the vertex index of each point ``(P,)``.
    ``approach`` free samples per point are added around them first (:func:`approach_samples`).
    Points where ``attach`` ``(P,)`` is False (no drone of this roadmap's shape can stand there)
    become vertices without edges or approach samples: present, so indices stay aligned, but unreachable."""
    n_old, e_old = roadmap.n_vertices, len(roadmap.edges)
    attach = np.ones(len(points), dtype=bool) if attach is None else np.asarray(attach, dtype=bool)
    extra = approach_samples(field, points[attach], pair_envelope, approach, seed)
    vertices = np.concatenate([roadmap.vertices, points, extra])
    index = np.arange(n_old, n_old + len(points))
    added = np.r_[index[attach], np.arange(n_old + len(points), len(vertices))]
    edges = clear_neighbour_edges(field, vertices, neighbours, among=added)
    isolated = index[~attach]
    edges = np.concatenate([roadmap.edges, edges[~np.isin(edges, isolated).any(axis=1)]])
    conflicts = annotate_added(vertices, edges, n_old, e_old, pair_envelope)
    return Roadmap(vertices, edges, roadmap.conflicts.merged(conflicts)), index
