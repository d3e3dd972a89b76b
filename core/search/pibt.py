"""One synchronized step for every drone at once: PIBT, priority inheritance with backtracking
(Okumura, Machida, Défago & Tamura, "Priority inheritance with backtracking for iterative
multi-agent path finding", AIJ 2022), adapted to the roadmap's generalized action conflicts.

Each drone, highest priority first, takes the most useful of its actions (wait, or one edge) that
conflicts neither with an action already taken this step nor with another drone's *current*
vertex. Every action of a drone starts at its current vertex, so an action that comes within
clearance of drone ``j``'s current vertex conflicts with whatever ``j`` does this step; with the
swept-volume conflicts (see :mod:`core.roadmap.conflicts`) a drone can never follow another into
the place it is leaving. Two consequences:

* waiting is always possible for a drone not yet served (a taken action conflicts with a wait at
  ``j``'s vertex exactly when it comes near ``j``'s current vertex, which was ruled out), so a
  step never fails unless constraints force actions;
* the inheritance of PIBT becomes a request to make room: when the action a drone wants is blocked
  by drones standing in the way, it takes its best free action now and those drones are served
  next, preferring places that leave the wanted action free for the following step.

Where drones of one group may end on any of the group's goals (unlabeled and grouped
transitions), a drone that must wait because a drone of its group is parked on its own goal in
the way exchanges goals with it, TSWAP's rule (Okumura & Défago, "Solving simultaneous target
assignment and path planning efficiently with time-independent execution", AIJ 2023): the parked
drone is then served next with the goal the blocked one came for, so it makes room by moving on
towards it.
"""

from __future__ import annotations

import numpy as np

from ..roadmap.graph import Roadmap


class StepGenerator:
    """Configuration generator for LaCAM on one roadmap and one set of goals.

    ``distance`` ``(N, V)``: ordering key per goal (row ``k`` for goal vertex ``goals[k]``) and
    vertex (smaller is closer to that goal; ``inf`` where it cannot be reached). ``groups`` ``(N,)``
    group index of each goal; drone ``i`` starts out heading for goal ``i``, and two drones whose
    current goals share a group may exchange them (all groups distinct: labeled, no exchange).
    Actions are the roadmap's (wait at v = v, traverse edge e = V + e).
    """

    def __init__(self, roadmap: Roadmap, distance: np.ndarray, goals: np.ndarray, groups: np.ndarray, seed: int = 0):
        self.roadmap, self.distance, self.goals, self.groups = roadmap, distance, goals, groups
        self._targets = np.arange(len(goals))
        self.n_actions = roadmap.n_actions
        table = roadmap.action_conflicts
        self.conflict_ptr, self.conflict_cols = table.indptr, table.indices
        v = roadmap.n_vertices
        edges = roadmap.edges
        # Moves out of each vertex (CSR): wait first, then every edge either way.
        src = np.concatenate([np.arange(v), edges[:, 0], edges[:, 1]])
        dst = np.concatenate([np.arange(v), edges[:, 1], edges[:, 0]])
        act = np.concatenate([np.arange(v), v + np.arange(len(edges)), v + np.arange(len(edges))])
        order = np.lexsort((act, src))
        self.move_ptr = np.searchsorted(src[order], np.arange(v + 1))
        self.move_dest, self.move_action = dst[order], act[order]
        self.rng = np.random.default_rng(seed)
        self._taken = np.zeros(self.n_actions, dtype=np.int32)
        self._wanted = np.zeros(self.n_actions, dtype=bool)

    def moves(self, vertex: int) -> tuple[np.ndarray, np.ndarray]:
        """``(destinations, actions)`` of every move out of ``vertex`` (wait first)."""
        s, e = self.move_ptr[vertex], self.move_ptr[vertex + 1]
        return self.move_dest[s:e], self.move_action[s:e]

    def _row(self, action: int) -> np.ndarray:
        return self.conflict_cols[self.conflict_ptr[action]:self.conflict_ptr[action + 1]]

    def step(self, config: np.ndarray, order: np.ndarray, forced: dict[int, int], targets: np.ndarray
             ) -> tuple[np.ndarray, np.ndarray] | None:
        """The next configuration ``(N,)`` from ``config`` ``(N,)`` (a valid one: no two vertices in
        conflict), serving drones in priority ``order``; ``forced`` fixes some drones' next
        vertices (LaCAM's constraints); ``targets`` ``(N,)`` the goal index each drone heads for.
        Returns the configuration and the targets after this step's exchanges, or None when the
        forced moves conflict."""
        n = len(config)
        self._targets = targets = targets.copy()
        occupied = self.roadmap.conflict_counts(config)
        taken = self._taken
        taken[:] = 0
        nxt = np.full(n, -1, dtype=np.int64)
        chosen_actions: list[int] = []
        try:
            for agent, vertex in forced.items():
                dest, act = self.moves(int(config[agent]))
                hit = np.nonzero(dest == vertex)[0]
                if not len(hit):
                    return None
                a = int(act[hit[0]])
                if occupied[a] != 1 or taken[a]:
                    return None
                nxt[agent] = vertex
                taken[self._row(a)] += 1
                chosen_actions.append(a)
            for agent in order.tolist():
                if nxt[agent] < 0:
                    self._serve(agent, config, nxt, occupied, chosen_actions, wish=None)
            return nxt, targets
        finally:
            for a in chosen_actions:
                taken[self._row(a)] = 0

    def _serve(self, agent: int, config: np.ndarray, nxt: np.ndarray, occupied: np.ndarray,
               chosen_actions: list[int], wish: int | None) -> None:
        """Choose ``agent``'s move; then serve the drones standing in the way of the move it wanted.
        ``wish``: an action of the drone that asked this one to make room (its destination should
        leave that action free)."""
        dest, act = self.moves(int(config[agent]))
        taken = self._taken
        key = self.distance[self._targets[agent], dest] + self.rng.random(len(dest)) * 1e-6
        if wish is not None:
            self._wanted[self._row(wish)] = True
            key = key + np.where(self._wanted[dest], 1e12, 0.0)  # a wait at dest would block the wish
            self._wanted[self._row(wish)] = False
        ranked = np.argsort(key, kind="stable")
        free_of_taken = taken[act[ranked]] == 0
        free = free_of_taken & (occupied[act[ranked]] == 1)
        pick = ranked[int(np.argmax(free))]  # the wait is always free (see the module docstring)
        a = int(act[pick])
        nxt[agent] = dest[pick]
        taken[self._row(a)] += 1
        chosen_actions.append(a)
        want = ranked[int(np.argmax(free_of_taken))] if free_of_taken.any() else pick
        if want == pick or key[want] >= key[pick]:
            return
        wanted = int(act[want])
        blockers = np.nonzero((nxt < 0) & self._conflicts_with_vertices(wanted, config))[0].tolist()
        if dest[pick] == config[agent]:  # exchanging on every block made crowd plans longer (DEVELOPERS.md)
            self._exchange_with_parked(agent, blockers, config)
        for other in blockers:
            if nxt[other] < 0:
                self._serve(other, config, nxt, occupied, chosen_actions, wish=wanted)

    def _exchange_with_parked(self, agent: int, blockers: list[int], config: np.ndarray) -> None:
        """TSWAP's exchange: the first of ``blockers`` whose goal is in ``agent``'s group and that
        stands on it takes ``agent``'s goal, and ``agent`` takes its."""
        t = self._targets
        for other in blockers:
            if self.groups[t[other]] == self.groups[t[agent]] and config[other] == self.goals[t[other]]:
                t[agent], t[other] = t[other], t[agent]
                return

    def _conflicts_with_vertices(self, action: int, config: np.ndarray) -> np.ndarray:
        """``(N,)`` whether ``action`` conflicts with a wait at each drone's vertex in ``config``."""
        row = self._row(action)
        mask = self._wanted
        mask[row] = True
        out = mask[config].copy()
        mask[row] = False
        return out
