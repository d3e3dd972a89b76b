"""The planning pipeline shared by the CLI and the GUI.

scene → per transition: goal assignment → timing → trajectories → independent verification.
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field, replace

import numpy as np

from .assignment import Assignment, assign
from .clearance import ClearanceModel
from .errors import PlanningError
from .progress import CancelToken, ProgressCallback, no_progress
from .scene.model import PlannerSettings, Scene
from .straight_line import hold_points, straight_leg_points, synchronized_spacing_holds
from .timing import MIN_TRANSITION_DURATION, PROFILES, minimum_duration, trapezoid_lower_bound
from .trajectory import FleetTrajectory
from .verify import VerificationReport, spec_from_scene, verify


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

    @property
    def verified(self) -> bool:
        return self.report.ok


def plan(scene: Scene, *, settings: PlannerSettings | None = None, progress: ProgressCallback = no_progress,
         cancel: CancelToken | None = None) -> PlanResult:
    """Plan and verify every transition of ``scene``'s timeline.

    Raises :class:`PlanningError` when a fixed duration is shorter than the limits allow. A plan
    that fails verification is returned with ``report.ok`` False; callers decide what to do.
    """
    cancel = cancel or CancelToken()
    settings = settings or scene.planner
    if scene.site.meshes:
        # The straight-line planner and the verifier do not model meshes yet: planning would
        # fly through them and call the plan safe. Refuse instead.
        names = ", ".join(repr(m.name) for m in scene.site.meshes)
        raise PlanningError(f"site.meshes ({names}): obstacle meshes cannot be planned around or verified yet; "
                            "remove them from the scene (keep-out boxes are supported) until the obstacle "
                            "planner is available")
    profile = PROFILES[settings.profile]
    if profile.degree > settings.degree:
        raise PlanningError(f"planner.degree {settings.degree} is too low for profile {profile.name} "
                            f"(needs at least {profile.degree})")
    limits = scene.fleet.limits * settings.limit_margin
    clearance = ClearanceModel(scene.fleet.semi_axes)
    scale, homogeneous = clearance.bound_radii, clearance.homogeneous
    timings: dict[str, float] = {"assignment": 0.0, "trajectories": 0.0}

    start = scene.formation(scene.timeline.start)
    positions = start.positions.copy()
    occupied = np.arange(len(positions))  # formation point index held by each drone
    current = start
    durations, pieces, labels, transitions = [], [], [], []
    if scene.timeline.start_hold > 0:
        durations.append(scene.timeline.start_hold)
        pieces.append(hold_points(positions, settings.degree))
        labels.append(f"hold {start.name}")
    n_tr = len(scene.timeline.transitions)
    for k, tr in enumerate(scene.timeline.transitions):
        cancel.check()
        progress("assignment", k / n_tr, f"{current.name} → {tr.to}")
        target = scene.formation(tr.to)
        t0 = time.perf_counter()
        chosen = assign(tr.assignment, positions, target.positions, scale,
                        None if current.groups is None else np.asarray(current.groups)[occupied],
                        target.groups, progress=progress, cancel=cancel)
        timings["assignment"] += time.perf_counter() - t0
        t0 = time.perf_counter()
        goals = target.positions[chosen.goal_of]
        legs = goals - positions
        duration, needed = _transition_duration(f"timeline.transitions[{k}] ({current.name} → {target.name})",
                                                tr.duration, legs, limits, profile, scene, settings)
        durations.append(duration)
        pieces.append(straight_leg_points(positions, goals, profile, settings.degree))
        labels.append(f"{current.name} → {target.name}")
        transitions.append(TransitionPlan(
            index=k, source=current.name, target=target.name, mode=tr.assignment, assignment=chosen,
            duration=duration, minimum_duration=needed, lower_bound=trapezoid_lower_bound(legs, scene.fleet.limits),
            method="straight lines, shared time profile",
            spacing_guarantee=homogeneous and tr.assignment == "unlabeled"
            and synchronized_spacing_holds(positions, goals, scale),
        ))
        if tr.hold > 0:
            durations.append(tr.hold)
            pieces.append(hold_points(goals, settings.degree))
            labels.append(f"hold {target.name}")
        positions, occupied, current = goals, chosen.goal_of, target
        timings["trajectories"] += time.perf_counter() - t0
    trajectory = FleetTrajectory(
        breaks=np.r_[0.0, np.cumsum(durations)], control_points=np.stack(pieces, axis=1),
        drone_ids=scene.fleet.ids, segment_labels=tuple(labels),
    )
    t0 = time.perf_counter()
    report = verify(trajectory, spec_from_scene(scene), progress=progress, cancel=cancel)
    timings["verification"] = time.perf_counter() - t0
    return PlanResult(scene, settings, trajectory, transitions, report, timings)


def _transition_duration(where: str, requested, legs: np.ndarray, limits: np.ndarray, profile, scene: Scene,
                         settings: PlannerSettings) -> tuple[float, float]:
    """Duration to fly ``legs`` ``(N, 3)`` and the minimum the (margined) ``limits`` allow, seconds.

    ``requested`` is ``"fastest"`` or seconds; a request below the minimum raises :class:`PlanningError`
    naming the transition, the minimum and the drone with the longest leg.
    """
    per_drone = minimum_duration(legs, limits, profile)
    needed = max(float(per_drone.max()), MIN_TRANSITION_DURATION)
    if requested == "fastest":
        return needed, needed
    if requested < needed:
        slowest = int(np.argmax(per_drone))
        raise PlanningError(
            f"{where}: duration {requested:g} s is too short; the limits (at {settings.limit_margin:.0%}) need "
            f"at least {needed:.2f} s (longest leg: drone {scene.fleet.drones[slowest].id}, "
            f"{np.linalg.norm(legs[slowest]):.2f} m)")
    return float(requested), needed


def with_settings(scene: Scene, **changes) -> PlannerSettings:
    """``scene``'s planner settings with ``changes`` applied (e.g. ``degree=9``)."""
    return replace(scene.planner, **{k: v for k, v in changes.items() if v is not None})
