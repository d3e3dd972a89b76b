"""Roadmap layers for mixed fleets: conflicts within and across layers against brute force (every
vertex pair by numpy, segments by dense sampling), and a search that lets small drones stand where
a large pair could not."""

import numpy as np

from core.clearance import ClearanceModel
from core.roadmap.conflicts import annotate
from core.roadmap.graph import Roadmap
from core.roadmap.layers import layered_roadmap
from core.search.ecbs import ecbs
from core.verify.discrete import check_discrete_plan

SMALL, LARGE = np.array([0.2, 0.2, 0.4]), np.array([0.7, 0.7, 1.1])


def _random_roadmap(rng, n=40) -> Roadmap:
    vertices = rng.uniform(0.0, 5.0, size=(n, 3))
    edges = np.array(sorted({tuple(sorted(rng.choice(n, 2, replace=False))) for _ in range(60)}))
    return Roadmap(vertices, edges, annotate(vertices, edges, np.ones(3)))


def _sampled_distance(a0, a1, b0, b1, samples=200) -> float:
    t = np.linspace(0.0, 1.0, samples)[:, None]
    pa, pb = a0 + t * (a1 - a0), b0 + t * (b1 - b0)
    return float(np.linalg.norm(pa[:, None] - pb[None], axis=-1).min())


def test_layer_conflicts_match_brute_force_under_each_pair_shape():
    rng = np.random.default_rng(3)
    base = _random_roadmap(rng)
    model = ClearanceModel(np.stack([SMALL, LARGE]))
    radii = model.kind_pair_radii
    layered = layered_roadmap(base, radii)
    v, e = base.n_vertices, len(base.edges)
    assert layered.n_vertices == 2 * v and len(layered.edges) == 2 * e
    table = layered.action_conflicts.toarray()
    for k in range(2):
        for m in range(2):
            p = base.vertices / radii[k, m]
            # vertex–vertex: exact, by numpy over every pair
            d = np.linalg.norm(p[:, None] - p[None], axis=-1)
            assert np.array_equal(table[k * v:(k + 1) * v, m * v:(m + 1) * v], d < 1.0 - 1e-12)
            # edge–edge: dense sampling (an upper bound on the distance; pairs near 1 are skipped)
            for a in range(0, e, 3):
                for b in range(0, e, 3):
                    dist = _sampled_distance(p[base.edges[a, 0]], p[base.edges[a, 1]], p[base.edges[b, 0]],
                                             p[base.edges[b, 1]])
                    if abs(dist - 1.0) > 0.03:
                        assert table[2 * v + k * e + a, 2 * v + m * e + b] == (dist < 1.0)
    # one shape: the roadmap itself
    assert layered_roadmap(base, radii[:1, :1]) is base


def test_small_drones_wait_closer_together_than_a_large_pair_but_never_near_the_large_one():
    """Two small drones on vertices 0.8 m apart (a small pair needs 0.4 m, a large pair 1.4 m) and a
    large drone that must pass them: ECBS on the layered roadmap finds a plan that the discrete
    checker (exact pair shapes) passes."""
    line = np.array([[x, 0.0, 2.0] for x in np.arange(0.0, 8.01, 0.8)])
    side = np.array([[x, 2.5, 2.0] for x in np.arange(0.0, 8.01, 0.8)])
    vertices = np.vstack([line, side])
    n = len(line)
    edges = np.array([(i, i + 1) for i in range(n - 1)] + [(n + i, n + i + 1) for i in range(n - 1)]
                     + [(i, n + i) for i in range(n)])
    model = ClearanceModel(np.stack([SMALL, SMALL, LARGE]))
    base = Roadmap(vertices, edges, annotate(vertices, edges, model.pair_envelope))
    layered = layered_roadmap(base, model.kind_pair_radii)
    offset = model.kind_of * base.n_vertices
    starts = np.array([4, 5, 0]) + offset  # the small pair side by side at 0.8 m, the large drone at one end
    goals = np.array([4, 5, n - 1]) + offset  # the large drone must get past them to the other end
    result = ecbs(layered, starts, goals, w=1.5, time_limit=20.0)
    steps = result.makespan
    padded = np.array([list(p) + [p[-1]] * (steps + 1 - len(p)) for p in result.paths])
    assert padded[2, -1] == goals[2] and check_discrete_plan(layered.vertices[padded], model) == []
    # under the single largest pair shape the small pair's starts already conflict
    assert base.in_conflict(np.array([4]), np.array([5]))[0]
