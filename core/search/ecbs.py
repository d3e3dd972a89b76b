"""Enhanced conflict-based search (Barer, Sharon, Stern & Felner, "Suboptimal variants of the
conflict-based search algorithm for the multi-agent pathfinding problem", SoCS 2014).

High level: a constraint tree; focal search over nodes whose cost ≤ w × the smallest lower bound,
fewest conflicts first. Low level: :func:`core.search.low_level.plan_agent`. Conflicts are the
roadmap's generalized action conflicts (clearance ellipsoids, swept segments), so a conflict-free
node is a synchronized plan in which no two drones' steps can touch. The returned sum of costs is
≤ w × optimal (w = 1: optimal, as in CBS, Sharon et al., AIJ 2015).
"""

from __future__ import annotations

import itertools
import time
from dataclasses import dataclass

import numpy as np

from ..errors import PlanningError
from ..progress import CancelToken, ProgressCallback, no_progress
from ..roadmap.graph import Roadmap
from .focal import FocalQueue
from .low_level import AgentPath, ConflictCounter, plan_agent


@dataclass(frozen=True)
class UnresolvedConflict:
    """Agents ``a`` and ``b`` (indices) conflict at step ``step`` doing actions ``action_a``/``action_b``."""

    a: int
    b: int
    step: int
    action_a: int
    action_b: int


@dataclass(frozen=True)
class SearchResult:
    """paths: vertex per step for each agent (until it arrives); cost: sum of costs (steps);
    lower_bound: proven bound on the optimal sum of costs; w: suboptimality factor used."""

    paths: list[tuple[int, ...]]
    cost: int
    lower_bound: int
    w: float
    nodes_expanded: int
    nodes_generated: int
    low_level_expansions: int
    seconds: float

    @property
    def makespan(self) -> int:
        return max(len(p) - 1 for p in self.paths)


class SearchFailed(PlanningError):
    """The search ran out of time (or found no plan); ``conflicts`` are those of the best node reached."""

    def __init__(self, message: str, conflicts: list[UnresolvedConflict], nodes_expanded: int):
        super().__init__(message)
        self.conflicts = conflicts
        self.nodes_expanded = nodes_expanded


@dataclass
class _Node:
    constraints: list[frozenset]
    paths: list[AgentPath]
    conflicts: list[UnresolvedConflict]

    @property
    def cost(self) -> int:
        return sum(p.cost for p in self.paths)

    @property
    def lower_bound(self) -> int:
        return sum(p.lower_bound for p in self.paths)


def action_matrix(paths: list[AgentPath], steps: int) -> np.ndarray:
    """``(N, steps)`` action id of each agent at each step (waiting at the goal after arrival)."""
    out = np.empty((len(paths), steps), dtype=np.int64)
    for i, p in enumerate(paths):
        out[i, :len(p.actions)] = p.actions[:steps]
        out[i, len(p.actions):] = p.vertices[-1]
    return out


def find_conflicts(roadmap: Roadmap, paths: list[AgentPath]) -> list[UnresolvedConflict]:
    """Every conflicting (pair, step), earliest first, for paths that end waiting at their goals."""
    n = len(paths)
    if n < 2:
        return []
    steps = max(len(p.vertices) for p in paths)  # one extra step: everyone waiting at the goal
    acts = action_matrix(paths, steps)
    a, b = np.triu_indices(n, k=1)
    hit = roadmap.in_conflict(acts[a], acts[b])
    pair, step = np.nonzero(hit)
    order = np.lexsort((pair, step))
    return [UnresolvedConflict(int(a[p]), int(b[p]), int(s), int(acts[a[p], s]), int(acts[b[p], s]))
            for p, s in zip(pair[order], step[order], strict=True)]


def ecbs(roadmap: Roadmap, starts: np.ndarray, goals: np.ndarray, *, w: float = 1.5, time_limit: float = 60.0,
         progress: ProgressCallback = no_progress, cancel: CancelToken | None = None) -> SearchResult:
    """Conflict-free paths from vertex ``starts`` ``(N,)`` to vertex ``goals`` ``(N,)``.

    Raises :class:`SearchFailed` after ``time_limit`` seconds (or when the tree is exhausted).
    """
    cancel = cancel or CancelToken()
    started = time.perf_counter()
    starts, goals = [int(s) for s in starts], [int(g) for g in goals]
    n = len(starts)
    hops = roadmap.hop_distances(np.asarray(goals))
    low_expansions = 0

    def replan(node_paths: list[AgentPath | None], agent: int, constraints: frozenset) -> AgentPath | None:
        nonlocal low_expansions
        others = [p for k, p in enumerate(node_paths) if k != agent and p is not None]
        steps = max((len(p.vertices) for p in others), default=1)
        counter = ConflictCounter(roadmap, action_matrix(others, steps))
        path, expanded = plan_agent(roadmap, starts[agent], goals[agent], hops[agent], constraints, counter, w)
        low_expansions += expanded
        return path

    empty = frozenset()
    root_paths: list[AgentPath | None] = [None] * n
    for agent in range(n):
        root_paths[agent] = replan(root_paths, agent, empty)
        if root_paths[agent] is None:
            raise SearchFailed(f"agent {agent}: goal vertex {goals[agent]} cannot be reached", [], 0)
    root = _Node([empty] * n, root_paths, find_conflicts(roadmap, root_paths))
    tree = FocalQueue(w)
    tiebreak = itertools.count()
    tree.push(root, root.lower_bound, (len(root.conflicts), root.cost, next(tiebreak)), root.cost)
    best, expanded, generated = root, 0, 1
    while len(tree):
        cancel.check()
        if time.perf_counter() - started > time_limit:
            raise SearchFailed(f"search stopped after {time_limit:g} s with {len(best.conflicts)} conflicts left",
                               best.conflicts, expanded)
        f_min = tree.f_min
        node, _ = tree.pop()
        expanded += 1
        if len(node.conflicts) < len(best.conflicts):
            best = node
        if not node.conflicts:
            return SearchResult([p.vertices for p in node.paths], node.cost, max(int(f_min), 0), w, expanded,
                                generated, low_expansions, time.perf_counter() - started)
        if expanded % 25 == 0:
            progress("search", min(expanded / 5000, 0.99),
                     f"{expanded} nodes, {len(best.conflicts)} conflicts left at best")
        c = node.conflicts[0]
        for agent, action in ((c.a, c.action_a), (c.b, c.action_b)):
            constraints = node.constraints[agent] | {(action, c.step)}
            path = replan(node.paths, agent, constraints)
            if path is None:
                continue
            paths = list(node.paths)
            paths[agent] = path
            child = _Node(node.constraints[:agent] + [constraints] + node.constraints[agent + 1:], paths,
                          find_conflicts(roadmap, paths))
            generated += 1
            tree.push(child, child.lower_bound, (len(child.conflicts), child.cost, next(tiebreak)), child.cost)
    raise SearchFailed("no conflict-free plan exists on this roadmap", best.conflicts, expanded)
