"""Typed results of planning one transition (what plan.json, report.txt and the designer show).

The mapping of these records to plan.json is in :mod:`core.export.plan_records`; nothing else
writes them to a file, so renaming a field here is a code change, not a format change.
"""

from __future__ import annotations

from dataclasses import dataclass
from enum import Enum

import numpy as np

from ..assignment import Assignment
from ..smoothing.smoother import SmoothingRound
from .problem import TransitionProblem


class TransitionMethod(Enum):
    """How a transition was flown; the value is the wording reports use."""

    STRAIGHT = "straight lines, shared time profile"
    STOP_AND_GO = "roadmap search, stop at every waypoint"
    SMOOTHED = "roadmap search, smoothed in safe corridors"

    @property
    def used_roadmap(self) -> bool:
        return self is not TransitionMethod.STRAIGHT


@dataclass(frozen=True)
class SearchFigures:
    """The multi-agent search on the roadmap: which ``solver`` ran, why (``reason``), and what it
    cost. ``w``: the sum-of-costs bound factor (None for a solver without one); ``steps``: the
    plan's makespan in steps; ``refinement``: what an anytime solver did after its first plan."""

    solver: str
    reason: str
    nodes_expanded: int
    nodes_generated: int
    low_level_expansions: int
    sum_of_costs: int
    cost_lower_bound: int
    w: float | None
    steps: int
    seconds: float
    refinement: str | None = None


@dataclass(frozen=True)
class StopAndGoFigures:
    """The stop-at-every-waypoint baseline: duration (s), sampled peak acceleration (m/s²), ∫‖snap‖²
    (m²/s⁷); and the fleet's summed path length (m) on the roadmap and after string pulling (what
    the baseline and the smoothing fly)."""

    duration_s: float
    peak_acceleration: float
    snap_integral: float
    roadmap_length_m: float
    flown_length_m: float


@dataclass(frozen=True)
class SmoothingFigures:
    """Every smoothing round, the note when something failed, and seconds per smoothing stage."""

    rounds: tuple[SmoothingRound, ...]
    note: str | None
    seconds: dict[str, float]


@dataclass(frozen=True, eq=False)
class TransitionResult:
    """One planned transition.

    durations : (K,) s of its pieces; pieces : (N, K, n + 1, 3) m Bézier control points;
    duration : s (their sum); minimum_duration : s the plan needs; lower_bound : s, the
    trapezoidal-profile bound of the longest straight leg; assignment : goal point per drone;
    free_space_bound : s, for roadmap transitions the longest drone's shortest obstacle-free
    (roadmap) path flown alone at the limits (see :func:`~.roadmap_path.free_space_bound`).
    """

    problem: TransitionProblem
    method: TransitionMethod
    assignment: Assignment
    durations: np.ndarray
    pieces: np.ndarray
    duration: float
    minimum_duration: float
    lower_bound: float
    spacing_guarantee: bool
    search: SearchFigures | None = None
    stop_and_go: StopAndGoFigures | None = None
    smoothing: SmoothingFigures | None = None
    free_space_bound: float | None = None

    @property
    def makespan_ratio(self) -> float:
        """Duration over the trapezoidal-profile lower bound of the longest leg (≥ 1)."""
        return self.duration / self.lower_bound if self.lower_bound > 0 else 1.0

    @property
    def free_space_ratio(self) -> float | None:
        """Duration over :attr:`free_space_bound` (None for straight-line transitions)."""
        if self.free_space_bound is None:
            return None
        return self.duration / self.free_space_bound if self.free_space_bound > 0 else 1.0

    @property
    def ends(self) -> np.ndarray:
        """``(N, 3)`` m: where each drone arrives."""
        return self.problem.goal_points[self.assignment.goal_of]

    @property
    def method_text(self) -> str:
        """The method as reports word it (with the search's suboptimality factor)."""
        if self.search is None:
            return self.method.value
        bound = "" if self.search.w is None else f", w = {self.search.w:g}"
        return self.method.value.replace("roadmap search", f"roadmap search ({self.search.solver}{bound})")


@dataclass(frozen=True)
class RoadmapFigures:
    """The roadmap a plan used: vertices, edges, conflicting action pairs (over all layers),
    whether it was cached, and its layers (one per drone shape)."""

    vertices: int
    edges: int
    conflicts: int
    cached: bool
    layers: int = 1
