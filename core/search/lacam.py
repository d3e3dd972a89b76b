"""LaCAM* on a roadmap: lazy constraint addition search over configurations (Okumura, "LaCAM:
search-based algorithm for quick multi-agent pathfinding", AAAI 2023; "Improving LaCAM for
scalable eventually optimal multi-agent pathfinding", IJCAI 2023).

A configuration is every drone's vertex at one synchronized step. The high level is a depth-first
search over configurations; each node carries a lazily grown tree of constraints ("drone i goes
to vertex u next"), and each visit of a node asks :class:`~core.search.pibt.StepGenerator` for a
successor that obeys the next constraint. Every successor is reachable through some constraint,
and configurations are never expanded twice, so the search is complete on a finite roadmap: it
finds a plan when one exists and otherwise ends saying none does.

After the first plan it keeps searching (LaCAM*) for a shorter one while the refinement budget
lasts: each edge costs one step (the flight's makespan is what smoothing turns into seconds),
nodes whose step count plus the heuristic (the farthest drone's hop distance) cannot beat the best
plan are dropped, and reaching a known configuration by a shorter route rewires its descendants.
When the open list empties, the plan is optimal in steps on this roadmap.

With goal ``groups`` (unlabeled and grouped transitions) a configuration is a goal when every
drone stands on a goal of its group; each node carries the goal each drone heads for, which the
step generator exchanges between drones of a group (TSWAP's rule, see :mod:`core.search.pibt`).
Completeness does not depend on those targets (the constraints still reach every successor), and
the heuristic (each drone's hop distance to the nearest goal of its group) stays admissible, so
LaCAM*'s optimality in steps holds for the goal set.

PIBT's plans make drones wait and detour in crowds; replanning each drone alone against the others
(:mod:`core.search.improve`) then removes most of that at a small cost.
"""

from __future__ import annotations

import heapq
import time
from collections import deque
from dataclasses import dataclass, field

import numpy as np

from ..progress import CancelToken, ProgressCallback, no_progress
from ..roadmap.graph import Roadmap
from .improve import shorten
from .pibt import StepGenerator

#: Shortest time (s) given to single-drone replanning after the search.
IMPROVE_MIN_SECONDS = 1.0


@dataclass(frozen=True)
class LacamResult:
    """paths : vertex per step for each drone, until it last arrives; goals : ``(N,)`` the goal
    vertex each drone ends on (with goal groups, maybe another than it was given); steps : makespan (steps);
    first_steps : makespan of the first plan found; search_steps : after LaCAM*'s refinement
    (before single-drone replanning, :mod:`core.search.improve`); optimal : the refinement proved
    ``search_steps`` optimal on this roadmap; cost : sum of costs (steps); lower_bound : Σ hop distances."""

    paths: list[tuple[int, ...]]
    goals: np.ndarray
    steps: int
    first_steps: int
    search_steps: int
    optimal: bool
    cost: int
    lower_bound: int
    nodes: int
    configurations: int
    seconds: float
    first_seconds: float


class LacamFailed(Exception):
    """No plan: ``exhausted`` (True: none exists on this roadmap; False: out of time); ``stuck``
    are the drones away from their goals in the configuration closest to the goal, ``where`` their
    vertices."""

    def __init__(self, message: str, exhausted: bool, stuck: np.ndarray, where: np.ndarray):
        super().__init__(message)
        self.exhausted, self.stuck, self.where = exhausted, stuck, where


@dataclass(eq=False)
class _Constraint:
    parent: _Constraint | None
    agent: int
    vertex: int
    depth: int

    def forced(self) -> dict[int, int]:
        out, c = {}, self
        while c is not None and c.depth > 0:
            out[c.agent] = c.vertex
            c = c.parent
        return out


@dataclass(eq=False)
class _Node:
    config: np.ndarray
    parent: _Node | None
    order: np.ndarray
    priority: np.ndarray
    targets: np.ndarray
    g: int
    h: int
    tree: deque = field(default_factory=deque)
    neighbours: set = field(default_factory=set)


def lacam(roadmap: Roadmap, starts: np.ndarray, goals: np.ndarray, *, groups: np.ndarray | None = None,
          time_limit: float = 60.0, refine_share: float = 1.0, improve_share: float = 2.0, seed: int = 0,
          progress: ProgressCallback = no_progress,
          cancel: CancelToken | None = None) -> LacamResult:
    """Conflict-free synchronized paths from vertex ``starts`` ``(N,)`` to vertex ``goals`` ``(N,)``
    (distinct). ``groups`` ``(N,)``: a label per drone; drones with one label may end on each
    other's goals (None: every drone on its own goal).

    After the first plan, refinement runs for ``refine_share`` × the time the first plan took (at
    least half a second); then single-drone replanning (:func:`core.search.improve.shorten`) for
    ``improve_share`` × the time spent so far (at least :data:`IMPROVE_MIN_SECONDS`); all within
    ``time_limit`` (s). Raises :class:`LacamFailed`.
    """
    cancel = cancel or CancelToken()
    started = time.perf_counter()
    starts, goals = np.asarray(starts, dtype=np.int64), np.asarray(goals, dtype=np.int64)
    n = len(starts)
    group = np.arange(n) if groups is None else np.unique(np.asarray(groups), return_inverse=True)[1].ravel()
    hops = _rows_per_goal(roadmap.hop_distances, goals)  # row k: to goals[k]
    metres = _rows_per_goal(roadmap.path_lengths, goals)
    hop_table = np.where(np.isfinite(hops), hops, 1e9).astype(np.int64)
    # (G, V) hops to the nearest goal of each group
    nearest_goal = hop_table if groups is None else _group_minimum(hop_table, group)
    unreachable = np.nonzero(nearest_goal[group, starts] >= 1e9)[0]
    if len(unreachable):
        raise LacamFailed("goal cannot be reached on the roadmap", True, unreachable, starts[unreachable])
    # Hops first, metres to break ties between equally many steps.
    scale = float(np.nanmax(np.where(np.isfinite(metres), metres, np.nan))) + 1.0
    generator = StepGenerator(roadmap, hops + metres / scale, goals, group, seed)
    goal_index = np.full(roadmap.n_vertices, -1, dtype=np.int64)
    goal_index[goals] = np.arange(n)
    goal_group = np.where(goal_index >= 0, group[goal_index], -1)  # (V,) group of the goal there, or -1

    def heuristic(config: np.ndarray) -> int:
        return int(nearest_goal[group, config].max())

    def away(config: np.ndarray) -> np.ndarray:
        return goal_group[config] != group

    first_priority = nearest_goal[group, starts] / (nearest_goal[group, starts].max() + 1.0) * 0.5 \
        + np.random.default_rng(seed).random(n) * 1e-3
    root = _new_node(starts, None, first_priority, np.arange(n), goals, 0, heuristic(starts))
    explored: dict[bytes, _Node] = {starts.tobytes(): root}
    open_stack = [root]
    best: _Node | None = None
    first_steps, first_seconds, deadline = 0, 0.0, started + time_limit
    nearest = root
    visits = 0
    while open_stack:
        visits += 1
        if visits % 64 == 0:
            cancel.check()
            now = time.perf_counter()
            if now > deadline:
                break
            progress("search", min(0.99, visits / 20000), f"LaCAM*: {len(explored)} configurations")
        node = open_stack[-1]
        if best is not None and node.g + node.h >= best.g:
            open_stack.pop()
            continue
        if not away(node.config).any():
            best = node
            if not first_steps:
                first_steps, first_seconds = node.g, time.perf_counter() - started
                deadline = min(started + time_limit, time.perf_counter() + max(0.5, refine_share * first_seconds))
            open_stack.pop()
            continue
        if not node.tree:
            open_stack.pop()
            continue
        constraint = node.tree.popleft()
        if constraint.depth < n:
            agent = int(node.order[constraint.depth])
            dest, _ = generator.moves(int(node.config[agent]))
            for vertex in generator.rng.permutation(dest).tolist():
                node.tree.append(_Constraint(constraint, agent, vertex, constraint.depth + 1))
        step = generator.step(node.config, node.order, constraint.forced(), node.targets)
        if step is None:
            continue
        successor, targets = step
        key = successor.tobytes()
        known = explored.get(key)
        if known is not None:
            node.neighbours.add(known)
            known.neighbours.add(node)
            _rewire(node)
            open_stack.append(known)
            continue
        child = _new_node(successor, node, node.priority, targets, goals, node.g + 1, heuristic(successor))
        node.neighbours.add(child)
        child.neighbours.add(node)
        explored[key] = child
        if child.h < nearest.h or (child.h == nearest.h and away(child.config).sum() < away(nearest.config).sum()):
            nearest = child
        open_stack.append(child)
    if best is None:
        stuck = np.nonzero(away(nearest.config))[0]
        if not open_stack:
            raise LacamFailed("no conflict-free plan exists on this roadmap", True, stuck, nearest.config[stuck])
        raise LacamFailed(f"search stopped after {time_limit:g} s", False, stuck, nearest.config[stuck])
    configs = []
    node = best
    while node is not None:
        configs.append(node.config)
        node = node.parent
    configs = np.array(configs[::-1])
    lacam_steps = len(configs) - 1
    reached = goal_index[best.config]  # (N,) goal index each drone ends on
    now = time.perf_counter()
    budget = min(started + time_limit - now, max(IMPROVE_MIN_SECONDS, improve_share * (now - started)))
    if budget > 0 and (open_stack or best.g > heuristic(starts)):  # else proven optimal at the bound
        configs = shorten(roadmap, configs, hop_table[reached], budget, cancel)
    final = best.config
    paths = []
    for i in range(n):
        column = configs[:, i]
        moving = np.nonzero(column != final[i])[0]
        end = int(moving[-1]) + 1 if len(moving) else 0
        paths.append(tuple(int(v) for v in column[:end + 1]))
    cost = sum(len(p) - 1 for p in paths)
    return LacamResult(paths, final, len(configs) - 1, first_steps, lacam_steps, not open_stack, cost,
                       int(nearest_goal[group, starts].sum()), visits, len(explored), time.perf_counter() - started,
                       first_seconds)


def _rows_per_goal(distances, goals: np.ndarray) -> np.ndarray:
    """``(N, V)`` distances to each drone's goal, computed once per distinct goal vertex."""
    unique, index = np.unique(goals, return_inverse=True)
    return distances(unique)[index]


def _group_minimum(table: np.ndarray, group: np.ndarray) -> np.ndarray:
    """``(G, V)`` row-wise minimum of ``table`` ``(N, V)`` over the rows of each group ``(N,)``
    (labels ``0 … G-1``, each used)."""
    order = np.argsort(group, kind="stable")
    firsts = np.searchsorted(group[order], np.arange(int(group.max()) + 1))
    return np.minimum.reduceat(table[order], firsts, axis=0)


def _new_node(config: np.ndarray, parent: _Node | None, priority: np.ndarray, targets: np.ndarray,
              goals: np.ndarray, g: int, h: int) -> _Node:
    """A node whose priorities grow for drones away from their targets ``goals[targets]`` (PIBT's
    rule: the longer a drone has waited to arrive, the higher it ranks; arrived drones drop to
    their tie-breakers)."""
    arrived = config == goals[targets]
    if parent is not None:
        priority = np.where(arrived, priority - np.floor(priority), priority + 1.0)
    order = np.argsort(-priority, kind="stable")
    node = _Node(config, parent, order, priority, targets, g, h)
    node.tree.append(_Constraint(None, -1, -1, 0))
    return node


def _rewire(node: _Node) -> None:
    """LaCAM*'s update: propagate a shorter route (one step per edge) from ``node`` through the
    graph of known configurations (Dijkstra over the recorded neighbour edges)."""
    heap = [(node.g, id(node), node)]
    while heap:
        g, _, current = heapq.heappop(heap)
        if g > current.g:
            continue
        for other in current.neighbours:
            if current.g + 1 < other.g:
                other.g = current.g + 1
                other.parent = current
                heapq.heappush(heap, (other.g, id(other), other))
