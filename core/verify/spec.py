"""What a plan must satisfy, taken from the scene (not from the planner)."""

from __future__ import annotations

from dataclasses import dataclass
from functools import cached_property
from pathlib import Path

import numpy as np
import trimesh

from ..clearance import ClearanceModel
from ..scene.meshes import SiteMesh, load_site_meshes
from ..scene.model import Scene


@dataclass(frozen=True, eq=False)
class VerificationSpec:
    """Requirements for a fleet of N drones.

    semi_axes : (N, 3) clearance ellipsoid half-axes, metres
    limits : (N, 3) max horizontal speed, max vertical speed (m/s), max acceleration norm (m/s²)
    flight_volume : (2, 3) lower/upper corner of the box drone centres must stay in, metres
    keep_out : names and (2, 3) bounds of boxes no clearance ellipsoid may touch
    meshes : names and placed obstacle meshes (world metres) no clearance ellipsoid may touch
    tolerance : relative slack allowed over a speed/acceleration limit (0.01 = 1 %)
    pair_rule : the scene's pair shapes (:class:`~core.clearance.ClearanceModel` with its per-pair
        table and downwash shifts); the checks measure them with their own code
    """

    drone_ids: tuple[str, ...]
    semi_axes: np.ndarray
    limits: np.ndarray
    flight_volume: np.ndarray
    keep_out: tuple[tuple[str, np.ndarray], ...] = ()
    meshes: tuple[tuple[str, trimesh.Trimesh], ...] = ()
    tolerance: float = 0.01
    #: The scene's pair rule (per-pair table, downwash shifts); None: the enclosing sums of :attr:`semi_axes`.
    pair_rule: ClearanceModel | None = None

    @cached_property
    def clearance(self) -> ClearanceModel:
        """The pair shapes the plan must keep (one model per spec, built on first use)."""
        return self.pair_rule if self.pair_rule is not None else ClearanceModel(self.semi_axes)


def spec_from_scene(scene: Scene, base_dir: Path | None = None, meshes: tuple[SiteMesh, ...] | None = None
                    ) -> VerificationSpec:
    """The requirements stated by ``scene`` (fleet clearance and limits, flight volume, keep-out
    boxes, obstacle meshes). Meshes are read from ``base_dir`` (the folder mesh paths are relative
    to) unless already loaded ones are passed as ``meshes``."""
    if meshes is None:
        meshes = load_site_meshes(scene.site, Path(base_dir or "."), "scene.json") if scene.site.meshes else ()
    return VerificationSpec(
        drone_ids=scene.fleet.ids,
        semi_axes=scene.fleet.semi_axes,
        limits=scene.fleet.limits,
        flight_volume=scene.site.flight_volume.bounds,
        keep_out=tuple((b.name, b.bounds) for b in scene.site.keep_out),
        meshes=tuple((m.name, m.mesh) for m in meshes),
        pair_rule=scene.fleet.clearance,
    )
