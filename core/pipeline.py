"""The planning pipeline shared by the CLI and the GUI.

scene → per transition: goal assignment → straight lines if they are clear, else roadmap search
and corridor smoothing (per-drone QPs through an executor) → timing → trajectories → independent
verification.
"""

from __future__ import annotations

import time
from concurrent.futures import Executor
from dataclasses import dataclass, field, replace
from pathlib import Path

import numpy as np
from pydantic import ValidationError

from .assignment import Assignment, assign
from .errors import PlanningError, SceneError
from .executors import plan_executor
from .obstacle_planning import ObstaclePlanner
from .progress import CancelToken, ProgressCallback, no_progress
from .scene.model import PlannerSettings, Scene
from .straight_line import hold_points, straight_leg_points, synchronized_spacing_holds
from .timing import MIN_TRANSITION_DURATION, PROFILES, minimum_duration, trapezoid_lower_bound
from .trajectory import FleetTrajectory
from .verify import VerificationReport, VerificationSpec, spec_from_scene, verify
from .verify.checker import check_separation


@dataclass(frozen=True)
class TransitionPlan:
    """What was decided for one timeline transition (durations in seconds)."""

    index: int
    source: str
    target: str
    mode: str
    assignment: Assignment
    duration: float
    minimum_duration: float
    lower_bound: float
    method: str
    spacing_guarantee: bool
    search: dict = field(default_factory=dict)

    @property
    def makespan_ratio(self) -> float:
        """Duration over the trapezoidal-profile lower bound of the longest leg (≥ 1)."""
        return self.duration / self.lower_bound if self.lower_bound > 0 else 1.0


@dataclass
class PlanResult:
    scene: Scene
    settings: PlannerSettings
    trajectory: FleetTrajectory
    transitions: list[TransitionPlan]
    report: VerificationReport
    stage_seconds: dict[str, float] = field(default_factory=dict)
    stats: dict = field(default_factory=dict)
    base_dir: Path = Path(".")

    @property
    def verified(self) -> bool:
        return self.report.ok


def plan(scene: Scene, *, settings: PlannerSettings | None = None, base_dir: str | Path | None = None,
         use_cache: bool = True, progress: ProgressCallback = no_progress,
         cancel: CancelToken | None = None, executor: Executor | None = None, workers: int | None = None,
         source: str = "scene") -> PlanResult:
    """Plan and verify every transition of ``scene``'s timeline.

    ``base_dir`` is the folder mesh paths are relative to (the scene file's folder); ``use_cache``
    reuses roadmaps stored on disk. Per-drone smoothing QPs run on ``executor`` (any
    :class:`concurrent.futures.Executor`), else on a process pool of ``workers`` (see
    :func:`core.executors.plan_executor`). Raises :class:`PlanningError` (or :class:`SceneError`) naming
    the transition and drones when no plan can be made. A plan that fails verification is returned
    with ``report.ok`` False; callers decide what to do. ``source`` names the scene file in messages.
    """
    with plan_executor(executor, workers) as pool:
        return _plan(scene, settings or scene.planner, Path(base_dir or "."), use_cache, progress,
                     cancel or CancelToken(), pool, source)


def _plan(scene: Scene, settings: PlannerSettings, base_dir: Path, use_cache: bool, progress: ProgressCallback,
          cancel: CancelToken, executor: Executor, source: str) -> PlanResult:
    profile = PROFILES[settings.profile]
    if profile.degree > settings.degree:
        raise PlanningError(f"planner.degree {settings.degree} is too low for profile {profile.name} "
                            f"(needs at least {profile.degree})")
    limits = scene.fleet.limits * settings.limit_margin
    clearance = scene.fleet.clearance
    obstacles = ObstaclePlanner(scene, settings, base_dir, executor, use_cache=use_cache, progress=progress,
                                cancel=cancel, source=source)
    spec = spec_from_scene(scene, meshes=obstacles.meshes)  # meshes read (and checked) once, before planning
    timings: dict[str, float] = {"assignment": 0.0, "transitions": 0.0}

    start = scene.formation(scene.timeline.start)
    positions = start.positions.copy()
    occupied = np.arange(len(positions))  # formation point index held by each drone
    current = start
    durations, pieces, labels, transitions = [], [], [], []
    if scene.timeline.start_hold > 0:
        durations.append(scene.timeline.start_hold)
        pieces.append(hold_points(positions, settings.degree)[:, None])
        labels.append(f"hold {start.name}")
    n_tr = len(scene.timeline.transitions)
    for k, tr in enumerate(scene.timeline.transitions):
        cancel.check()
        progress("assignment", k / n_tr, f"{current.name} → {tr.to}")
        target = scene.formation(tr.to)
        where = f"timeline.transitions[{k}] ({current.name} → {target.name})"
        start_groups = None if current.groups is None else np.asarray(current.groups)[occupied]
        t0 = time.perf_counter()
        chosen = assign(tr.assignment, positions, target.positions, clearance.pair_envelope, start_groups,
                        target.groups, progress=progress, cancel=cancel)
        timings["assignment"] += time.perf_counter() - t0
        t0 = time.perf_counter()
        goals = target.positions[chosen.goal_of]
        legs = goals - positions
        bound = trapezoid_lower_bound(legs, scene.fleet.limits)
        per_drone = minimum_duration(legs, limits, profile)
        needed = max(float(per_drone.max()), MIN_TRANSITION_DURATION)
        leg_points = straight_leg_points(positions, goals, profile, settings.degree)
        guarantee = clearance.homogeneous and tr.assignment == "unlabeled" \
            and synchronized_spacing_holds(positions, goals, clearance.pair_envelope)
        # On a shared time profile the relative motion does not depend on the duration.
        if obstacles.legs_clear(positions, goals) and (guarantee or _separated(leg_points, needed, spec)):
            slowest = int(np.argmax(per_drone))
            duration = _requested_duration(
                where, tr.duration, needed, f"the limits (at {settings.limit_margin:.0%}) need",
                f" (longest leg: drone {scene.fleet.ids[slowest]}, {np.linalg.norm(legs[slowest]):.2f} m)")
            step_durations, step_pieces = np.array([duration]), leg_points[:, None]
            method, figures = "straight lines, shared time profile", {}
        else:
            progress("search", 0.0, f"{where}: straight lines blocked, searching the roadmap")
            chosen, step_durations, step_pieces, figures = obstacles.plan_transition(
                where, current.name, occupied, target.name, tr.assignment, start_groups, target.groups,
                profile, limits, spec)
            goals = target.positions[chosen.goal_of]
            needed = max(float(step_durations.sum()), MIN_TRANSITION_DURATION)
            duration = _requested_duration(where, tr.duration, needed, "the roadmap plan around the obstacles needs")
            step_durations = step_durations * (duration / needed)  # uniform: keeps the drones in step
            method, guarantee = f"roadmap search (ECBS, w = {settings.suboptimality:g}), " + (
                "smoothed in safe corridors" if figures["smoothed"] else "stop at every waypoint"), False
        durations += list(step_durations)
        pieces.append(step_pieces)
        labels += [f"{current.name} → {target.name}"] * len(step_durations)
        transitions.append(TransitionPlan(
            index=k, source=current.name, target=target.name, mode=tr.assignment, assignment=chosen,
            duration=duration, minimum_duration=needed, lower_bound=bound, method=method,
            spacing_guarantee=guarantee, search=figures,
        ))
        if tr.hold > 0:
            durations.append(tr.hold)
            pieces.append(hold_points(goals, settings.degree)[:, None])
            labels.append(f"hold {target.name}")
        positions, occupied, current = goals, chosen.goal_of, target
        timings["transitions"] += time.perf_counter() - t0  # includes any search
    trajectory = FleetTrajectory(
        breaks=np.r_[0.0, np.cumsum(durations)], control_points=np.concatenate(pieces, axis=1),
        drone_ids=scene.fleet.ids, segment_labels=tuple(labels),
    )
    t0 = time.perf_counter()
    report = verify(trajectory, spec, progress=progress, cancel=cancel)
    timings["verification"] = time.perf_counter() - t0
    timings.update(obstacles.seconds)
    return PlanResult(scene, settings, trajectory, transitions, report, timings, obstacles.stats, base_dir)


def _separated(leg_points: np.ndarray, duration: float, spec: VerificationSpec) -> bool:
    """Whether one straight-line piece ``(N, n + 1, 3)`` of ``duration`` s keeps every pair separated
    (the verifier's continuous-time separation check on that piece alone)."""
    piece = FleetTrajectory(np.array([0.0, duration]), leg_points[:, None], spec.drone_ids, ("candidate",))
    violations, *_ = check_separation(piece, spec)
    return not violations


def _requested_duration(where: str, requested, needed: float, needs: str, detail: str = "") -> float:
    """A transition's duration in seconds: ``needed`` for ``"fastest"``, else the request. A request
    below ``needed`` raises :class:`PlanningError` saying where, what ``needs`` how long, and ``detail``."""
    if requested == "fastest":
        return needed
    if requested < needed:
        raise PlanningError(f"{where}: duration {requested:g} s is too short; {needs} at least {needed:.2f} s{detail}")
    return float(requested)


def with_settings(scene: Scene, **changes) -> PlannerSettings:
    """``scene``'s planner settings with ``changes`` applied (e.g. ``degree=9``; None keeps a value).
    Raises :class:`SceneError` naming each rejected option."""
    try:
        return replace(scene.planner, **{k: v for k, v in changes.items() if v is not None})
    except ValidationError as exc:
        raise SceneError([(f"planner option {'.'.join(map(str, e['loc']))}", e["msg"]) for e in exc.errors()]) from None
