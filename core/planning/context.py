"""Everything planning a scene's transitions shares: the site's meshes, the clearance field, the
roadmap with the formation points attached, the clearance model, limits and settings.

A :class:`PlanningContext` is built once per plan, reused by the next plan of the same site,
fleet and settings (the designer re-plans after an edit), and pickled to worker processes or
cluster workers that plan transitions in parallel. Its heavy parts are built on first need.
"""

from __future__ import annotations

import copy
import time
from dataclasses import dataclass
from functools import cached_property
from pathlib import Path

import numpy as np

from ..errors import SceneError
from ..obstacles import ClearanceField
from ..progress import CancelToken, ProgressCallback, no_progress
from ..roadmap.build import RoadmapSettings, attach_points, build_roadmap
from ..roadmap.cache import cached_roadmap, roadmap_key
from ..roadmap.graph import Roadmap
from ..roadmap.layers import layered_roadmap
from ..scene.checks import format_xyz
from ..scene.meshes import SiteMesh, load_site_meshes
from ..scene.model import PlannerSettings, Scene
from ..verify import VerificationSpec, spec_from_scene
from .results import RoadmapFigures

#: Uniform roadmap samples drawn per drone at least (``planner.roadmap_samples`` is the minimum):
#: a sparse roadmap has too few disjoint ways through a passage for a crowd. Measured on 250
#: drones crossing a two-gap wall (DEVELOPERS.md, "Roadmap density"): 1 500 samples 99 steps,
#: 3 000 63, 5 000 54.
SAMPLES_PER_DRONE = 20


@dataclass(frozen=True, eq=False)
class AttachedRoadmap:
    """The roadmap with every formation point attached, one layer per drone shape
    (:func:`~core.roadmap.layers.layered_roadmap`): ``vertex_of[formation name]`` ``(P,)`` gives
    the vertex of each of its points in the first layer, ``layer_offset`` ``(N,)`` what to add for
    each drone's own layer (all 0 for a fleet of one shape); ``figures`` describe it."""

    roadmap: Roadmap
    vertex_of: dict[str, np.ndarray]
    figures: RoadmapFigures
    layer_offset: np.ndarray
    #: Vertices per layer.
    layer_size: int

    def drone_vertices(self, formation: str, points: np.ndarray) -> np.ndarray:
        """``(N,)`` the vertex of point ``points[i]`` of ``formation`` in drone ``i``'s layer."""
        return self.vertex_of[formation][points] + self.layer_offset

    def goal_columns(self, formation: str) -> np.ndarray:
        """``(N, P)`` the vertex of each of ``formation``'s points in each drone's layer."""
        return self.vertex_of[formation][None, :] + self.layer_offset[:, None]

    def point_indices(self, formation: str, vertices: np.ndarray) -> np.ndarray:
        """Which point of ``formation`` each vertex ``(M,)`` (of any layer) is."""
        point_of = {int(v): k for k, v in enumerate(self.vertex_of[formation].tolist())}
        return np.array([point_of[int(v) % self.layer_size] for v in vertices])


class PlanningContext:
    """Planning state of one scene (mesh paths relative to ``base_dir``; ``source`` names the
    scene file in messages). Raises :class:`SceneError` at once when a mesh cannot be read.

    The field and the roadmap's geometry use the fleet's envelope ellipsoid, so one roadmap is
    conservative for every drone; its conflicts are per pair of drone shapes (one layer per shape).
    """

    def __init__(self, scene: Scene, settings: PlannerSettings, base_dir: Path, *, source: str = "scene",
                 use_cache: bool = True):
        self.scene, self.settings, self.base_dir, self.source = scene, settings, Path(base_dir), source
        self.use_cache = use_cache
        self.clearance = scene.fleet.clearance
        #: (N, 3) the speed and acceleration limits the planner may use (``limit_margin`` applied).
        self.limits = scene.fleet.limits * settings.limit_margin
        self.meshes: tuple[SiteMesh, ...] = load_site_meshes(scene.site, self.base_dir, source)
        self.spec: VerificationSpec = spec_from_scene(scene, meshes=self.meshes)
        #: Usable-but-suspicious findings (meshes, cache), for the plan summary.
        self.warnings: list[str] = [f"mesh {m.name!r}: {w}" for m in self.meshes for w in m.warnings]
        #: Seconds spent building the shared parts (obstacle field, roadmap, attaching points).
        self.seconds: dict[str, float] = {}
        self._attached: tuple[tuple[bytes, ...], AttachedRoadmap] | None = None

    def reusable_for(self, scene: Scene, settings: PlannerSettings, base_dir: Path, use_cache: bool) -> bool:
        """Whether a plan of ``scene`` may use this context (same site, fleet and settings; the
        formations and timeline may differ)."""
        return (scene.site == self.scene.site and scene.fleet == self.scene.fleet and settings == self.settings
                and Path(base_dir) == self.base_dir and use_cache == self.use_cache)

    def for_scene(self, scene: Scene, source: str) -> PlanningContext:
        """A copy of this context for an edited ``scene`` of the same site and fleet (formations may
        differ); it shares the meshes, the field and the roadmaps built so far."""
        other = copy.copy(self)
        other.scene, other.source = scene, source
        other.warnings, other.seconds = list(self.warnings), {}
        return other

    @property
    def has_obstacles(self) -> bool:
        return bool(self.scene.site.meshes or self.scene.site.keep_out)

    @cached_property
    def field(self) -> ClearanceField:
        """The conservative clearance field of the site for the envelope ellipsoid."""
        t0 = time.perf_counter()
        site = self.scene.site
        field = ClearanceField(self.clearance.envelope, self.meshes, site.flight_volume.bounds,
                               [b.bounds for b in site.keep_out], self.settings.obstacle_pitch)
        self.seconds["obstacle field"] = time.perf_counter() - t0
        return field

    def legs_clear(self, starts: np.ndarray, goals: np.ndarray) -> bool:
        """Whether every straight leg ``starts`` → ``goals`` ``(N, 3)`` keeps clear of obstacles."""
        return not self.has_obstacles or bool(self.field.segments_clear(starts, goals).all())

    def roadmap(self, progress: ProgressCallback = no_progress, cancel: CancelToken | None = None) -> AttachedRoadmap:
        """The roadmap (from the cache when it holds one) with the current formations attached;
        built on the first call, again only when the formations change."""
        formations = self.scene.formations
        key = tuple(f.positions.tobytes() for f in formations)
        if self._attached is not None and self._attached[0] == key:
            return self._attached[1]
        s, field, pair_envelope = self.settings, self.field, self.clearance.pair_envelope
        samples = max(s.roadmap_samples, SAMPLES_PER_DRONE * len(self.scene.fleet.ids))
        rs = RoadmapSettings(samples, s.roadmap_neighbours, s.spanner_stretch, s.roadmap_seed)
        t0 = time.perf_counter()
        base, cached, cache_warnings = cached_roadmap(
            roadmap_key(field, pair_envelope, rs),
            lambda: build_roadmap(field, pair_envelope, rs, progress=progress, cancel=cancel), self.use_cache)
        self.warnings += cache_warnings
        self.seconds["roadmap"] = time.perf_counter() - t0
        t0 = time.perf_counter()
        points = np.concatenate([f.positions for f in formations])
        self._check_points_in_field(points)
        full, index = attach_points(base, points, field, pair_envelope, s.roadmap_neighbours, seed=s.roadmap_seed)
        self.seconds["roadmap attach"] = time.perf_counter() - t0
        t0 = time.perf_counter()
        layers = layered_roadmap(full, self.clearance.kind_pair_radii)
        if layers is not full:
            self.seconds["roadmap layers"] = time.perf_counter() - t0
        splits = np.cumsum([len(f.positions) for f in formations])[:-1]
        vertex_of = dict(zip((f.name for f in formations), np.split(index, splits), strict=True))
        attached = AttachedRoadmap(layers, vertex_of,
                                   RoadmapFigures(full.n_vertices, len(full.edges), layers.conflicts.count, cached,
                                                  len(self.clearance.kind_pair_radii)),
                                   self.clearance.kind_of * full.n_vertices, full.n_vertices)
        self._attached = (key, attached)
        return attached

    @property
    def roadmap_figures(self) -> RoadmapFigures | None:
        """Figures of the roadmap built so far (None before the first :meth:`roadmap` call)."""
        return None if self._attached is None else self._attached[1].figures

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
                             f"{format_xyz(points[k], '.2f')} is within the planner's conservative clearance of "
                             f"{why} (field error bound {self.field.error_bound:.2f} clearance radii); move it a "
                             "little further away"))
        raise SceneError(problems)


def _locate(spans: list[tuple[str, int]], k: int) -> tuple[int, int]:
    """Formation index and point index of row ``k`` of the formations' points stacked in order."""
    for index, (_name, count) in enumerate(spans):
        if k < count:
            return index, k
        k -= count
    raise IndexError(k)
