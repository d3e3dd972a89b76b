"""Transitions around obstacles: clearance field, cached roadmap with the formation points
attached, assignment by roadmap path length, ECBS, then corridor smoothing (with the
stop-at-every-waypoint trajectory as the baseline and fallback).

One :class:`ObstaclePlanner` serves a whole plan; its field and roadmap are built the first time
a transition needs them.
"""

from __future__ import annotations

import time
from concurrent.futures import Executor
from functools import cached_property
from pathlib import Path

import numpy as np
import trimesh

from .assignment import Assignment, assign_by_cost
from .errors import PlanningError, SceneError
from .objectives import parse_objective
from .obstacles import ClearanceField
from .progress import CancelToken, ProgressCallback, no_progress
from .roadmap.build import RoadmapSettings, attach_points, build_roadmap
from .roadmap.cache import cached_roadmap, roadmap_key
from .roadmap.graph import Roadmap
from .scene.checks import format_xyz
from .scene.meshes import SiteMesh, load_site_meshes
from .scene.model import PlannerSettings, Scene
from .search import SearchFailed, ecbs
from .smoothing.smoother import SmoothingOptions, smooth_transition
from .smoothing.terms import trajectory_cost
from .straight_line import straight_leg_points
from .timing import MIN_TRANSITION_DURATION, Profile, minimum_duration
from .trajectory import FleetTrajectory
from .verify import VerificationSpec
from .verify.checker import sampled_peaks
from .verify.discrete import check_discrete_plan


class ObstaclePlanner:
    """Obstacle model and roadmap for ``scene`` (mesh paths relative to ``base_dir``).

    The field and roadmap use the fleet's envelope ellipsoid (largest half-axes of any type), and
    drone–drone conflicts the largest pair clearance, so one roadmap is conservative for all drones.
    """

    def __init__(self, scene: Scene, settings: PlannerSettings, base_dir: Path, executor: Executor, *,
                 use_cache: bool = True, progress: ProgressCallback = no_progress, cancel: CancelToken | None = None,
                 source: str = "scene"):
        self.scene, self.settings, self.base_dir, self.executor = scene, settings, Path(base_dir), executor
        self.source = source  # the scene file's name, for messages
        self.use_cache, self.progress, self.cancel = use_cache, progress, cancel or CancelToken()
        self.clearance = scene.fleet.clearance
        self.envelope, self.pair_envelope = self.clearance.envelope, self.clearance.pair_envelope
        self.stats: dict[str, object] = {}
        self.seconds: dict[str, float] = {}

    @property
    def has_obstacles(self) -> bool:
        return bool(self.scene.site.meshes or self.scene.site.keep_out)

    @cached_property
    def meshes(self) -> tuple[SiteMesh, ...]:
        meshes = load_site_meshes(self.scene.site, self.base_dir, self.source)
        self.stats.setdefault("warnings", []).extend(f"mesh {m.name!r}: {w}" for m in meshes for w in m.warnings)
        self._check_formations_clear(meshes)
        return meshes

    @cached_property
    def field(self) -> ClearanceField:
        t0 = time.perf_counter()
        site = self.scene.site
        field = ClearanceField(self.envelope, self.meshes, site.flight_volume.bounds,
                               [b.bounds for b in site.keep_out], self.settings.obstacle_pitch)
        self.seconds["obstacle field"] = time.perf_counter() - t0
        return field

    def legs_clear(self, starts: np.ndarray, goals: np.ndarray) -> bool:
        """Whether every straight leg ``starts`` → ``goals`` ``(N, 3)`` keeps clear of obstacles."""
        return not self.has_obstacles or bool(self.field.segments_clear(starts, goals).all())

    @cached_property
    def roadmap(self) -> tuple[Roadmap, dict[str, np.ndarray]]:
        """Roadmap with every formation point attached, and each formation's vertex ids."""
        s = self.settings
        rs = RoadmapSettings(s.roadmap_samples, s.roadmap_neighbours, s.spanner_stretch, s.roadmap_seed)
        field = self.field
        t0 = time.perf_counter()
        base, cached, cache_warnings = cached_roadmap(
            roadmap_key(field, self.pair_envelope, rs),
            lambda: build_roadmap(field, self.pair_envelope, rs, progress=self.progress, cancel=self.cancel),
            self.use_cache)
        self.stats.setdefault("warnings", []).extend(cache_warnings)
        self.seconds["roadmap"] = time.perf_counter() - t0
        t0 = time.perf_counter()
        formations = self.scene.formations
        points = np.concatenate([f.positions for f in formations])
        self._check_points_in_field(points)
        full, index = attach_points(base, points, field, self.pair_envelope, s.roadmap_neighbours)
        self.seconds["roadmap attach"] = time.perf_counter() - t0
        splits = np.cumsum([len(f.positions) for f in formations])[:-1]
        self.stats.update(roadmap_cached=cached, roadmap_vertices=full.n_vertices, roadmap_edges=len(full.edges),
                          roadmap_conflicts=full.conflicts.count)
        return full, dict(zip((f.name for f in formations), np.split(index, splits), strict=True))

    def plan_transition(self, where: str, source: str, occupied: np.ndarray, target: str, mode: str,
                        start_groups, goal_groups, profile: Profile, limits: np.ndarray, spec: VerificationSpec
                        ) -> tuple[Assignment, np.ndarray, np.ndarray, dict]:
        """Roadmap plan from ``source`` points ``occupied`` (per drone) to ``target``.

        Returns the assignment, step durations ``(K,)`` (s), control points ``(N, K, n + 1, 3)`` (the
        smoothed pieces, or the stop-and-go ones when smoothing is off or failed) and figures
        (search, smoothing, stop-and-go baseline). Raises :class:`PlanningError` naming the drones.
        """
        roadmap, vertex_of = self.roadmap
        starts = vertex_of[source][occupied]
        goal_vertices = vertex_of[target]
        ids = self.scene.fleet.ids
        if mode == "labeled":
            chosen = Assignment(np.arange(len(starts)), float("nan"), "labeled", 0.0)
        else:
            cost = roadmap.path_lengths(starts)[:, goal_vertices]
            try:
                chosen = assign_by_cost(cost, start_groups if mode == "grouped" else None,
                                        goal_groups if mode == "grouped" else None)
            except ValueError:
                nearest = np.argmin(np.where(np.isfinite(cost), cost, np.inf), axis=1)
                self._check_reachable(where, roadmap, starts, goal_vertices[nearest], target, nearest)
                cut_off = np.nonzero(~np.isfinite(cost).any(axis=0))[0]
                index = [f.name for f in self.scene.formations].index(target)
                points = ", ".join(f"formations[{index}] ({target!r}).points[{k}] at "
                                   f"{_xyz(roadmap.vertices[goal_vertices[k]])}" for k in cut_off[:5])
                raise PlanningError(
                    f"{where}: no assignment lets every drone reach a goal on the roadmap"
                    + (f"; no drone can reach {points}" + (f" and {len(cut_off) - 5} more" if len(cut_off) > 5 else "")
                       + " (boxed in by obstacles or keep-out boxes?)" if len(cut_off) else "")) from None
        goals = goal_vertices[chosen.goal_of]
        self._check_reachable(where, roadmap, starts, goals, target, chosen.goal_of)
        t0 = time.perf_counter()
        try:
            result = ecbs(roadmap, starts, goals, w=self.settings.suboptimality,
                          time_limit=self.settings.search_time_limit, progress=self.progress, cancel=self.cancel)
        except SearchFailed as e:
            raise PlanningError(f"{where}: {e}; unresolved: " + _describe_conflicts(e.conflicts, roadmap, ids)
                                + ". Try a larger suboptimality factor, a longer search time limit, more roadmap "
                                "samples, or fewer drones through the narrowest passage.") from None
        self.seconds["search"] = self.seconds.get("search", 0.0) + time.perf_counter() - t0
        positions = _step_positions(roadmap, result.paths)
        conflicts = check_discrete_plan(positions, self.clearance)
        if conflicts:
            c = conflicts[0]
            raise PlanningError(f"{where}: the discrete plan check found {len(conflicts)} conflicts (first: drones "
                                f"{ids[c.a]} and {ids[c.b]} at step {c.step}); this is a planner bug, please report")
        positions = _moving_steps(positions)
        durations, pieces = _stop_and_go(positions, profile, self.settings.degree, limits)
        figures = {"search_nodes": result.nodes_expanded, "search_generated": result.nodes_generated,
                   "low_level_expansions": result.low_level_expansions, "sum_of_costs": result.cost,
                   "cost_lower_bound": result.lower_bound, "w": result.w, "steps": len(durations),
                   "search_s": result.seconds, "stop_and_go": _baseline_figures(durations, pieces, ids),
                   "smoothed": False}
        if self.settings.smoothing and len(durations):
            outcome = self._smooth(where, positions, limits, spec)
            figures.update(smoothing=outcome.history, smoothing_note=outcome.note,
                           smoothing_seconds=outcome.seconds)
            if outcome.pieces is not None:
                figures["smoothed"] = True
                return chosen, outcome.durations, outcome.pieces, figures
        return chosen, durations, pieces, figures

    def _smooth(self, where: str, positions: np.ndarray, limits: np.ndarray, spec: VerificationSpec):
        s = self.settings
        options = SmoothingOptions(s.degree, s.smoothing_iterations, parse_objective(s.objective))
        t0 = time.perf_counter()
        outcome = smooth_transition(where, positions, self.clearance, self.envelope,
                                    self.field, limits, spec, options, self.executor, progress=self.progress,
                                    cancel=self.cancel)
        self.seconds["smoothing"] = self.seconds.get("smoothing", 0.0) + time.perf_counter() - t0
        return outcome

    def _check_reachable(self, where, roadmap, starts, goals, target, goal_index) -> None:
        label = roadmap.component_labels()
        stuck = np.nonzero(label[starts] != label[goals])[0]
        if len(stuck) == 0:
            return
        ids = self.scene.fleet.ids
        index = [f.name for f in self.scene.formations].index(target)
        names = ", ".join(f"drone {ids[k]} → formations[{index}] ({target!r}).points[{goal_index[k]}] at "
                          f"{_xyz(roadmap.vertices[goals[k]])}" for k in stuck[:5])
        more = f" and {len(stuck) - 5} more" if len(stuck) > 5 else ""
        raise PlanningError(f"{where}: unreachable goal: no collision-free roadmap path for {names}{more}. The "
                            "passage may be narrower than the clearance; try more roadmap samples or a finer "
                            "planner.obstacle_pitch.")

    def _check_formations_clear(self, meshes: tuple[SiteMesh, ...]) -> None:
        """Exact (trimesh) check that no formation point's envelope ellipsoid touches a mesh."""
        problems = []
        for m in meshes:
            scaled = trimesh.Trimesh(m.mesh.vertices / self.envelope, m.mesh.faces, process=False)
            for i, f in enumerate(self.scene.formations):
                p = f.positions / self.envelope
                distance = trimesh.proximity.closest_point(scaled, p)[1]
                inside = scaled.contains(p) if m.watertight else np.zeros(len(p), dtype=bool)
                for k in np.nonzero(inside | (distance < 1.0))[0]:
                    why = "is inside" if inside[k] else f"is too close to ({distance[k]:.2f} of the clearance)"
                    problems.append((f"{self.source}: formations[{i}] ({f.name!r}).points[{k}]",
                                     f"{_xyz(f.positions[k])} {why} mesh {m.name!r}"))
        if problems:
            raise SceneError(problems)

    def _check_points_in_field(self, points: np.ndarray) -> None:
        blocked = np.nonzero(self.field.margins(points) < 0)[0]
        if len(blocked) == 0:
            return
        what = self.field.blocking(points[blocked])
        spans = [(f.name, len(f.positions)) for f in self.scene.formations]
        problems = []
        for k, why in zip(blocked, what, strict=True):
            index, local = _locate(spans, int(k))
            problems.append((f"{self.source}: formations[{index}] ({spans[index][0]!r}).points[{local}]",
                             f"{_xyz(points[k])} is within the planner's conservative clearance of {why} "
                             f"(field error bound {self.field.error_bound:.2f} clearance radii); move it a little "
                             "further away"))
        raise SceneError(problems)


def _locate(spans: list[tuple[str, int]], k: int) -> tuple[int, int]:
    """Formation index and point index of row ``k`` of the formations' points stacked in order."""
    for index, (_name, count) in enumerate(spans):
        if k < count:
            return index, k
        k -= count
    raise IndexError(k)


def _xyz(p: np.ndarray) -> str:
    return format_xyz(p, ".2f")


def _describe_conflicts(conflicts, roadmap: Roadmap, ids) -> str:
    if not conflicts:
        return "none recorded"
    parts = []
    for c in conflicts[:5]:
        where = roadmap.vertices[c.action_a] if c.action_a < roadmap.n_vertices else \
            roadmap.vertices[roadmap.edges[c.action_a - roadmap.n_vertices]].mean(axis=0)
        parts.append(f"drones {ids[c.a]} and {ids[c.b]} at step {c.step} near {_xyz(where)}")
    return "; ".join(parts) + (f" (+{len(conflicts) - 5} more)" if len(conflicts) > 5 else "")


def _step_positions(roadmap: Roadmap, paths: list[tuple[int, ...]]) -> np.ndarray:
    """``(N, K + 1, 3)`` vertex positions per step, each path padded by waiting at its goal."""
    steps = max(len(p) for p in paths)
    padded = np.array([list(p) + [p[-1]] * (steps - len(p)) for p in paths])
    return roadmap.vertices[padded]


def _moving_steps(positions: np.ndarray) -> np.ndarray:
    """``positions`` ``(N, K + 1, 3)`` without the steps in which nobody moves."""
    moves = np.any(np.abs(np.diff(positions, axis=1)) > 0, axis=(0, 2))
    return positions[:, np.r_[True, moves]]


def _baseline_figures(durations: np.ndarray, pieces: np.ndarray, ids) -> dict:
    """Duration (s), sampled peak acceleration (m/s²) and ∫‖snap‖² (m²/s⁷) of stop-and-go pieces."""
    if not len(durations):
        return {"duration_s": 0.0, "peak_acceleration": 0.0, "snap_integral": 0.0}
    traj = FleetTrajectory(np.r_[0.0, np.cumsum(durations)], pieces, ids)
    return {"duration_s": float(durations.sum()), "peak_acceleration": float(sampled_peaks(traj)["acceleration"].max()),
            "snap_integral": trajectory_cost(pieces, durations, {"snap": 1.0})}


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
