"""The planning pipeline shared by the CLI and the GUI.

scene → per transition, in timeline order: goal assignment and straight lines if they are clear,
else the roadmap assignment and the multi-agent search (this chain fixes every transition's
starts and goals: the search may exchange goals within a group) → the roadmap transitions'
smoothing, as independent tasks on an executor (or one by one with their per-drone QPs on it) →
trajectories → independent verification.
"""

from __future__ import annotations

import time
from concurrent.futures import FIRST_COMPLETED, Executor, wait
from dataclasses import dataclass, field, replace
from pathlib import Path

import numpy as np
from pydantic import ValidationError

from .errors import PlanningError, SceneError
from .executors import InlineExecutor, plan_executor
from .limits import MAX_TIMELINE_S
from .planning import (
    MultiAgentSolver,
    PlanningContext,
    RoadmapFigures,
    TransitionProblem,
    TransitionResult,
    plan_on_roadmap,
    plan_straight,
    roadmap_assignment,
    search_on_roadmap,
)
from .progress import CancelToken, ProgressCallback, no_progress
from .scene.model import PlannerSettings, Scene
from .straight_line import hold_points
from .timing import PROFILES
from .trajectory import FleetTrajectory
from .verify import VerificationReport, verify

#: How often a wait for parallel transition tasks looks at the cancel token (s).
CANCEL_POLL_S = 0.2


@dataclass
class PlanResult:
    """A verified (or not: see ``report.ok``) plan of a whole timeline, with what produced it.

    ``context`` is kept so that a re-plan of the same site, fleet and settings reuses its meshes,
    field and roadmap; ``roadmap`` describes the roadmap used (None when none was needed)."""

    scene: Scene
    settings: PlannerSettings
    trajectory: FleetTrajectory
    transitions: list[TransitionResult]
    report: VerificationReport
    stage_seconds: dict[str, float] = field(default_factory=dict)
    roadmap: RoadmapFigures | None = None
    warnings: tuple[str, ...] = ()
    base_dir: Path = Path(".")
    context: PlanningContext | None = None
    #: Indices of the transitions taken over unchanged from the previous plan.
    reused: tuple[int, ...] = ()

    @property
    def verified(self) -> bool:
        return self.report.ok


def plan(scene: Scene, *, settings: PlannerSettings | None = None, base_dir: str | Path | None = None,
         use_cache: bool = True, progress: ProgressCallback = no_progress,
         cancel: CancelToken | None = None, executor: Executor | None = None, workers: int | None = None,
         source: str = "scene", previous: PlanResult | None = None,
         solver: MultiAgentSolver | None = None) -> PlanResult:
    """Plan and verify every transition of ``scene``'s timeline.

    ``base_dir`` is the folder mesh paths are relative to (the scene file's folder); ``use_cache``
    reuses roadmaps stored on disk. Work runs on ``executor`` (any
    :class:`concurrent.futures.Executor`: a Dask cluster's, say), else on a process pool of
    ``workers`` (see :func:`core.executors.plan_executor`): several roadmap transitions are planned
    as parallel tasks, a single one spreads its per-drone QPs instead. ``previous`` (an earlier
    plan) lends its context when the site, fleet and settings are unchanged, and its result for
    every transition whose problem is unchanged. ``solver`` is the multi-agent search (default:
    :func:`~core.planning.solvers.choose_solver` per transition, by ``planner.search`` and fleet
    size). Raises :class:`PlanningError` (or :class:`SceneError`) naming the transition and drones
    when no plan can be made; a plan that fails verification is returned with ``report.ok`` False.
    ``source`` names the scene file in messages.
    """
    settings = settings or scene.planner
    with plan_executor(executor, workers) as pool:
        return _plan(scene, settings, Path(base_dir or "."), use_cache, progress, cancel or CancelToken(), pool,
                     source, previous, solver)


def _context(scene: Scene, settings: PlannerSettings, base_dir: Path, use_cache: bool, source: str,
             previous: PlanResult | None) -> tuple[PlanningContext, bool]:
    """The earlier plan's context when it fits (and True), else a new one (and False)."""
    old = previous.context if previous is not None else None
    if old is not None and old.reusable_for(scene, settings, base_dir, use_cache):
        return old.for_scene(scene, source), True
    return PlanningContext(scene, settings, base_dir, source=source, use_cache=use_cache), False


def _plan(scene: Scene, settings: PlannerSettings, base_dir: Path, use_cache: bool, progress: ProgressCallback,
          cancel: CancelToken, executor: Executor, source: str, previous: PlanResult | None,
          solver: MultiAgentSolver | None) -> PlanResult:
    _check_profiles(scene, settings)
    context, reused_context = _context(scene, settings, base_dir, use_cache, source, previous)
    timings: dict[str, float] = {"straight lines": 0.0, "roadmap assignment": 0.0}
    results, jobs = _chain(scene, context, solver, previous if reused_context else None, timings, progress, cancel)
    t0 = time.perf_counter()
    for k, result in _run_jobs(jobs, context, executor, progress, cancel):
        results[k] = result
    timings["smoothing"] = time.perf_counter() - t0
    trajectory = _assemble(scene, settings, results)
    if trajectory.duration > MAX_TIMELINE_S:
        raise PlanningError(f"the timeline would last {trajectory.duration:.0f} s; at most {MAX_TIMELINE_S:.0f} s "
                            "(7 days) is planned: raise the speed limits or shorten the transitions")
    t0 = time.perf_counter()
    report = verify(trajectory, context.spec, progress=progress, cancel=cancel)
    timings["verification"] = time.perf_counter() - t0
    timings.update(context.seconds)
    roadmap = context.roadmap_figures if any(r.method.used_roadmap for r in results) else None
    reused = tuple(k for k, r in enumerate(results) if previous is not None and k < len(previous.transitions)
                   and r is previous.transitions[k])
    return PlanResult(scene, settings, trajectory, results, report, timings, roadmap, tuple(context.warnings),
                      base_dir, context, reused)


def _check_profiles(scene: Scene, settings: PlannerSettings) -> None:
    """Raise :class:`PlanningError` when a one-piece profile needs a higher ``planner.degree``."""
    named = [("planner.profile", settings.profile)] + [
        (f"timeline.transitions[{k}].profile", tr.profile) for k, tr in enumerate(scene.timeline.transitions)]
    for where, name in named:
        profile = PROFILES.get(name)
        if profile is not None and profile.degree > settings.degree:
            raise PlanningError(f"{where}: planner.degree {settings.degree} is too low for profile {profile.name} "
                                f"(needs at least {profile.degree})")


def _chain(scene: Scene, context: PlanningContext, solver: MultiAgentSolver | None, previous: PlanResult | None,
           timings: dict[str, float], progress: ProgressCallback, cancel: CancelToken
           ) -> tuple[list[TransitionResult | None], list[tuple[int, TransitionProblem, object, float]]]:
    """Walk the timeline in order: each transition's problem, its assignment (which fixes the next
    one's starts), and its result when straight lines do (or the earlier plan has it); the others
    are searched on the roadmap here (an exchange of goals changes the next starts) and become
    smoothing jobs ``(index, problem, roadmap search, lower bound)``."""
    timings["search"] = 0.0
    start = scene.formation(scene.timeline.start)
    positions, occupied, current = start.positions.copy(), np.arange(len(start.positions)), start
    results: list[TransitionResult | None] = []
    jobs = []
    transitions = scene.timeline.transitions
    for k, tr in enumerate(transitions):
        cancel.check()
        progress("assignment", k / len(transitions), f"{current.name} → {tr.to}")
        target = scene.formation(tr.to)
        problem = TransitionProblem(
            k, current.name, target.name, tr.assignment, positions, occupied, target.positions,
            None if current.groups is None else np.asarray(current.groups)[occupied],
            None if target.groups is None else np.asarray(target.groups), tr.duration, tr.hold,
            tr.profile or context.settings.profile)
        earlier = previous.transitions[k] if previous is not None and k < len(previous.transitions) else None
        if earlier is not None and earlier.problem.same_as(problem):
            results.append(earlier)
            goal_of = earlier.assignment.goal_of
        else:
            t0 = time.perf_counter()
            attempt = plan_straight(problem, context, progress=progress, cancel=cancel)
            timings["straight lines"] += time.perf_counter() - t0
            results.append(attempt.result)
            goal_of = attempt.assignment.goal_of
            if attempt.result is None:
                progress("search", 0.0, f"{problem.where}: straight lines blocked, searching the roadmap")
                t0 = time.perf_counter()
                assignment = roadmap_assignment(problem, context, progress, cancel)
                timings["roadmap assignment"] += time.perf_counter() - t0
                t0 = time.perf_counter()
                search = search_on_roadmap(problem, assignment, context, solver, progress=progress, cancel=cancel)
                timings["search"] += time.perf_counter() - t0
                jobs.append((k, problem, search, attempt.lower_bound))
                goal_of = search.assignment.goal_of
        positions, occupied, current = target.positions[goal_of], goal_of, target
    return results, jobs


def _run_jobs(jobs, context: PlanningContext, executor: Executor, progress: ProgressCallback, cancel: CancelToken):
    """Yield ``(index, result)`` of every roadmap job. Several jobs on a real executor run as
    parallel tasks (each solving its per-drone QPs inline); otherwise one by one here, with the
    per-drone QPs on the executor. Both give the same plan (every stage is deterministic)."""
    if len(jobs) < 2 or isinstance(executor, InlineExecutor):
        for k, problem, search, bound in jobs:
            yield k, plan_on_roadmap(problem, search, bound, context, executor, progress=progress, cancel=cancel)
        return
    futures = {executor.submit(plan_on_roadmap, problem, search, bound, context): k
               for k, problem, search, bound in jobs}
    pending = set(futures)
    try:
        while pending:
            cancel.check()
            done, pending = wait(pending, timeout=CANCEL_POLL_S, return_when=FIRST_COMPLETED)
            for f in done:
                progress("search", 1 - len(pending) / len(futures), f"{len(futures) - len(pending)} of "
                         f"{len(futures)} roadmap transitions planned")
                yield futures[f], f.result()
    finally:
        for f in pending:
            f.cancel()


def _assemble(scene: Scene, settings: PlannerSettings, results: list[TransitionResult]) -> FleetTrajectory:
    """The fleet's trajectory: start hold, then each transition's pieces and its hold."""
    durations, pieces, labels = [], [], []
    start = scene.formation(scene.timeline.start)
    if scene.timeline.start_hold > 0:
        durations.append(scene.timeline.start_hold)
        pieces.append(hold_points(start.positions, settings.degree)[:, None])
        labels.append(f"hold {start.name}")
    for r in results:
        durations += list(r.durations)
        pieces.append(r.pieces)
        labels += [f"{r.problem.source} → {r.problem.target}"] * len(r.durations)
        if r.problem.hold > 0:
            durations.append(r.problem.hold)
            pieces.append(hold_points(r.ends, settings.degree)[:, None])
            labels.append(f"hold {r.problem.target}")
    return FleetTrajectory(breaks=np.r_[0.0, np.cumsum(durations)], control_points=np.concatenate(pieces, axis=1),
                           drone_ids=scene.fleet.ids, segment_labels=tuple(labels))


def with_settings(scene: Scene, **changes) -> PlannerSettings:
    """``scene``'s planner settings with ``changes`` applied (e.g. ``degree=9``; None keeps a value).
    Raises :class:`SceneError` naming each rejected option."""
    try:
        return replace(scene.planner, **{k: v for k, v in changes.items() if v is not None})
    except ValidationError as exc:
        raise SceneError([(f"planner option {'.'.join(map(str, e['loc']))}", e["msg"]) for e in exc.errors()]) from None
