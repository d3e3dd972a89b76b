"""Obstacle-free transitions: every drone on a straight line, all on one shared time profile."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..assignment import Assignment, assign
from ..bezier import elevate_degree
from ..progress import CancelToken, ProgressCallback, no_progress
from ..straight_line import shared_leg_points, synchronized_spacing_holds
from ..timing import shared_timing, trapezoid_lower_bound
from ..trajectory import FleetTrajectory
from ..verify import VerificationSpec
from ..verify.checker import check_separation
from .context import PlanningContext
from .problem import TransitionProblem
from .results import TransitionMethod, TransitionResult
from .timing import requested_duration


@dataclass(frozen=True, eq=False)
class StraightAttempt:
    """The straight-line assignment, the trapezoidal lower bound (s) of its longest leg, and the
    result when straight lines are clear of obstacles and of each other (else None)."""

    assignment: Assignment
    lower_bound: float
    result: TransitionResult | None


def plan_straight(problem: TransitionProblem, context: PlanningContext, *, progress: ProgressCallback = no_progress,
                  cancel: CancelToken | None = None) -> StraightAttempt:
    """Assign goals (minimum sum of squared scaled distances, or labeled/grouped), then fly
    straight legs on the shared profile if they miss every obstacle and keep every pair apart
    (proven by the synchronized-spacing condition, or checked by the verifier on that piece)."""
    clearance, settings, fleet = context.clearance, context.settings, context.scene.fleet
    chosen = assign(problem.mode, problem.starts, problem.goal_points, clearance.pair_envelope, problem.start_groups,
                    problem.goal_groups, progress=progress, cancel=cancel)
    goals = problem.goal_points[chosen.goal_of]
    legs = goals - problem.starts
    bound = trapezoid_lower_bound(legs, fleet.limits)
    timing = shared_timing(legs, context.limits, problem.profile, settings.degree)
    needed = timing.duration
    guarantee = clearance.homogeneous and problem.mode == "unlabeled" \
        and synchronized_spacing_holds(problem.starts, goals, clearance.pair_envelope)
    if not (context.legs_clear(problem.starts, goals)
            and (guarantee or _separated(problem.starts, goals, settings.degree, context.spec))):
        return StraightAttempt(chosen, bound, None)
    slowest = timing.binding
    duration = requested_duration(
        problem.where, problem.duration, needed, f"the limits (at {settings.limit_margin:.0%}) need",
        f" (binding leg: drone {fleet.ids[slowest]}, {np.linalg.norm(legs[slowest]):.2f} m)")
    return StraightAttempt(chosen, bound, TransitionResult(
        problem, TransitionMethod.STRAIGHT, chosen, timing.durations * (duration / needed),
        shared_leg_points(problem.starts, goals, timing), duration, needed, bound, guarantee))


def _separated(starts: np.ndarray, goals: np.ndarray, degree: int, spec: VerificationSpec) -> bool:
    """Whether straight legs ``starts`` → ``goals`` ``(N, 3)`` keep every pair separated: the
    verifier's continuous-time separation check on one constant-speed piece. On a shared path
    parameter the relative positions depend on ``s`` only, never on how ``s`` is timed, so this
    answers for every shared law."""
    line = elevate_degree(np.stack([starts, goals], axis=1), degree)
    piece = FleetTrajectory(np.array([0.0, 1.0]), line[:, None], spec.drone_ids, ("candidate",))
    violations, *_ = check_separation(piece, spec)
    return not violations
