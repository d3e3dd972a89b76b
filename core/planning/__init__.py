"""Planning one transition: its problem, the shared context, the straight and roadmap paths,
the multi-agent solver interface and the typed results (see DEVELOPERS.md, "Data flow")."""

from .context import AttachedRoadmap, PlanningContext
from .problem import TransitionProblem
from .results import (
    RoadmapFigures,
    SearchFigures,
    SmoothingFigures,
    StopAndGoFigures,
    TransitionMethod,
    TransitionResult,
)
from .roadmap_path import RoadmapSearch, plan_on_roadmap, roadmap_assignment, search_on_roadmap
from .solvers import EcbsSolver, LacamSolver, MultiAgentSolver, SearchOutcome, choose_solver
from .straight import StraightAttempt, plan_straight

__all__ = [
    "AttachedRoadmap", "EcbsSolver", "LacamSolver", "MultiAgentSolver", "PlanningContext", "RoadmapFigures",
    "RoadmapSearch", "SearchFigures", "SearchOutcome", "SmoothingFigures", "StopAndGoFigures", "StraightAttempt",
    "TransitionMethod", "TransitionProblem", "TransitionResult", "choose_solver", "plan_on_roadmap",
    "plan_straight", "roadmap_assignment", "search_on_roadmap",
]
