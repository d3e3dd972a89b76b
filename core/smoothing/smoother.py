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
from ..obstacles import FleetFields
from ..progress import CancelToken, ProgressCallback, no_progress
from ..trajectory import FleetTrajectory
from ..verify import VerificationSpec, verify
from .corridors import PairPlanes, Tubes, drone_rows, initial_planes, refined_planes, step_tubes
from .limits import safe_step_durations, stop_at_vertices_points
from .qp import VOLUME_SLACK, DroneProblem, DroneSolution, solve_drone
from .terms import curve_costs, rest_order, trajectory_cost

#: Relative objective decrease below which the iteration stops.
IMPROVEMENT_TOLERANCE = 1e-3
#: Sub-pieces per piece when bounding derivatives for the time compression (tighter hulls).
BOUND_SUBDIVISIONS = 4
#: A re-timed round is kept only when it shortens the flight by at least this fraction.
RETIMING_TOLERANCE = 1e-2
#: Smoothing ends after a kept re-timed round that shortened the flight by less than this fraction:
#: the gains shrink from round to round (line swap 23, 12, 5.7, 1.2 %; courtyard 37, 2.5, 3.3 %),
#: and a round of a large crowd costs tens of seconds.
RETIMING_CONTINUE = 5e-2
#: Smallest factor by which one round may shorten a step.
RETIMING_STEP = 0.3
#: QP solvers in the order tried, in every round. Warm-started OSQP was once first after round 1;
#: on 100 drones through the two-gap wall Clarabel first made the three rounds' QPs 3.4× faster
#: (37 s against 126 s on 2 cores) for the same flight (77.0 s against 75.9 s), and needed no
#: hand-over to the second solver.
SOLVER_ORDER = ("Clarabel", "OSQP")
#: Steps of waiting before a drone's first move and after its last that stay QP variables.
WINDOW_MARGIN = 2


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
    #: Drones whose QP failed in this round and kept their curve of the round before.
    fell_back: tuple[str, ...] = ()
    #: Whether the round re-allocated the step durations.
    retimed: bool = False
    #: Drones whose QP the first solver failed and the second solved.
    second_solver: tuple[str, ...] = ()
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


def smooth_transition(where: str, positions: np.ndarray, clearance: ClearanceModel, fields: FleetFields | None,
                      limits: np.ndarray, spec: VerificationSpec,
                      options: SmoothingOptions, executor: Executor, *,
                      progress: ProgressCallback = no_progress, cancel: CancelToken | None = None
                      ) -> SmoothingOutcome:
    """Smooth the discrete plan ``positions`` ``(N, K + 1, 3)`` (steps in which somebody moves).

    ``limits`` ``(N, 3)`` are the planner's (margin applied) speed/acceleration limits; ``spec`` is
    what the verifier checks every iterate against.

    Round 1 solves every moving drone's QP at step durations where the stop-and-go curves are
    feasible; later rounds first re-allocate the step durations (:func:`allocate_steps`) while
    that shortens the flight by :data:`RETIMING_CONTINUE` or more; a re-timed round that fails
    is followed by rounds that only re-centre the planes. In a round at unchanged durations a
    drone whose QP fails keeps its curve of the round before — the corridors make any such mix
    safe (see :func:`_mixed`); a round at new durations is kept whole or not at all, since the
    earlier curves do not fit the new durations.
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
    tubes = step_tubes(starts, ends, clearance.semi_axes, fields)
    # Inside by more than the QP's volume slack: a control point that oversteps its tube within
    # the QP's feasibility tolerance still lies inside the volume.
    inside_volume = tubes.inside(spec.flight_volume[0] + VOLUME_SLACK, spec.flight_volume[1] - VOLUME_SLACK)
    planes = initial_planes(starts, ends, clearance)
    seconds["corridors"] += time.perf_counter() - t0
    previous = stop_and_go = stop_at_vertices_points(starts, ends, options.degree)
    windows = moving_windows(positions)
    moving = [i for i in range(len(positions)) if windows[i, 1] > windows[i, 0]]
    # Names the fixed QP parts (which depend on the step durations) in every worker process.
    token = current_token = secrets.token_hex(8)
    best_objective, best_duration, retiming = np.inf, np.inf, True
    notes: list[str] = []
    for it in range(options.iterations):
        cancel.check()
        progress("smoothing", it / options.iterations, f"{where}: iteration {it + 1} of {options.iterations}")
        new_durations = it > 0 and retiming
        durations = allocate_steps(outcome.pieces, qp_durations, limits) if new_durations else qp_durations
        # What stays when this round fails as a whole.
        kept_on_failure = "the step durations of the round before" if new_durations \
            else _kept(outcome.pieces is not None)
        t0 = time.perf_counter()
        # The solver's cost unit: the stop-and-go curve's cost at these durations, in every round
        # (scaling at each round's own warm start made round 2 hit the iteration cap).
        scales = curve_costs(stop_and_go, durations, options.weights)
        references = curve_costs(previous, durations, options.weights)
        problems = [_problem(i, windows[i], positions, durations, tubes, inside_volume, planes, spec, limits, options,
                             previous[i], float(scales[i]), f"{token}:{it}" if new_durations else current_token)
                    for i in moving]
        solutions: list[DroneSolution] = list(executor.map(solve_drone, problems))
        seconds["qp"] += time.perf_counter() - t0
        failed = [s for s in solutions if not s.ok]
        if failed and (new_durations or len(failed) == len(solutions)):
            notes.append(_failure_note(where, it, failed, windows, spec.drone_ids, kept_on_failure))
            if new_durations:
                retiming = False
                continue
            break
        pieces = _mixed(previous, solutions, windows)
        costs = references.copy()  # drones that kept their earlier curve count with its cost
        for s in solutions:
            if s.ok:
                costs[s.drone] = s.objective
        objective = float(costs.sum())
        if not new_durations and objective >= best_objective * (1.0 - IMPROVEMENT_TOLERANCE):
            outcome.history.append(_figures(it, objective, None, None, solutions, accepted=False,
                                            ids=spec.drone_ids))
            break
        timed = durations * _compression(pieces, durations, limits)
        t0 = time.perf_counter()
        report = verify(FleetTrajectory(np.r_[0.0, np.cumsum(timed)], pieces, spec.drone_ids), spec)
        seconds["verification"] += time.perf_counter() - t0
        shorter = float(timed.sum()) < best_duration * (1.0 - RETIMING_TOLERANCE)
        kept = report.ok and (shorter or not new_durations)
        outcome.history.append(_figures(it, objective, timed, pieces, solutions, report=report, accepted=kept,
                                        weights=options.weights, fell_back=[spec.drone_ids[s.drone] for s in failed],
                                        retimed=bool(new_durations), ids=spec.drone_ids))
        if failed:
            notes.append(_failure_note(where, it, failed, windows, spec.drone_ids, "their curves of the round before"))
        if not report.ok:
            v = report.violations[0]
            notes.append(f"{where}: smoothing iteration {it + 1} failed verification ({len(report.violations)} "
                         f"problems, first: {v.describe()}); kept {kept_on_failure}")
            if new_durations:
                retiming = False
                continue
            break
        if not kept:  # re-timing no longer shortens the flight
            break
        gain = 1.0 - float(timed.sum()) / best_duration
        outcome.durations, outcome.pieces = timed, pieces
        best_objective, best_duration, qp_durations = objective, float(timed.sum()), durations
        if new_durations and gain < RETIMING_CONTINUE:
            break
        current_token = f"{token}:{it}" if new_durations else current_token
        t0 = time.perf_counter()
        planes = refined_planes(planes, pieces)
        seconds["corridors"] += time.perf_counter() - t0
        previous = pieces
    outcome.note = "; ".join(notes) or None
    progress("smoothing", 1.0, f"{where}: done")
    return outcome


def moving_windows(positions: np.ndarray) -> np.ndarray:
    """``(N, 2)`` per drone the steps ``[first, last + 1)`` from :data:`WINDOW_MARGIN` steps before
    its first move to as many after its last in ``positions`` ``(N, K + 1, 3)`` (``[0, 0)`` for a
    drone that never moves).

    Only these steps are QP variables: before its window a drone waits at its start, after it at
    its goal, and its QP starts and ends at rest at the window's ends (the margin lets it start
    early and arrive late, as a whole-transition QP would). A resting drone meets every
    corridor row of those steps (its point lies on its side of each pair plane with the plane's
    margin, and in its own tube), so fixing it there keeps every argument of :func:`_mixed`. In a
    crowd most drones wait for much of a transition, and their QPs shrink accordingly.
    """
    moves = np.any(np.diff(positions, axis=1) != 0, axis=2)  # (N, K)
    first = np.argmax(moves, axis=1)
    last = moves.shape[1] - np.argmax(moves[:, ::-1], axis=1)
    has = moves.any(axis=1)
    first = np.maximum(first - WINDOW_MARGIN, 0)
    last = np.minimum(last + WINDOW_MARGIN, moves.shape[1])
    return np.stack([np.where(has, first, 0), np.where(has, last, 0)], axis=1)


def _mixed(previous: np.ndarray, solutions: list[DroneSolution], windows: np.ndarray) -> np.ndarray:
    """Each drone's new curve where its QP solved (over its :func:`moving_windows` steps), else its
    curve of the round before ``previous`` ``(N, K, n + 1, 3)`` (drones without a QP — those that
    never move — keep theirs).

    Why any such mix is collision-free: the round's pair planes were placed between the curves of
    the round before with a margin on each side (:func:`refined_planes`; in round 1 between the
    roadmap steps, on which the stop-and-go curves lie), so every earlier curve satisfies them, as
    does every new one (its QP's rows). Each pair with a plane at a step therefore has its two
    pieces on opposite sides, ≥ the pair clearance apart, whichever curve each drone keeps; pairs
    without a plane are farther apart than both tubes can reach; and every piece, old or new,
    stays in its obstacle tube. The step durations are the same for both kinds of curve, so the
    pieces are compared over the same time intervals.
    """
    pieces = previous.copy()
    for s in solutions:
        if s.ok:
            first, stop = windows[s.drone]
            pieces[s.drone, first:stop] = s.points
    return pieces


def allocate_steps(pieces: np.ndarray, durations: np.ndarray, limits: np.ndarray) -> np.ndarray:
    """New step durations ``(K,)`` s for the next QP round: each step scaled by ``ρ_k / α``, where
    ``ρ_k`` is the step's tightness — the factor by which its tightest drone's hull bounds of speed
    and acceleration (on :data:`BOUND_SUBDIVISIONS` sub-pieces) could be sped up to the limits — and
    ``α = max ρ_k`` the step that sets the uniform compression. Steps with room get shorter (to no
    less than :data:`RETIMING_STEP` of their length), the binding step keeps its length, so after
    the time compression the flight is shorter unless the new curves need more time (the smoother
    then keeps the durations before). A coordinate search on the durations that equalises the
    steps' tightness; durations are fleet-wide, so every corridor stays valid. (A square-root step,
    tried first, took one more round for the same gain on the courtyard sample.)"""
    rho = _step_tightness(pieces, durations, limits)
    ratio = np.clip(rho / rho.max(), RETIMING_STEP, 1.0)
    return durations * ratio


def _step_tightness(pieces: np.ndarray, durations: np.ndarray, limits: np.ndarray) -> np.ndarray:
    """Per step ``(K,)``: the largest over drones of (hull speed / limit, √(hull acceleration / limit))
    on :data:`BOUND_SUBDIVISIONS` sub-pieces; durations ``α h`` put the tightest at its limit."""
    parts = split_equal_parts(pieces, BOUND_SUBDIVISIONS)  # (N, K, P, n+1, 3)
    sub_h = (durations / BOUND_SUBDIVISIONS)[None, :, None]
    v = derivative_control_points(parts, sub_h)
    a = derivative_control_points(v, sub_h)
    vh = np.linalg.norm(v[..., :2], axis=-1).max(axis=(2, 3)) / limits[:, None, 0]
    vv = np.abs(v[..., 2]).max(axis=(2, 3)) / limits[:, None, 1]
    acc = np.sqrt(np.linalg.norm(a, axis=-1).max(axis=(2, 3)) / limits[:, None, 2])
    return np.max(np.stack([vh, vv, acc]), axis=(0, 1))


def _problem(i: int, window: np.ndarray, positions: np.ndarray, durations: np.ndarray, tubes: Tubes,
             inside_volume: np.ndarray, planes: PairPlanes, spec: VerificationSpec, limits: np.ndarray,
             options: SmoothingOptions, initial: np.ndarray, reference: float, token: str | None) -> DroneProblem:
    """Drone ``i``'s QP over its moving ``window`` of steps (see :func:`moving_windows`), Clarabel
    first in every round (:data:`SOLVER_ORDER`); ``inside_volume`` ``(N, K)``: the steps whose
    tube keeps every control point inside the flight volume (they get no volume rows)."""
    first, stop = int(window[0]), int(window[1])
    normals, offsets, steps, partners = drone_rows(i, tubes, planes)
    inside = (steps >= first) & (steps < stop)
    return DroneProblem(i, options.degree, durations[first:stop], positions[i, first], positions[i, stop],
                        normals[inside], offsets[inside], steps[inside] - first, partners[inside],
                        spec.flight_volume, limits[i], options.weights, initial[first:stop], reference or None,
                        None if token is None else (token, i), SOLVER_ORDER, inside_volume[i, first:stop])


def _compression(pieces: np.ndarray, durations: np.ndarray, limits: np.ndarray) -> float:
    """Uniform time factor ``α`` (new durations ``α h``) that brings the tightest hull bounds (on
    :data:`BOUND_SUBDIVISIONS` sub-pieces) of speed and acceleration up to ``limits`` ``(N, 3)``:
    speeds scale by ``1/α``, accelerations by ``1/α²``, the geometry and its timing across drones
    stay the same, so the corridors still hold."""
    alpha = float(_step_tightness(pieces, durations, limits).max())
    return alpha if alpha > 0 else 1.0


def _figures(it: int, objective: float, durations, pieces, solutions: list[DroneSolution], *, report=None,
             accepted: bool, weights: dict[str, float] | None = None, fell_back=(), retimed: bool = False,
             ids=()) -> SmoothingRound:
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
                          qp_seconds=float(sum(s.seconds for s in solutions)), fell_back=tuple(fell_back),
                          retimed=retimed,
                          second_solver=tuple(ids[s.drone] for s in solutions
                                              if s.ok and "retried_after" in s.facts), **timed)


def _failure_note(where: str, it: int, failed: list[DroneSolution], windows: np.ndarray, ids, kept: str) -> str:
    parts = []
    for s in failed[:3]:
        at = f" at step {windows[s.drone, 0] + s.culprit[0] + 1} ({s.culprit[1]})" if s.culprit else ""
        at = re.sub(r"drone #(\d+)", lambda m: f"drone {ids[int(m.group(1))]}", at)
        parts.append(f"drone {ids[s.drone]}{at}: {s.status}")
    more = f" and {len(failed) - 3} more" if len(failed) > 3 else ""
    return f"{where}: smoothing iteration {it + 1}: QP failed for " + "; ".join(parts) + more + f"; kept {kept}"


def _kept(have_iterate: bool) -> str:
    return "the last verified iterate" if have_iterate else "the stop-and-go plan"
