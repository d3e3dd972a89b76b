"""Roadmap spanner, conflict annotation, ECBS and LaCAM* against outside references (networkx,
brute-force sampling, exhaustive joint-space search)."""

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
from core.search import LacamFailed, SearchFailed, ecbs, lacam
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


def _optimal_makespan(roadmap, starts, goals, groups=None):
    """Exhaustive breadth-first search over joint configurations (every agent waits or takes one
    edge per step, no two actions in conflict): the fewest synchronized steps until every agent
    stands on its goal, or None when no configuration sequence gets there. With ``groups`` (a
    label per agent and its goal), any agent of a group may end on any goal of that group."""
    n = len(starts)
    moves = [[(u, u)] + [(w, a) for w, a in roadmap.neighbours[u]] for u in range(roadmap.n_vertices)]
    table = roadmap.action_conflicts.toarray()
    labels = list(range(n)) if groups is None else list(groups)

    def per_group(config):
        return sorted(zip(labels, config, strict=True))

    start, goal = tuple(starts), per_group(goals)
    seen, frontier, steps = {start}, [start], 0
    while frontier:
        if any(per_group(pos) == goal for pos in frontier):
            return steps
        nxt = []
        for pos in frontier:
            for combo in itertools.product(*(moves[p] for p in pos)):
                acts = [a for _, a in combo]
                if any(table[acts[i], acts[j]] for i in range(n) for j in range(i + 1, n)):
                    continue
                state = tuple(w for w, _ in combo)
                if state not in seen:
                    seen.add(state)
                    nxt.append(state)
        frontier, steps = nxt, steps + 1
    return None


def _discrete_ok(roadmap, paths, steps):
    positions = roadmap.vertices[np.array([list(p) + [p[-1]] * (steps + 1 - len(p)) for p in paths])]
    return check_discrete_plan(positions, ClearanceModel(np.full((3, 3), 0.225))) == []


def test_lacam_star_reaches_the_exhaustive_optimum_in_steps():
    """LaCAM* is eventually optimal (Okumura, IJCAI 2023): with time to empty its open list it
    proves its plan optimal, so its step count must equal the exhaustive search's."""
    for roadmap, starts, goals in _instances(2, 8):
        optimum = _optimal_makespan(roadmap, starts.tolist(), goals.tolist())
        result = lacam(roadmap, starts, goals, time_limit=60, refine_share=1e6)
        assert result.optimal and result.steps == optimum
        assert [p[0] for p in result.paths] == starts.tolist() and [p[-1] for p in result.paths] == goals.tolist()
        assert _discrete_ok(roadmap, result.paths, result.steps)
        assert result.cost >= _optimal_sum_of_costs(roadmap, starts.tolist(), goals.tolist()) >= result.lower_bound


def test_lacam_is_complete_on_tiny_instances():
    """Completeness (Okumura, AAAI 2023): a plan whenever the exhaustive search has one, and
    'none exists' (not a time-out) when it has none."""
    solvable = _instances(3, 6)
    for roadmap, starts, goals in solvable:
        result = lacam(roadmap, starts, goals, time_limit=60, refine_share=0.0)
        assert _discrete_ok(roadmap, result.paths, result.steps)
    corridor = _grid_roadmap(3, 1, np.array([0.45, 0.45, 0.45]))  # two agents cannot pass in a corridor
    assert _optimal_makespan(corridor, [0, 2], [2, 0]) is None
    with pytest.raises(LacamFailed) as info:
        lacam(corridor, np.array([0, 2]), np.array([2, 0]), time_limit=30)
    assert info.value.exhausted and sorted(info.value.stuck.tolist()) == [0, 1]


@pytest.mark.parametrize("groups", [[0, 0, 0], [0, 1, 1]])
def test_lacam_with_goal_groups_reaches_the_exhaustive_optimum_over_the_goal_set(groups):
    """Unlabeled and grouped search: every drone must end on a goal of its group, exchanges allowed
    (TSWAP, Okumura & Défago, AIJ 2023). LaCAM*'s open list emptied means optimal in steps over
    the goal set, checked against the exhaustive search with the same goal test; never worse than
    the labeled optimum."""
    groups = np.array(groups)
    for roadmap, starts, goals in _instances(5, 8):
        optimum = _optimal_makespan(roadmap, starts.tolist(), goals.tolist(), groups.tolist())
        result = lacam(roadmap, starts, goals, groups=groups, time_limit=60, refine_share=1e6)
        assert result.optimal and result.steps == optimum <= _optimal_makespan(roadmap, starts.tolist(),
                                                                               goals.tolist())
        assert [p[-1] for p in result.paths] == result.goals.tolist()
        for g in set(groups.tolist()):
            assert sorted(result.goals[groups == g].tolist()) == sorted(goals[groups == g].tolist())
        assert _discrete_ok(roadmap, result.paths, result.steps)


def test_goal_groups_let_drones_that_cannot_pass_in_a_corridor_arrive():
    """Two drones in a corridor cannot swap order; labeled goals in the swapped order have no plan
    (the exhaustive search agrees), one goal group has."""
    corridor = _grid_roadmap(4, 1, np.array([0.45, 0.45, 0.45]))
    starts, goals = np.array([0, 1]), np.array([3, 2])
    assert _optimal_makespan(corridor, [0, 1], [3, 2]) is None
    with pytest.raises(LacamFailed):
        lacam(corridor, starts, goals, time_limit=30)
    result = lacam(corridor, starts, goals, groups=np.array([7, 7]), time_limit=30, refine_share=1e6)
    assert result.goals.tolist() == [2, 3] and result.optimal
    assert result.steps == _optimal_makespan(corridor, [0, 1], [3, 2], [7, 7])
    assert _discrete_ok(corridor, result.paths, result.steps)


def test_lacam_plans_a_crowd_on_a_sampled_roadmap_conflict_free():
    """40 agents across a pillar on a sampled roadmap: the plan must pass the independent discrete
    check (every pair, every step, swept segments)."""
    field = _pillar_field()
    roadmap = build_roadmap(field, np.array([0.6, 0.6, 1.0]), RoadmapSettings(samples=1500, seed=3))
    rng = np.random.default_rng(0)
    labels = roadmap.component_labels()
    main = np.nonzero(labels == np.bincount(labels).argmax())[0]
    chosen = []
    for v in rng.permutation(main):
        if all(not roadmap.action_conflicts[v, c] for c in chosen):
            chosen.append(int(v))
        if len(chosen) == 80:
            break
    starts, goals = np.array(chosen[:40]), np.array(chosen[40:])
    result = lacam(roadmap, starts, goals, time_limit=60, refine_share=0.5)
    steps = max(len(p) for p in result.paths) - 1
    assert steps == result.steps
    positions = roadmap.vertices[np.array([list(p) + [p[-1]] * (steps + 1 - len(p)) for p in result.paths])]
    assert check_discrete_plan(positions, ClearanceModel(np.tile([0.3, 0.3, 0.5], (40, 1)))) == []


def test_single_drone_replanning_removes_needless_waits_and_stays_conflict_free():
    """A plan padded with three steps in which everyone waits: replanning each drone against the
    others (Li et al., IJCAI 2021) never delays a drone, keeps a plan the independent discrete check
    accepts, and here gains back steps (sum of arrivals), though never below the exhaustive optimum."""
    from core.search.improve import _arrivals, shorten

    gained = 0
    for roadmap, starts, goals in _instances(4, 6):
        result = lacam(roadmap, starts, goals, time_limit=30, refine_share=0.0, improve_share=0.0)
        padded = np.array([list(p) + [p[-1]] * (result.steps + 1 - len(p)) for p in result.paths]).T
        slow = np.concatenate([np.repeat(padded[:1], 3, axis=0), padded])
        better = shorten(roadmap, slow, roadmap.hop_distances(goals), seconds=30)
        assert (better[0] == starts).all() and (better[-1] == goals).all()
        assert np.all(_arrivals(better) <= _arrivals(slow))
        assert check_discrete_plan(roadmap.vertices[better.T], ClearanceModel(np.full((3, 3), 0.225))) == []
        assert better.shape[0] - 1 >= _optimal_makespan(roadmap, starts.tolist(), goals.tolist())
        gained += int(_arrivals(slow).sum() - _arrivals(better).sum())
    assert gained > 0


def test_auto_search_picks_by_fleet_size_and_hands_over_when_ecbs_runs_out():
    from core.planning.solvers import ECBS_MAX_DRONES, EcbsThenLacam, LacamSolver, choose_solver
    from core.scene.model import PlannerSettings

    assert isinstance(choose_solver(PlannerSettings(), ECBS_MAX_DRONES), EcbsThenLacam)
    large = choose_solver(PlannerSettings(), ECBS_MAX_DRONES + 1)
    assert isinstance(large, LacamSolver) and f"{ECBS_MAX_DRONES + 1} drones" in large.reason
    assert choose_solver(PlannerSettings(search="ecbs"), 500).name == "ECBS"
    handed_over = 0
    for roadmap, starts, goals in _instances(5, 8):
        ids = tuple(f"d{k}" for k in range(len(starts)))
        outcome = EcbsThenLacam(1.0, "auto: 3 drones").solve(roadmap, starts, goals, ids, time_limit=1e-4)
        steps = max(len(p) for p in outcome.paths) - 1
        assert _discrete_ok(roadmap, outcome.paths, steps)
        if outcome.figures.solver == "LaCAM*":
            handed_over += 1
            assert "ECBS gave up" in outcome.figures.reason and outcome.figures.w is None
    assert handed_over > 0
