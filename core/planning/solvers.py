"""The multi-agent search on a roadmap, behind one interface: ECBS for small teams (bounded sum of
costs), LaCAM* for large ones (complete, fast on hundreds of drones), chosen by fleet size unless
the scene's ``planner.search`` names one."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Protocol

import numpy as np

from ..errors import PlanningError
from ..progress import CancelToken, ProgressCallback, no_progress
from ..roadmap.graph import Roadmap
from ..scene.checks import format_xyz
from ..scene.model import PlannerSettings
from ..search import LacamFailed, SearchFailed, ecbs, lacam
from .results import SearchFigures

#: Largest team that ``planner.search: auto`` gives to ECBS first, and the share of the search
#: time limit ECBS gets before LaCAM* takes over. Measured on 2 cores (DEVELOPERS.md, "Choosing
#: the search"): on the 32-drone courtyard ECBS finds 38 steps in 1.8 s, LaCAM* 35 steps whose
#: flight is 23 % longer; on 64 drones through a two-gap wall ECBS needs 9–15 s, LaCAM* 2 s.
ECBS_MAX_DRONES = 32
ECBS_SHARE = 0.25


@dataclass(frozen=True, eq=False)
class SearchOutcome:
    """Conflict-free vertex paths ``paths[i]`` (one vertex per step until drone ``i`` arrives),
    the goal vertex each drone ends on ``goals`` ``(N,)``, and the figures of the search."""

    paths: list[tuple[int, ...]]
    goals: np.ndarray
    figures: SearchFigures


class MultiAgentSolver(Protocol):
    """Finds synchronized, conflict-free paths on a roadmap for drones from vertex ``starts`` to
    vertex ``goals`` ``(N,)``; where ``groups`` ``(N,)`` labels them, drones of one label may end
    on each other's goals instead (a solver may also keep the goals as given). Raises
    :class:`PlanningError` naming the drones it could not route."""

    name: str

    def solve(self, roadmap: Roadmap, starts: np.ndarray, goals: np.ndarray, drone_ids: tuple[str, ...], *,
              groups: np.ndarray | None = None, time_limit: float, progress: ProgressCallback = no_progress,
              cancel: CancelToken | None = None) -> SearchOutcome: ...


@dataclass(frozen=True)
class EcbsSolver:
    """ECBS (Barer et al. 2014) with suboptimality factor ``w``: sum of costs ≤ w × optimal;
    ``reason`` says why it was chosen."""

    w: float
    reason: str = "chosen by the caller"
    name: str = "ECBS"

    def solve(self, roadmap: Roadmap, starts: np.ndarray, goals: np.ndarray, drone_ids: tuple[str, ...], *,
              groups: np.ndarray | None = None, time_limit: float, progress: ProgressCallback = no_progress,
              cancel: CancelToken | None = None) -> SearchOutcome:
        """ECBS keeps every drone's goal as given (``groups`` are not used)."""
        try:
            return self.search(roadmap, starts, goals, time_limit=time_limit, progress=progress, cancel=cancel)
        except SearchFailed as e:
            raise PlanningError(f"{e}; unresolved: " + _describe_conflicts(e.conflicts, roadmap, drone_ids)
                                + ". Try a larger suboptimality factor, a longer search time limit, more roadmap "
                                "samples, fewer drones through the narrowest passage, or planner.search: lacam."
                                ) from None

    def search(self, roadmap: Roadmap, starts: np.ndarray, goals: np.ndarray, *, time_limit: float,
               progress: ProgressCallback = no_progress, cancel: CancelToken | None = None) -> SearchOutcome:
        """:meth:`solve` without the message: raises :class:`~core.search.SearchFailed`."""
        result = ecbs(roadmap, starts, goals, w=self.w, time_limit=time_limit, progress=progress, cancel=cancel)
        return SearchOutcome(result.paths, np.asarray(goals), SearchFigures(
            solver=self.name, reason=self.reason, nodes_expanded=result.nodes_expanded,
            nodes_generated=result.nodes_generated, low_level_expansions=result.low_level_expansions,
            sum_of_costs=result.cost, cost_lower_bound=result.lower_bound, w=result.w, steps=result.makespan,
            seconds=result.seconds))


@dataclass(frozen=True)
class LacamSolver:
    """LaCAM* with a PIBT step generator (Okumura 2023): complete on the roadmap; after its first
    plan it looks for fewer steps for ``refine_share`` × the time that plan took."""

    reason: str = "chosen by the caller"
    refine_share: float = 1.0
    seed: int = 0
    name: str = "LaCAM*"

    def solve(self, roadmap: Roadmap, starts: np.ndarray, goals: np.ndarray, drone_ids: tuple[str, ...], *,
              groups: np.ndarray | None = None, time_limit: float, progress: ProgressCallback = no_progress,
              cancel: CancelToken | None = None) -> SearchOutcome:
        try:
            r = lacam(roadmap, starts, goals, groups=groups, time_limit=time_limit, refine_share=self.refine_share,
                      seed=self.seed, progress=progress, cancel=cancel)
        except LacamFailed as e:
            raise PlanningError(f"{e}; " + _describe_stuck(e, roadmap, drone_ids)
                                + (". More roadmap samples or a wider passage may help." if e.exhausted else
                                   ". Try a longer search time limit, more roadmap samples, or fewer drones "
                                   "through the narrowest passage.")) from None
        refined = (f"first plan {r.first_steps} steps after {r.first_seconds:.2f} s; LaCAM* refinement: "
                   + (f"{r.search_steps} steps" if r.search_steps < r.first_steps else "none shorter")
                   + (" (optimal in steps on this roadmap)" if r.optimal else "")
                   + f"; single-drone replanning: {r.steps} steps")
        if groups is not None:
            refined += (f"; {int(np.count_nonzero(r.goals != np.asarray(goals)))} drones took another goal of "
                        "their group (TSWAP exchanges)")
        return SearchOutcome(r.paths, r.goals, SearchFigures(
            solver=self.name, reason=self.reason, nodes_expanded=r.nodes, nodes_generated=r.configurations,
            low_level_expansions=0, sum_of_costs=r.cost, cost_lower_bound=r.lower_bound, w=None, steps=r.steps,
            seconds=r.seconds, refinement=refined))


@dataclass(frozen=True)
class EcbsThenLacam:
    """ECBS for :data:`ECBS_SHARE` of the time limit, then LaCAM* with the rest if ECBS ran out."""

    w: float
    reason: str
    seed: int = 0
    name: str = "ECBS, then LaCAM*"

    def solve(self, roadmap: Roadmap, starts: np.ndarray, goals: np.ndarray, drone_ids: tuple[str, ...], *,
              groups: np.ndarray | None = None, time_limit: float, progress: ProgressCallback = no_progress,
              cancel: CancelToken | None = None) -> SearchOutcome:
        first = ECBS_SHARE * time_limit
        try:
            return EcbsSolver(self.w, self.reason).search(roadmap, starts, goals, time_limit=first,
                                                          progress=progress, cancel=cancel)
        except SearchFailed as e:
            why = f"{self.reason}; ECBS gave up after {first:g} s ({e}), so LaCAM* planned"
        return LacamSolver(why, seed=self.seed).solve(roadmap, starts, goals, drone_ids, groups=groups,
                                                      time_limit=time_limit - first, progress=progress,
                                                      cancel=cancel)


def choose_solver(settings: PlannerSettings, drones: int) -> MultiAgentSolver:
    """The search ``planner.search`` names; for ``auto``, ECBS (then LaCAM* if it runs out of its
    share of the time) up to :data:`ECBS_MAX_DRONES` drones and LaCAM* beyond. The solver's
    ``reason`` says which rule picked it."""
    if settings.search == "ecbs":
        return EcbsSolver(settings.suboptimality, "planner.search is ecbs")
    if settings.search == "lacam":
        return LacamSolver("planner.search is lacam", seed=settings.roadmap_seed)
    if drones <= ECBS_MAX_DRONES:
        return EcbsThenLacam(settings.suboptimality, f"auto: {drones} drones ≤ {ECBS_MAX_DRONES}",
                             settings.roadmap_seed)
    return LacamSolver(f"auto: {drones} drones > {ECBS_MAX_DRONES}", seed=settings.roadmap_seed)


def _describe_stuck(failure: LacamFailed, roadmap: Roadmap, ids) -> str:
    """The drones away from their goals in the configuration nearest the goal, and where they crowd."""
    if not len(failure.stuck):
        return "no drone recorded"
    where = roadmap.vertices[failure.where]
    names = ", ".join(f"{ids[k]} near {format_xyz(p, '.2f')}" for k, p in zip(failure.stuck[:5], where[:5],
                                                                              strict=False))
    more = f" (+{len(failure.stuck) - 5} more)" if len(failure.stuck) > 5 else ""
    return (f"{len(failure.stuck)} drones short of their goals, crowding around {format_xyz(where.mean(axis=0), '.2f')}"
            f": {names}{more}")


def _describe_conflicts(conflicts, roadmap: Roadmap, ids) -> str:
    if not conflicts:
        return "none recorded"
    parts = []
    for c in conflicts[:5]:
        where = roadmap.vertices[c.action_a] if c.action_a < roadmap.n_vertices else \
            roadmap.vertices[roadmap.edges[c.action_a - roadmap.n_vertices]].mean(axis=0)
        parts.append(f"drones {ids[c.a]} and {ids[c.b]} at step {c.step} near {format_xyz(where, '.2f')}")
    return "; ".join(parts) + (f" (+{len(conflicts) - 5} more)" if len(conflicts) > 5 else "")
