"""Roadmap layers for mixed fleets: conflicts within and across layers against brute force (every
vertex pair by numpy, segments by dense sampling), and a search that lets small drones stand where
a large pair could not."""

import numpy as np
import pytest

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


@pytest.mark.parametrize("shift", [0.0, 0.6])
def test_layer_conflicts_match_brute_force_under_each_pair_shape(shift):
    """Two layers with their own vertices (as two drone shapes' roadmaps are): conflicts within and
    across layers against numpy over every vertex pair and dense sampling of segment pairs, between
    clearance centres (the large kind's centre ``shift`` metres below it)."""
    rng = np.random.default_rng(3)
    layers = [_random_roadmap(rng), _random_roadmap(rng)]
    model = ClearanceModel(np.stack([SMALL, LARGE]), np.array([0.0, shift]))
    radii, offsets = model.kind_pair_radii, model.kind_offsets
    layers = [Roadmap(r.vertices, r.edges, annotate(r.vertices + offsets[k], r.edges, radii[k, k]))
              for k, r in enumerate(layers)]
    layered, starts = layered_roadmap(layers, radii, offsets)
    v, e = layers[0].n_vertices, len(layers[0].edges)
    assert layered.n_vertices == 2 * v and len(layered.edges) == 2 * e and list(starts) == [0, v, 2 * v]
    table = layered.action_conflicts.toarray()
    for k in range(2):
        for m in range(2):
            p = (layers[k].vertices + offsets[k]) / radii[k, m]
            q = (layers[m].vertices + offsets[m]) / radii[k, m]
            # vertex–vertex: exact, by numpy over every pair
            d = np.linalg.norm(p[:, None] - q[None], axis=-1)
            expected = d < 1.0 - 1e-12
            if k == m:
                np.fill_diagonal(expected, True)  # an action always conflicts with itself
            assert np.array_equal(table[k * v:(k + 1) * v, m * v:(m + 1) * v], expected)
            # edge–edge: dense sampling (an upper bound on the distance; pairs near 1 are skipped)
            ek, em = layers[k].edges, layers[m].edges
            for a in range(0, e, 3):
                for b in range(0, e, 3):
                    dist = _sampled_distance(p[ek[a, 0]], p[ek[a, 1]], q[em[b, 0]], q[em[b, 1]])
                    if abs(dist - 1.0) > 0.03 and not (k == m and a == b):
                        assert table[2 * v + k * e + a, 2 * v + m * e + b] == (dist < 1.0)
    # one kind: the roadmap itself
    assert layered_roadmap(layers[:1], radii[:1, :1], offsets[:1])[0] is layers[0]


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
    radii = model.kind_pair_radii
    layers = [Roadmap(vertices, edges, annotate(vertices, edges, radii[k, k])) for k in range(2)]
    layered, first = layered_roadmap(layers, radii, model.kind_offsets)
    offset = first[model.kind_of]
    starts = np.array([4, 5, 0]) + offset  # the small pair side by side at 0.8 m, the large drone at one end
    goals = np.array([4, 5, n - 1]) + offset  # the large drone must get past them to the other end
    result = ecbs(layered, starts, goals, w=1.5, time_limit=20.0)
    steps = result.makespan
    padded = np.array([list(p) + [p[-1]] * (steps + 1 - len(p)) for p in result.paths])
    assert padded[2, -1] == goals[2] and check_discrete_plan(layered.vertices[padded], model) == []
    # under the single largest pair shape the small pair's starts already conflict
    base = Roadmap(vertices, edges, annotate(vertices, edges, model.pair_envelope))
    assert base.in_conflict(np.array([4]), np.array([5]))[0]
