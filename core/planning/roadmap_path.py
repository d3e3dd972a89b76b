"""Transitions whose straight lines are blocked: assignment by roadmap path length, multi-agent
search (which may exchange goals within a group), an independent discrete check, string pulling
(checked again), the stop-and-go baseline, then corridor smoothing."""

from __future__ import annotations

from concurrent.futures import Executor
from dataclasses import dataclass

import numpy as np
from scipy.sparse import csgraph

from ..assignment import Assignment, assign_by_cost
from ..errors import PlanningError
from ..executors import InlineExecutor
from ..objectives import parse_objective
from ..progress import CancelToken, ProgressCallback, no_progress
from ..roadmap.graph import Roadmap
from ..scene.checks import format_xyz
from ..smoothing.smoother import SmoothingOptions, smooth_transition
from ..smoothing.terms import trajectory_cost
from ..straight_line import straight_leg_points
from ..timing import MIN_TRANSITION_DURATION, Profile, minimum_duration, step_profile, trapezoid_lower_bound
from ..trajectory import FleetTrajectory
from ..verify.checker import sampled_peaks
from ..verify.discrete import check_discrete_plan
from .context import PlanningContext
from .problem import TransitionProblem
from .results import SmoothingFigures, StopAndGoFigures, TransitionMethod, TransitionResult
from .solvers import MultiAgentSolver, SearchOutcome, choose_solver
from .string_pulling import pull_strings
from .timing import requested_duration


def roadmap_assignment(problem: TransitionProblem, context: PlanningContext,
                       progress: ProgressCallback = no_progress, cancel: CancelToken | None = None) -> Assignment:
    """Goal point per drone: labeled keeps the order; unlabeled and grouped minimise the sum of
    roadmap path lengths (Hungarian method). Raises :class:`PlanningError` naming the drones and
    points no collision-free path connects. Each drone's costs are on its own layer of the roadmap."""
    attached = context.roadmap(progress, cancel)
    roadmap = attached.roadmap
    starts = attached.drone_vertices(problem.source, problem.occupied)
    columns = attached.goal_columns(problem.target)  # (N, P) each goal point in each drone's layer
    drones = np.arange(len(starts))
    if problem.mode == "labeled":
        chosen = Assignment(drones, float("nan"), "labeled", 0.0)
    else:
        cost = np.take_along_axis(roadmap.path_lengths(starts), columns, axis=1)
        grouped = problem.mode == "grouped"
        try:
            chosen = assign_by_cost(cost, problem.start_groups if grouped else None,
                                    problem.goal_groups if grouped else None)
        except ValueError:
            nearest = np.argmin(np.where(np.isfinite(cost), cost, np.inf), axis=1)
            _check_reachable(problem, context, roadmap, starts, columns[drones, nearest], nearest)
            cut_off = np.nonzero(~np.isfinite(cost).any(axis=0))[0]
            points = ", ".join(f"{_point(problem, context, k)} at "
                               f"{format_xyz(roadmap.vertices[columns[0, k]], '.2f')}" for k in cut_off[:5])
            raise PlanningError(
                f"{problem.where}: no assignment lets every drone reach a goal on the roadmap"
                + (f"; no drone can reach {points}" + (f" and {len(cut_off) - 5} more" if len(cut_off) > 5 else "")
                   + " (boxed in by obstacles or keep-out boxes?)" if len(cut_off) else "")) from None
    _check_reachable(problem, context, roadmap, starts, columns[drones, chosen.goal_of], chosen.goal_of)
    return chosen


@dataclass(frozen=True, eq=False)
class RoadmapSearch:
    """The multi-agent search's paths on the roadmap (``found``) and the assignment they fly:
    the roadmap assignment, or where the search exchanged goals within groups, the one it ended
    with (which fixes the next transition's starts)."""

    assignment: Assignment
    found: SearchOutcome


def search_on_roadmap(problem: TransitionProblem, assignment: Assignment, context: PlanningContext,
                      solver: MultiAgentSolver | None, *, progress: ProgressCallback = no_progress,
                      cancel: CancelToken | None = None) -> RoadmapSearch:
    """Search conflict-free roadmap paths to the goals of ``assignment``; unlabeled drones (one
    group) and grouped ones (their groups) may end on each other's goals where the solver
    exchanges them. ``solver`` None: :func:`~.solvers.choose_solver`."""
    attached = context.roadmap(progress, cancel)
    roadmap = attached.roadmap
    starts = attached.drone_vertices(problem.source, problem.occupied)
    goals = attached.goal_columns(problem.target)[np.arange(len(starts)), assignment.goal_of]
    groups = None if problem.mode == "labeled" else _exchange_groups(problem, context.clearance.kind_of)
    settings = context.settings
    solver = solver or choose_solver(settings, len(starts))
    found = solver.solve(roadmap, starts, goals, context.scene.fleet.ids, groups=groups,
                         time_limit=settings.search_time_limit, progress=progress, cancel=cancel)
    exchanged = found.goals != goals
    if not exchanged.any():
        return RoadmapSearch(assignment, found)
    goal_of = attached.point_indices(problem.target, found.goals)
    method = f"{assignment.method}, then {int(exchanged.sum())} goals exchanged in the search"
    return RoadmapSearch(Assignment(goal_of, float("nan"), method, float("nan")), found)


def _exchange_groups(problem: TransitionProblem, shape_of: np.ndarray) -> np.ndarray:
    """``(N,)`` labels of the drones that may take each other's goals in the search: one group
    (unlabeled) or the transition's groups, split by drone shape (each shape flies its own layer
    of the roadmap, so a goal of another layer is out of reach)."""
    groups = np.zeros(len(shape_of), dtype=np.int64) if problem.mode == "unlabeled" else \
        np.unique(np.asarray(problem.start_groups), return_inverse=True)[1].ravel()
    return groups * (int(shape_of.max()) + 1) + shape_of


def plan_on_roadmap(problem: TransitionProblem, search: RoadmapSearch, lower_bound: float, context: PlanningContext,
                    executor: Executor | None = None, *, progress: ProgressCallback = no_progress,
                    cancel: CancelToken | None = None) -> TransitionResult:
    """Fly ``problem``'s roadmap ``search``: discrete check, string pulling
    (:func:`~.string_pulling.pull_strings`, checked again), stop-and-go pieces, then smoothing
    (per-drone QPs on ``executor``, inline when None) unless the settings turn it off.
    ``lower_bound`` (s) is the straight-line bound reported beside it."""
    attached = context.roadmap(progress, cancel)
    roadmap = attached.roadmap
    starts = attached.drone_vertices(problem.source, problem.occupied)
    found, assignment = search.found, search.assignment
    ids, settings = context.scene.fleet.ids, context.settings
    positions = _step_positions(roadmap, found.paths)
    _check_steps(problem, positions, context, "discrete plan")
    positions = _moving_steps(positions)
    roadmap_length = _fleet_path_length(positions)
    positions = _moving_steps(pull_strings(positions, context.clearance, context.fields))  # a dodge may vanish
    _check_steps(problem, positions, context, "straightened plan")
    durations, pieces = _stop_and_go(positions, step_profile(problem.profile, settings.degree), settings.degree,
                                     context.limits)
    baseline = _baseline_figures(durations, pieces, ids, roadmap_length, _fleet_path_length(positions))
    method, smoothing = TransitionMethod.STOP_AND_GO, None
    if settings.smoothing and len(durations):
        options = SmoothingOptions(settings.degree, settings.smoothing_iterations, parse_objective(settings.objective))
        outcome = smooth_transition(problem.where, positions, context.clearance, context.fields,
                                    context.limits, context.spec, options,
                                    executor or InlineExecutor(), progress=progress, cancel=cancel)
        note = outcome.note
        if outcome.pieces is not None and outcome.durations.sum() <= durations.sum():
            method, durations, pieces = TransitionMethod.SMOOTHED, outcome.durations, outcome.pieces
        elif outcome.pieces is not None:  # drones that kept stop-and-go curves made it slower
            note = (f"{note}; " if note else "") + (
                f"{problem.where}: the smoothed plan took {outcome.durations.sum():.2f} s, longer than stopping at "
                f"every waypoint ({durations.sum():.2f} s); kept the stop-and-go plan")
        smoothing = SmoothingFigures(tuple(outcome.history), note, outcome.seconds)
    needed = max(float(durations.sum()), MIN_TRANSITION_DURATION)
    duration = requested_duration(problem.where, problem.duration, needed,
                                  "the roadmap plan around the obstacles needs")
    return TransitionResult(problem, method, assignment, durations * (duration / needed), pieces, duration, needed,
                            lower_bound, False, found.figures, baseline, smoothing,
                            free_space_bound(roadmap, starts, found.goals, context.scene.fleet.limits))


def free_space_bound(roadmap: Roadmap, starts: np.ndarray, goals: np.ndarray, limits: np.ndarray) -> float:
    """The longest per-drone time (s) to fly its shortest roadmap path from vertex ``starts[i]`` to
    ``goals[i]`` ``(N,)`` alone, from rest to rest at the full ``limits`` ``(N, 3)``: a trapezoidal
    speed profile over the path length at the speed limit averaged along the path (each edge at
    the horizontal/vertical limit of its direction), without slowing for turns. It ignores the
    other drones, so "× this bound" says how much the fleet costs; it is not a strict lower bound,
    since the roadmap's shortest path is only near the shortest obstacle-free one."""
    sources, index = np.unique(starts, return_inverse=True)
    _, predecessors = csgraph.dijkstra(roadmap.length_matrix, directed=False, indices=sources,
                                       return_predecessors=True)
    worst = 0.0
    for i, (row, goal) in enumerate(zip(index, goals, strict=True)):
        chain = [int(goal)]
        while chain[-1] != sources[row]:
            chain.append(int(predecessors[row, chain[-1]]))
        legs = np.diff(roadmap.vertices[chain[::-1]], axis=0)
        if not len(legs):
            continue
        length = np.linalg.norm(legs, axis=1)
        with np.errstate(divide="ignore", invalid="ignore"):
            speed = np.minimum(limits[i, 0] * length / np.linalg.norm(legs[:, :2], axis=1),
                               limits[i, 1] * length / np.abs(legs[:, 2]))
        total = float(length.sum())
        v = total / float(np.sum(length / speed))
        along = np.array([[total, 0.0, 0.0]])
        worst = max(worst, trapezoid_lower_bound(along, np.array([[v, v, limits[i, 2]]])))
    return worst


def _point(problem: TransitionProblem, context: PlanningContext, k: int) -> str:
    index = [f.name for f in context.scene.formations].index(problem.target)
    return f"formations[{index}] ({problem.target!r}).points[{k}]"


def _check_reachable(problem: TransitionProblem, context: PlanningContext, roadmap: Roadmap, starts: np.ndarray,
                     goals: np.ndarray, goal_index: np.ndarray) -> None:
    label = roadmap.component_labels()
    stuck = np.nonzero(label[starts] != label[goals])[0]
    if len(stuck) == 0:
        return
    ids = context.scene.fleet.ids
    names = ", ".join(f"drone {ids[k]} → {_point(problem, context, goal_index[k])} at "
                      f"{format_xyz(roadmap.vertices[goals[k]], '.2f')}" for k in stuck[:5])
    more = f" and {len(stuck) - 5} more" if len(stuck) > 5 else ""
    raise PlanningError(f"{problem.where}: unreachable goal: no collision-free roadmap path for {names}{more}. The "
                        "passage may be narrower than the clearance; try more roadmap samples or a finer "
                        "planner.obstacle_pitch.")


def _step_positions(roadmap: Roadmap, paths: list[tuple[int, ...]]) -> np.ndarray:
    """``(N, K + 1, 3)`` vertex positions per step, each path padded by waiting at its goal."""
    steps = max(len(p) for p in paths)
    padded = np.array([list(p) + [p[-1]] * (steps - len(p)) for p in paths])
    return roadmap.vertices[padded]


def _moving_steps(positions: np.ndarray) -> np.ndarray:
    """``positions`` ``(N, K + 1, 3)`` without the steps in which nobody moves."""
    moves = np.any(np.abs(np.diff(positions, axis=1)) > 0, axis=(0, 2))
    return positions[:, np.r_[True, moves]]


def _check_steps(problem: TransitionProblem, positions: np.ndarray, context: PlanningContext, what: str) -> None:
    """Raise :class:`PlanningError` when the independent discrete check finds two steps of
    ``positions`` ``(N, K + 1, 3)`` that touch (a planner bug: ``what`` names the stage)."""
    conflicts = check_discrete_plan(positions, context.clearance)
    if conflicts:
        c, ids = conflicts[0], context.scene.fleet.ids
        raise PlanningError(f"{problem.where}: the {what} check found {len(conflicts)} conflicts (first: drones "
                            f"{ids[c.a]} and {ids[c.b]} at step {c.step}); this is a planner bug, please report")


def _fleet_path_length(positions: np.ndarray) -> float:
    """Summed length (m) of every drone's path through ``positions`` ``(N, K + 1, 3)``."""
    return float(np.linalg.norm(np.diff(positions, axis=1), axis=2).sum())


def _baseline_figures(durations: np.ndarray, pieces: np.ndarray, ids, roadmap_length: float,
                      flown_length: float) -> StopAndGoFigures:
    """Duration, sampled peak acceleration and ∫‖snap‖² of stop-and-go pieces, with the fleet's
    path lengths (m) on the roadmap and after string pulling."""
    if not len(durations):
        return StopAndGoFigures(0.0, 0.0, 0.0, roadmap_length, flown_length)
    traj = FleetTrajectory(np.r_[0.0, np.cumsum(durations)], pieces, ids)
    return StopAndGoFigures(float(durations.sum()), float(sampled_peaks(traj)["acceleration"].max()),
                            trajectory_cost(pieces, durations, {"snap": 1.0}), roadmap_length, flown_length)


def _stop_and_go(positions: np.ndarray, profile: Profile, degree: int, limits: np.ndarray
                 ) -> tuple[np.ndarray, np.ndarray]:
    """Rest-to-rest pieces between consecutive steps ``(N, K + 1, 3)`` (somebody moves in each):
    durations ``(K,)`` and control points ``(N, K, n + 1, 3)``."""
    durations, pieces = [], []
    for k in range(positions.shape[1] - 1):
        a, b = positions[:, k], positions[:, k + 1]
        durations.append(max(float(minimum_duration(b - a, limits, profile).max()), MIN_TRANSITION_DURATION))
        pieces.append(straight_leg_points(a, b, profile, degree))
    if not pieces:
        return np.zeros(0), np.zeros((positions.shape[0], 0, degree + 1, 3))
    return np.asarray(durations), np.stack(pieces, axis=1)
