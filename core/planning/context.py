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
from functools import partial
from pathlib import Path

import numpy as np

from ..errors import SceneError
from ..obstacles import ClearanceField, FleetFields
from ..progress import CancelToken, ProgressCallback, no_progress
from ..roadmap.build import RoadmapSettings, attach_points, build_roadmap
from ..roadmap.cache import cached_roadmap, roadmap_key
from ..roadmap.graph import Roadmap
from ..roadmap.layers import layered_roadmap
from ..scene.checks import format_xyz
from ..scene.meshes import SiteMesh, load_site_meshes
from ..scene.model import PlannerSettings, Scene
from ..scene.occupants import possible_shapes
from ..verify import VerificationSpec, spec_from_scene
from .results import RoadmapFigures

#: Uniform roadmap samples drawn per drone at least (``planner.roadmap_samples`` is the minimum):
#: a sparse roadmap has too few disjoint ways through a passage for a crowd. Measured on 250
#: drones crossing a two-gap wall (DEVELOPERS.md, "Roadmap density"): 1 500 samples 99 steps,
#: 3 000 63, 5 000 54.
SAMPLES_PER_DRONE = 20


@dataclass(frozen=True, eq=False)
class AttachedRoadmap:
    """The roadmap with every formation point attached, one layer per drone kind
    (:func:`~core.roadmap.layers.layered_roadmap`): ``vertex_of[formation name]`` ``(K, P)`` gives
    the vertex of each of its points in each kind's layer, ``kind_of`` ``(N,)`` each drone's kind
    (its layer); ``figures`` describe it."""

    roadmap: Roadmap
    vertex_of: dict[str, np.ndarray]
    figures: RoadmapFigures
    kind_of: np.ndarray

    def drone_vertices(self, formation: str, points: np.ndarray) -> np.ndarray:
        """``(N,)`` the vertex of point ``points[i]`` of ``formation`` in drone ``i``'s layer."""
        return self.vertex_of[formation][self.kind_of, points]

    def goal_columns(self, formation: str) -> np.ndarray:
        """``(N, P)`` the vertex of each of ``formation``'s points in each drone's layer."""
        return self.vertex_of[formation][self.kind_of]

    def point_indices(self, formation: str, vertices: np.ndarray) -> np.ndarray:
        """Which point of ``formation`` each vertex ``(M,)`` (of any layer) is."""
        point_of = {int(v): k for row in self.vertex_of[formation] for k, v in enumerate(row.tolist())}
        return np.array([point_of[int(v)] for v in vertices])


class PlanningContext:
    """Planning state of one scene (mesh paths relative to ``base_dir``; ``source`` names the
    scene file in messages). Raises :class:`SceneError` at once when a mesh cannot be read.

    Each drone shape has its own clearance field (:attr:`fields`) and each drone kind its own
    roadmap layer, sampled and checked against obstacles for that shape; conflicts between layers
    use each pair's own shape.
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
        #: Seconds spent building the shared parts (obstacle fields, roadmaps, attaching points).
        self.seconds: dict[str, float] = {}
        site = scene.site
        shapes, shape_of = np.unique(self.clearance.semi_axes, axis=0, return_inverse=True)
        #: The clearance field of each drone's own shape (built on first need).
        self.fields = FleetFields(shapes, shape_of.ravel(), partial(
            ClearanceField, meshes=self.meshes, flight_volume=site.flight_volume.bounds,
            keep_out=[b.bounds for b in site.keep_out], pitch=settings.obstacle_pitch), self.seconds)
        self._attached: tuple[tuple[bytes, ...], AttachedRoadmap] | None = None

    def reusable_for(self, scene: Scene, settings: PlannerSettings, base_dir: Path, use_cache: bool) -> bool:
        """Whether a plan of ``scene`` may use this context (same site, fleet and settings; the
        formations and timeline may differ)."""
        return (scene.site == self.scene.site and scene.fleet == self.scene.fleet and settings == self.settings
                and Path(base_dir) == self.base_dir and use_cache == self.use_cache)

    def for_scene(self, scene: Scene, source: str) -> PlanningContext:
        """A copy of this context for an edited ``scene`` of the same site and fleet (formations may
        differ); it shares the meshes, the fields and the roadmaps built so far."""
        other = copy.copy(self)
        other.scene, other.source = scene, source
        other.warnings, other.seconds = list(self.warnings), {}
        other.fields = self.fields.sharing(other.seconds)
        return other

    @property
    def has_obstacles(self) -> bool:
        return bool(self.scene.site.meshes or self.scene.site.keep_out)

    def legs_clear(self, starts: np.ndarray, goals: np.ndarray) -> bool:
        """Whether every drone's straight leg ``starts`` → ``goals`` ``(N, 3)`` keeps its own clearance
        from obstacles."""
        return not self.has_obstacles or bool(self.fields.segments_clear(np.arange(len(starts)), starts, goals).all())

    def roadmap(self, progress: ProgressCallback = no_progress, cancel: CancelToken | None = None) -> AttachedRoadmap:
        """The roadmap layers (from the cache when it holds them) with the current formations
        attached; built on the first call, again only when the formations change."""
        formations = self.scene.formations
        key = tuple(f.positions.tobytes() for f in formations)
        if self._attached is not None and self._attached[0] == key:
            return self._attached[1]
        s, clearance = self.settings, self.clearance
        samples = max(s.roadmap_samples, SAMPLES_PER_DRONE * len(self.scene.fleet.ids))
        rs = RoadmapSettings(samples, s.roadmap_neighbours, s.spanner_stretch, s.roadmap_seed)
        points = np.concatenate([f.positions for f in formations])
        shapes = possible_shapes(self.scene)
        occupants = np.concatenate([shapes[f.name] for f in formations])  # (P, K)
        kinds = len(clearance.kind_axes)
        shape_of_kind = [int(self.fields.shape_of[np.nonzero(clearance.kind_of == k)[0][0]]) for k in range(kinds)]
        layers, indices, cached_all, built = [], [], True, {}
        for k in range(kinds):
            field, own = self.fields.of_shape(shape_of_kind[k]), clearance.kind_pair_radii[k, k]
            t0 = time.perf_counter()
            cache_key = roadmap_key(field, own, rs)
            if cache_key not in built:
                built[cache_key] = cached_roadmap(
                    cache_key, lambda field=field, own=own: build_roadmap(field, own, rs, progress=progress,
                                                                           cancel=cancel), self.use_cache)
                self.warnings += built[cache_key][2]
            base, cached, _ = built[cache_key]
            cached_all &= cached
            self.seconds["roadmap"] = self.seconds.get("roadmap", 0.0) + time.perf_counter() - t0
            t0 = time.perf_counter()
            mine = occupants[:, k]
            self._check_points_in_field(points, mine, field)
            layer, index = attach_points(base, points, field, own, s.roadmap_neighbours, seed=s.roadmap_seed,
                                         attach=mine)
            layers.append(layer)
            indices.append(index)
            self.seconds["roadmap attach"] = self.seconds.get("roadmap attach", 0.0) + time.perf_counter() - t0
        t0 = time.perf_counter()
        full, starts = layered_roadmap(layers, clearance.kind_pair_radii, clearance.kind_offsets)
        if kinds > 1:
            self.seconds["roadmap layers"] = time.perf_counter() - t0
        stacked = np.stack([index + starts[k] for k, index in enumerate(indices)])  # (K, P)
        splits = np.cumsum([len(f.positions) for f in formations])[:-1]
        vertex_of = dict(zip((f.name for f in formations), np.split(stacked, splits, axis=1), strict=True))
        attached = AttachedRoadmap(full, vertex_of,
                                   RoadmapFigures(full.n_vertices, len(full.edges), full.conflicts.count, cached_all,
                                                  kinds),
                                   clearance.kind_of)
        self._attached = (key, attached)
        return attached

    @property
    def roadmap_figures(self) -> RoadmapFigures | None:
        """Figures of the roadmap built so far (None before the first :meth:`roadmap` call)."""
        return None if self._attached is None else self._attached[1].figures

    def _check_points_in_field(self, points: np.ndarray, mine: np.ndarray, field: ClearanceField) -> None:
        """Raise :class:`SceneError` naming every point ``(P, 3)`` that a drone of this field's
        shape can stand on (``mine`` ``(P,)``) but whose clearance the field says is blocked."""
        blocked = np.nonzero(mine & (field.margins(points) < 0))[0]
        if len(blocked) == 0:
            return
        what = field.blocking(points[blocked])
        spans = [(f.name, len(f.positions)) for f in self.scene.formations]
        problems = []
        for k, why in zip(blocked, what, strict=True):
            index, local = _locate(spans, int(k))
            problems.append((f"{self.source}: formations[{index}] ({spans[index][0]!r}).points[{local}]",
                             f"{format_xyz(points[k], '.2f')} is within the planner's conservative clearance of "
                             f"{why} (field error bound {field.error_bound:.2f} clearance radii); move it a "
                             "little further away"))
        raise SceneError(problems)


def _locate(spans: list[tuple[str, int]], k: int) -> tuple[int, int]:
    """Formation index and point index of row ``k`` of the formations' points stacked in order."""
    for index, (_name, count) in enumerate(spans):
        if k < count:
            return index, k
        k -= count
    raise IndexError(k)
