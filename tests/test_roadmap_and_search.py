"""Roadmap spanner, conflict annotation and ECBS against outside references (networkx, brute-force
sampling, exhaustive joint-space search)."""

import heapq
import itertools

import networkx as nx
import numpy as np
import pytest
import trimesh

from core.clearance import ClearanceModel
from core.obstacles import ClearanceField
from core.roadmap.build import RoadmapSettings, build_roadmap, clear_neighbour_edges, sample_free
from core.roadmap.conflicts import annotate
from core.roadmap.graph import Roadmap
from core.roadmap.spanner import greedy_spanner
from core.scene.meshes import SiteMesh
from core.search import SearchFailed, ecbs
from core.verify.discrete import check_discrete_plan


def _pillar_field():
    pillar = trimesh.creation.box(extents=(2.0, 2.0, 6.0), transform=trimesh.transformations.translation_matrix(
        (5.0, 5.0, 3.0)))
    return ClearanceField(np.array([0.3, 0.3, 0.5]), [SiteMesh("pillar", pillar, ())],
                          np.array([[0.0, 0.0, 0.5], [10.0, 10.0, 5.0]]))


@pytest.mark.parametrize("stretch", [1.2, 2.0])
def test_spanner_keeps_every_shortest_path_within_the_stretch(stretch):
    """Greedy spanner bound (Althöfer et al., Discrete Comput. Geom. 9, 1993): d_spanner ≤ t · d_dense
    for every vertex pair; both distances from networkx (reference library)."""
    field = _pillar_field()
    points = sample_free(field, 150, seed=1)
    dense_edges = clear_neighbour_edges(field, points, 10)
    lengths = np.linalg.norm(points[dense_edges[:, 1]] - points[dense_edges[:, 0]], axis=1)
    kept = greedy_spanner(len(points), dense_edges, lengths, stretch)
    assert len(kept) < 0.8 * len(dense_edges)

    def graph(idx):
        g = nx.Graph()
        g.add_nodes_from(range(len(points)))
        g.add_weighted_edges_from((int(u), int(v), float(w)) for (u, v), w in zip(dense_edges[idx], lengths[idx],
                                                                                   strict=True))
        return g

    dense = dict(nx.all_pairs_dijkstra_path_length(graph(np.arange(len(dense_edges)))))
    sparse = dict(nx.all_pairs_dijkstra_path_length(graph(kept)))
    for u, row in dense.items():
        for v, d in row.items():
            assert sparse[u][v] <= stretch * d + 1e-9


def test_conflict_annotation_misses_no_sampled_swept_volume_contact():
    """Reference: brute force over every action pair of a small roadmap — 60 points along each
    swept segment, conflict if any sampled pair is closer than the clearance (scaled distance < 1)."""
    field = _pillar_field()
    roadmap = build_roadmap(field, np.array([0.6, 0.6, 1.0]), RoadmapSettings(samples=60, neighbours=6, seed=3))
    scale = np.array([0.6, 0.6, 1.0])
    v = roadmap.vertices / scale
    seg = np.r_[np.stack([v, v], axis=1), np.stack([v[roadmap.edges[:, 0]], v[roadmap.edges[:, 1]]], axis=1)]
    s = np.linspace(0, 1, 60)
    pts = seg[:, 0, None] + s[None, :, None] * (seg[:, 1] - seg[:, 0])[:, None]  # (A, 60, 3)
    table = roadmap.action_conflicts.toarray()
    n = len(seg)
    sampled = np.empty((n, n))
    for a in range(n):
        sampled[a] = np.linalg.norm(pts[a][None, :, None] - pts[:, None, :], axis=-1).min(axis=(1, 2))
    assert (sampled < 1.0).sum() > n  # the test exercises real conflicts, not only the diagonal
    assert np.all(table[sampled < 1.0]), "a sampled contact is missing from the conflict table"
    # And nothing is flagged that is clearly apart (sampling error ≤ half the sampling step).
    step = np.linalg.norm(seg[:, 1] - seg[:, 0], axis=1) / 59
    slack = (step[:, None] + step[None, :]) / 2
    assert not np.any(table & (sampled >= 1.0 + slack + 1e-9))


def _grid_roadmap(nx_, ny_, scale):
    """A small grid graph with diagonals (unit spacing) and its conflicts."""
    vertices = np.array([(x, y, 0.0) for y in range(ny_) for x in range(nx_)], dtype=float)
    edges = []
    for y, x in itertools.product(range(ny_), range(nx_)):
        i = y * nx_ + x
        if x + 1 < nx_:
            edges.append((i, i + 1))
        if y + 1 < ny_:
            edges.append((i, i + nx_))
        if x + 1 < nx_ and y + 1 < ny_ and (x + y) % 2 == 0:
            edges.append((i, i + nx_ + 1))
    edges = np.array(edges)
    return Roadmap(vertices, edges, annotate(vertices, edges, scale))


def _optimal_sum_of_costs(roadmap, starts, goals):
    """Exhaustive joint-space Dijkstra. State: every agent's vertex and whether it has committed to
    stay at its goal for ever; each uncommitted agent costs 1 per step, so the total is Σ arrival
    times — the sum-of-costs objective of CBS (Sharon et al., AIJ 2015)."""
    n = len(starts)
    moves = [[(u, u)] + [(w, a) for w, a in roadmap.neighbours[u]] for u in range(roadmap.n_vertices)]
    table = roadmap.action_conflicts.toarray()

    def ok(actions):
        return not any(table[actions[i], actions[j]] for i in range(n) for j in range(i + 1, n))

    start = (tuple(starts), tuple([False] * n))
    best = {start: 0}
    heap = [(0, start)]
    while heap:
        cost, (pos, done) = heapq.heappop(heap)
        if cost > best[(pos, done)]:
            continue
        if all(done):
            return cost
        # Commit (free) any agent standing on its goal.
        for i in range(n):
            if not done[i] and pos[i] == goals[i]:
                nxt = (pos, done[:i] + (True,) + done[i + 1:])
                if cost < best.get(nxt, 1 << 30):
                    best[nxt] = cost
                    heapq.heappush(heap, (cost, nxt))
        options = [[(pos[i], pos[i])] if done[i] else moves[pos[i]] for i in range(n)]
        step_cost = sum(not d for d in done)
        for combo in itertools.product(*options):
            if ok([a for _, a in combo]):
                nxt = (tuple(w for w, _ in combo), done)
                if cost + step_cost < best.get(nxt, 1 << 30):
                    best[nxt] = cost + step_cost
                    heapq.heappush(heap, (cost + step_cost, nxt))
    return None


def _instances(seed, count):
    rng = np.random.default_rng(seed)
    roadmap = _grid_roadmap(4, 3, np.array([0.45, 0.45, 0.45]))
    out = []
    while len(out) < count:
        cells = rng.choice(roadmap.n_vertices, size=6, replace=False)
        starts, goals = cells[:3], cells[3:]
        # Start and goal formations must be conflict-free among themselves (as the scene checks ensure).
        if any(roadmap.action_conflicts[a, b] for f in (starts, goals) for a, b in itertools.combinations(f, 2)):
            continue
        out.append((roadmap, starts, goals))
    return out


def test_ecbs_with_w_one_is_optimal_against_exhaustive_search():
    for roadmap, starts, goals in _instances(0, 8):
        optimum = _optimal_sum_of_costs(roadmap, starts.tolist(), goals.tolist())
        result = ecbs(roadmap, starts, goals, w=1.0, time_limit=30)
        assert result.cost == optimum
        positions = roadmap.vertices[np.array([list(p) + [p[-1]] * (result.makespan + 1 - len(p))
                                               for p in result.paths])]
        assert check_discrete_plan(positions, ClearanceModel(np.full((3, 3), 0.225))) == []


@pytest.mark.parametrize("w", [1.3, 2.0])
def test_ecbs_stays_within_w_of_the_optimum(w):
    """ECBS bound: cost ≤ w · C* (Barer, Sharon, Stern & Felner, SoCS 2014)."""
    for roadmap, starts, goals in _instances(1, 6):
        optimum = _optimal_sum_of_costs(roadmap, starts.tolist(), goals.tolist())
        result = ecbs(roadmap, starts, goals, w=w, time_limit=30)
        assert optimum <= result.cost <= w * optimum + 1e-9
        assert result.lower_bound <= optimum


def test_search_time_limit_reports_the_unresolved_drones():
    roadmap = _grid_roadmap(3, 1, np.array([0.45, 0.45, 0.45]))  # a corridor: two agents cannot pass
    with pytest.raises(SearchFailed) as info:
        ecbs(roadmap, np.array([0, 2]), np.array([2, 0]), w=1.0, time_limit=0.5)
    assert info.value.conflicts and {info.value.conflicts[0].a, info.value.conflicts[0].b} == {0, 1}
