"""The multi-agent search on a roadmap, behind one interface so that other solvers can join ECBS."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Protocol

import numpy as np

from ..errors import PlanningError
from ..progress import CancelToken, ProgressCallback, no_progress
from ..roadmap.graph import Roadmap
from ..scene.checks import format_xyz
from ..search import SearchFailed, ecbs
from .results import SearchFigures


@dataclass(frozen=True, eq=False)
class SearchOutcome:
    """Conflict-free vertex paths ``paths[i]`` (one vertex per step until drone ``i`` arrives)
    and the figures of the search that found them."""

    paths: list[tuple[int, ...]]
    figures: SearchFigures


class MultiAgentSolver(Protocol):
    """Finds synchronized, conflict-free paths on a roadmap for drones from vertex ``starts`` to
    vertex ``goals`` ``(N,)``; raises :class:`PlanningError` naming the drones it could not route."""

    name: str

    def solve(self, roadmap: Roadmap, starts: np.ndarray, goals: np.ndarray, drone_ids: tuple[str, ...], *,
              time_limit: float, progress: ProgressCallback = no_progress,
              cancel: CancelToken | None = None) -> SearchOutcome: ...


@dataclass(frozen=True)
class EcbsSolver:
    """ECBS (Barer et al. 2014) with suboptimality factor ``w``: sum of costs ≤ w × optimal."""

    w: float
    name: str = "ECBS"

    def solve(self, roadmap: Roadmap, starts: np.ndarray, goals: np.ndarray, drone_ids: tuple[str, ...], *,
              time_limit: float, progress: ProgressCallback = no_progress,
              cancel: CancelToken | None = None) -> SearchOutcome:
        try:
            result = ecbs(roadmap, starts, goals, w=self.w, time_limit=time_limit, progress=progress, cancel=cancel)
        except SearchFailed as e:
            raise PlanningError(f"{e}; unresolved: " + _describe_conflicts(e.conflicts, roadmap, drone_ids)
                                + ". Try a larger suboptimality factor, a longer search time limit, more roadmap "
                                "samples, or fewer drones through the narrowest passage.") from None
        return SearchOutcome(result.paths, SearchFigures(
            solver=self.name, nodes_expanded=result.nodes_expanded, nodes_generated=result.nodes_generated,
            low_level_expansions=result.low_level_expansions, sum_of_costs=result.cost,
            cost_lower_bound=result.lower_bound, w=result.w, seconds=result.seconds))


def _describe_conflicts(conflicts, roadmap: Roadmap, ids) -> str:
    if not conflicts:
        return "none recorded"
    parts = []
    for c in conflicts[:5]:
        where = roadmap.vertices[c.action_a] if c.action_a < roadmap.n_vertices else \
            roadmap.vertices[roadmap.edges[c.action_a - roadmap.n_vertices]].mean(axis=0)
        parts.append(f"drones {ids[c.a]} and {ids[c.b]} at step {c.step} near {format_xyz(where, '.2f')}")
    return "; ".join(parts) + (f" (+{len(conflicts) - 5} more)" if len(conflicts) > 5 else "")
