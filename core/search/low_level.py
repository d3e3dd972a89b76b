"""One drone's path in space-time under constraints: focal A* over (vertex, step) where each step
waits or traverses one edge; the focal key counts conflicts with the other drones' current paths.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..roadmap.graph import Roadmap
from .focal import FocalQueue


@dataclass(frozen=True)
class AgentPath:
    """``vertices``: vertex at each step 0..cost (then it waits at the goal for ever); ``actions``:
    action id taken in each step (``cost`` of them); ``lower_bound``: a proven lower bound on the
    optimal cost under the same constraints (steps)."""

    vertices: tuple[int, ...]
    actions: tuple[int, ...]
    lower_bound: int

    @property
    def cost(self) -> int:
        return len(self.vertices) - 1


class ConflictCounter:
    """How many of the other drones' actions at step ``t`` conflict with each action.

    ``others`` ``(M, T)``: action ids of the other drones per step, the last column repeated for
    later steps (they wait at their goals).
    """

    def __init__(self, roadmap: Roadmap, others: np.ndarray):
        self.roadmap = roadmap
        self.others = others
        self._by_step: dict[int, np.ndarray] = {}

    def at(self, t: int) -> np.ndarray:
        if self.others.shape[0] == 0:
            return np.zeros(self.roadmap.n_actions, dtype=np.int32)
        t = min(t, self.others.shape[1] - 1)
        counts = self._by_step.get(t)
        if counts is None:
            counts = self._by_step[t] = self.roadmap.conflict_counts(self.others[:, t])
        return counts


def plan_agent(roadmap: Roadmap, start: int, goal: int, hops_to_goal: np.ndarray, constraints: frozenset,
               counter: ConflictCounter, w: float) -> tuple[AgentPath | None, int]:
    """Path with cost ≤ ``w`` × optimal that avoids ``constraints`` (``(action, step)`` pairs), or
    None when none exists; and the number of expansions."""
    if not np.isfinite(hops_to_goal[start]):
        return None, 0
    goal_wait_until = max((t + 1 for a, t in constraints if a == goal), default=0)
    horizon = max((t for _, t in constraints), default=0) + roadmap.n_vertices + 1
    neighbours = roadmap.neighbours
    queue = FocalQueue(w)
    best_conflicts = {(start, 0): 0}
    parent: dict[tuple[int, int], tuple[tuple[int, int], int] | None] = {(start, 0): None}  # (state, action)
    closed: set[tuple[int, int]] = set()
    queue.push((start, 0, 0), float(hops_to_goal[start]), (0, hops_to_goal[start], 0))
    expansions = 0
    while len(queue):
        f_min = queue.f_min
        (v, t, conflicts), _ = queue.pop()
        if (v, t) in closed or conflicts > best_conflicts[(v, t)]:
            continue
        closed.add((v, t))
        expansions += 1
        if v == goal and t >= goal_wait_until:
            return _unwind(parent, (v, t), int(np.ceil(f_min - 1e-9))), expansions
        if t >= horizon:
            continue
        counts = counter.at(t)
        for u, action in [(v, v)] + neighbours[v]:
            if (action, t) in constraints or not np.isfinite(hops_to_goal[u]):
                continue
            state, c = (u, t + 1), conflicts + int(counts[action])
            if state in closed or c >= best_conflicts.get(state, 1 << 30):
                continue
            best_conflicts[state] = c
            parent[state] = ((v, t), action)
            h = float(hops_to_goal[u])
            queue.push((u, t + 1, c), t + 1 + h, (c, t + 1 + h, -(t + 1)))
    return None, expansions


def _unwind(parent: dict, state: tuple[int, int], lower_bound: int) -> AgentPath:
    vertices, actions = [state[0]], []
    while parent[state] is not None:
        state, action = parent[state]
        vertices.append(state[0])
        actions.append(action)
    return AgentPath(tuple(reversed(vertices)), tuple(reversed(actions)), lower_bound)
