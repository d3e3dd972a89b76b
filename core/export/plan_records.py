"""The one mapping from the typed planning records (:mod:`core.planning.results`) to plan.json
(README, "Export folder").

``plan.json`` ``transitions[]`` entries and its ``roadmap`` object are built here and nowhere
else, so the file format changes only when this module does.
"""

from __future__ import annotations

from dataclasses import asdict
from typing import TYPE_CHECKING

if TYPE_CHECKING:  # records are read, never built, here: the export needs no planning code
    from ..planning.results import RoadmapFigures, TransitionResult


def transition_record(t: TransitionResult) -> dict:
    """``plan.json`` ``transitions[k]``: endpoints, assignment, durations (s), method, profile and, for
    roadmap transitions, ``free_space_bound_s`` with its ratio and ``search`` (solver figures,
    ``stop_and_go``, ``smoothed``, ``smoothing[]``
    per round, ``smoothing_note``, ``smoothing_seconds``)."""
    p = t.problem
    record = {"from": p.source, "to": p.target, "assignment": p.mode, "assignment_method": t.assignment.method,
              "duration_s": t.duration, "minimum_duration_s": t.minimum_duration, "lower_bound_s": t.lower_bound,
              "makespan_ratio": t.makespan_ratio, "method": t.method_text, "spacing_guarantee": t.spacing_guarantee,
              "profile": p.profile, "pieces": len(t.durations), "search": {}}
    if t.free_space_bound is not None:
        record.update(free_space_bound_s=t.free_space_bound, free_space_ratio=t.free_space_ratio)
    if t.search is not None:
        s = t.search
        record["search"] = {
            "solver": s.solver, "solver_reason": s.reason, "search_nodes": s.nodes_expanded,
            "search_generated": s.nodes_generated, "low_level_expansions": s.low_level_expansions,
            "steps": s.steps, "sum_of_costs": s.sum_of_costs, "cost_lower_bound": s.cost_lower_bound, "w": s.w,
            "search_s": s.seconds, "refinement": s.refinement,
            "stop_and_go": asdict(t.stop_and_go), "smoothed": t.method.name == "SMOOTHED",
        }
        if t.smoothing is not None:
            record["search"].update(
                smoothing=[{k: v for k, v in asdict(r).items() if v is not None} for r in t.smoothing.rounds],
                smoothing_note=t.smoothing.note, smoothing_seconds=t.smoothing.seconds)
    return record


def roadmap_record(roadmap: RoadmapFigures | None) -> dict:
    """``plan.json`` ``roadmap``: vertices, edges, conflicts and whether it came from the cache (empty when no
    transition needed it)."""
    if roadmap is None:
        return {}
    return {"roadmap_vertices": roadmap.vertices, "roadmap_edges": roadmap.edges,
            "roadmap_conflicts": roadmap.conflicts, "roadmap_cached": roadmap.cached}
