"""Iterated corridor smoothing of one roadmap transition.

discrete steps → corridors (pair planes + tubes + volume) → one QP per drone (in parallel through
any :class:`concurrent.futures.Executor`) → uniform time compression to the limits → independent
verification → planes re-centred on the new curves → … until the objective stops improving.
Only verified iterates are kept; a failure names the drone and step and keeps the last good result.
"""

from __future__ import annotations

import re
import secrets
import time
from concurrent.futures import Executor
from dataclasses import dataclass, field

import numpy as np

from ..bezier import derivative_control_points, split_equal_parts
from ..clearance import ClearanceModel
from ..objectives import TERM_ORDER
from ..obstacles import ClearanceField
from ..progress import CancelToken, ProgressCallback, no_progress
from ..trajectory import FleetTrajectory
from ..verify import VerificationSpec, verify
from .corridors import PairPlanes, Tubes, drone_rows, initial_planes, refined_planes, step_tubes
from .limits import safe_step_durations, stop_at_vertices_points
from .qp import DroneProblem, DroneSolution, solve_drone
from .terms import curve_costs, rest_order, trajectory_cost

#: Relative objective decrease below which the iteration stops.
IMPROVEMENT_TOLERANCE = 1e-3
#: Sub-pieces per piece when bounding derivatives for the time compression (tighter hulls).
BOUND_SUBDIVISIONS = 4


@dataclass(frozen=True)
class SmoothingOptions:
    """degree : Bézier degree; iterations : at most this many QP rounds; weights : objective."""

    degree: int
    iterations: int
    weights: dict[str, float]


@dataclass(frozen=True)
class SmoothingRound:
    """Figures of one QP round. The QP objective is in the solver's scaled units; the rest, for a
    round that produced curves: duration (s), objective and ∫‖snap‖² of the timed curves, and the
    verifier's verdict, peak acceleration (m/s²), peak snap (m/s⁴) and smallest separation ratio."""

    iteration: int
    qp_objective: float
    accepted: bool
    qp_iterations: int
    qp_seconds: float
    duration_s: float | None = None
    objective: float | None = None
    snap_integral: float | None = None
    verified: bool | None = None
    peak_acceleration: float | None = None
    peak_snap: float | None = None
    min_separation_ratio: float | None = None


@dataclass
class SmoothingOutcome:
    """Result for one transition: ``pieces`` ``(N, K, n + 1, 3)`` on ``durations`` ``(K,)`` s (None
    when no iterate was accepted), one :class:`SmoothingRound` per round, and ``note`` when something failed."""

    durations: np.ndarray | None
    pieces: np.ndarray | None
    history: list[SmoothingRound] = field(default_factory=list)
    note: str | None = None
    seconds: dict[str, float] = field(default_factory=dict)


def check_degree(options: SmoothingOptions) -> str | None:
    """Why ``options.degree`` is too low for the objective, or None."""
    k = rest_order(options.weights)
    needed = max(2 * k + 1, max(TERM_ORDER[t] for t, w in options.weights.items() if w > 0))
    if options.degree < needed:
        return f"the objective needs planner.degree ≥ {needed} (got {options.degree})"
    return None


def smooth_transition(where: str, positions: np.ndarray, clearance: ClearanceModel, envelope: np.ndarray,
                      field: ClearanceField | None, limits: np.ndarray, spec: VerificationSpec,
                      options: SmoothingOptions, executor: Executor, *,
                      progress: ProgressCallback = no_progress, cancel: CancelToken | None = None
                      ) -> SmoothingOutcome:
    """Smooth the discrete plan ``positions`` ``(N, K + 1, 3)`` (steps in which somebody moves).

    ``limits`` ``(N, 3)`` are the planner's (margin applied) speed/acceleration limits; ``spec`` is
    what the verifier checks every iterate against.
    """
    cancel = cancel or CancelToken()
    seconds = {"corridors": 0.0, "qp": 0.0, "verification": 0.0}
    outcome = SmoothingOutcome(None, None, seconds=seconds)
    problem = check_degree(options)
    if problem:
        outcome.note = f"{where}: smoothing skipped: {problem}"
        return outcome
    starts, ends = positions[:, :-1], positions[:, 1:]
    qp_durations = safe_step_durations(starts, ends, limits, options.degree)
    t0 = time.perf_counter()
    tubes = step_tubes(starts, ends, envelope, field)
    planes = initial_planes(starts, ends, clearance, envelope)
    seconds["corridors"] += time.perf_counter() - t0
    previous = stop_at_vertices_points(starts, ends, options.degree)
    token = secrets.token_hex(8)  # names this transition's fixed QP parts in every worker process
    references = curve_costs(previous, qp_durations, options.weights)
    best_objective = np.inf
    for it in range(options.iterations):
        cancel.check()
        progress("smoothing", it / options.iterations, f"{where}: iteration {it + 1} of {options.iterations}")
        t0 = time.perf_counter()
        problems = [_problem(i, positions, qp_durations, tubes, planes, spec, limits, options, previous[i],
                             float(references[i]), token) for i in range(len(positions))]
        solutions: list[DroneSolution] = list(executor.map(solve_drone, problems))
        seconds["qp"] += time.perf_counter() - t0
        failed = [s for s in solutions if not s.ok]
        if failed:
            outcome.note = _failure_note(where, it, failed, spec.drone_ids, outcome.pieces is not None)
            break
        pieces = np.stack([s.points for s in solutions])
        objective = float(sum(s.objective for s in solutions))
        if objective >= best_objective * (1.0 - IMPROVEMENT_TOLERANCE):
            outcome.history.append(_figures(it, objective, None, None, solutions, accepted=False))
            break
        durations = qp_durations * _compression(pieces, qp_durations, limits)
        t0 = time.perf_counter()
        report = verify(FleetTrajectory(np.r_[0.0, np.cumsum(durations)], pieces, spec.drone_ids), spec)
        seconds["verification"] += time.perf_counter() - t0
        outcome.history.append(_figures(it, objective, durations, pieces, solutions, report=report,
                                        accepted=report.ok, weights=options.weights))
        if not report.ok:
            v = report.violations[0]
            outcome.note = (f"{where}: smoothing iteration {it + 1} failed verification ({len(report.violations)} "
                            f"problems, first: {v.describe()}); kept {_kept(outcome.pieces is not None)}")
            break
        outcome.durations, outcome.pieces, best_objective = durations, pieces, objective
        t0 = time.perf_counter()
        planes = refined_planes(planes, pieces)
        seconds["corridors"] += time.perf_counter() - t0
        previous = pieces
    progress("smoothing", 1.0, f"{where}: done")
    return outcome


def _problem(i: int, positions: np.ndarray, durations: np.ndarray, tubes: Tubes, planes: PairPlanes,
             spec: VerificationSpec, limits: np.ndarray, options: SmoothingOptions, initial: np.ndarray,
             reference: float, token: str | None) -> DroneProblem:
    normals, offsets, steps, partners = drone_rows(i, tubes, planes)
    return DroneProblem(i, options.degree, durations, positions[i, 0], positions[i, -1], normals, offsets, steps,
                        partners, spec.flight_volume, limits[i], options.weights, initial, reference or None,
                        None if token is None else (token, i))


def _compression(pieces: np.ndarray, durations: np.ndarray, limits: np.ndarray) -> float:
    """Uniform time factor ``α`` (new durations ``α h``) that brings the tightest hull bounds (on
    :data:`BOUND_SUBDIVISIONS` sub-pieces) of speed and acceleration up to ``limits`` ``(N, 3)``:
    speeds scale by ``1/α``, accelerations by ``1/α²``, the geometry and its timing across drones
    stay the same, so the corridors still hold."""
    parts = split_equal_parts(pieces, BOUND_SUBDIVISIONS)  # (N, K, P, n+1, 3)
    sub_h = (durations / BOUND_SUBDIVISIONS)[None, :, None]
    v = derivative_control_points(parts, sub_h)
    a = derivative_control_points(v, sub_h)
    vh = np.linalg.norm(v[..., :2], axis=-1).max(axis=(1, 2, 3)) / limits[:, 0]
    vv = np.abs(v[..., 2]).max(axis=(1, 2, 3)) / limits[:, 1]
    acc = np.sqrt(np.linalg.norm(a, axis=-1).max(axis=(1, 2, 3)) / limits[:, 2])
    alpha = float(np.max(np.stack([vh, vv, acc])))
    return alpha if alpha > 0 else 1.0


def _figures(it: int, objective: float, durations, pieces, solutions: list[DroneSolution], *, report=None,
             accepted: bool, weights: dict[str, float] | None = None) -> SmoothingRound:
    timed = {}
    if durations is not None:
        timed = dict(duration_s=float(durations.sum()), objective=trajectory_cost(pieces, durations, weights),
                     snap_integral=trajectory_cost(pieces, durations, {"snap": 1.0}))
    if report is not None:
        timed.update(verified=report.ok, peak_acceleration=max(d.peak_acceleration for d in report.drones),
                     peak_snap=max(d.peak_snap for d in report.drones),
                     min_separation_ratio=min(d.min_separation_ratio for d in report.drones))
    return SmoothingRound(iteration=it + 1, qp_objective=objective, accepted=accepted,
                          qp_iterations=int(sum(s.iterations for s in solutions)),
                          qp_seconds=float(sum(s.seconds for s in solutions)), **timed)


def _failure_note(where: str, it: int, failed: list[DroneSolution], ids, have_iterate: bool) -> str:
    parts = []
    for s in failed[:3]:
        at = f" at step {s.culprit[0] + 1} ({s.culprit[1]})" if s.culprit else ""
        at = re.sub(r"drone #(\d+)", lambda m: f"drone {ids[int(m.group(1))]}", at)
        parts.append(f"drone {ids[s.drone]}{at}: {s.status}")
    more = f" and {len(failed) - 3} more" if len(failed) > 3 else ""
    return f"{where}: smoothing iteration {it + 1}: QP failed for " + "; ".join(parts) + more + \
        f"; kept {_kept(have_iterate)}"


def _kept(have_iterate: bool) -> str:
    return "the last verified iterate" if have_iterate else "the stop-and-go plan"
