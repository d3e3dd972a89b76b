"""Narrow passages and crowds: the window facade, ECBS against LaCAM* on one roadmap, a crowd
through a two-gap wall and a crowd across a pillar field, and the obstacle field's build time with
one grid per pillar against one grid over the whole mesh (same process, as ratios).

Run: ``python bench/bench_passages_and_scale.py`` (``--smoke``: small sizes, for CI). Exits 1 when a
plan fails verification or a transition stays stop-and-go.
"""

from __future__ import annotations

import sys
import tempfile
import time
from pathlib import Path

import numpy as np
import stress_scenes
from bench_flight_quality import _report

from core.obstacles import ClearanceField
from core.obstacles.voxels import MeshDistanceGrid
from core.planning import PlanningContext
from core.scene import load_scene
from core.scene.meshes import SiteMesh
from core.search import ecbs, lacam


def search_comparison(drones: int, folder: Path) -> None:
    """ECBS (w = 2) and LaCAM* on the same roadmap of the two-gap wall: seconds, steps, sum of costs."""
    path = stress_scenes.write_scene(stress_scenes.wall_crossing(drones), folder / "wall", "wall")
    scene = load_scene(path)
    attached = PlanningContext(scene, scene.planner, path.parent, use_cache=False).roadmap()
    drones_in_order = np.arange(len(scene.fleet.drones))
    starts, goals = attached.drone_vertices("near", drones_in_order), attached.drone_vertices("far", drones_in_order)
    t0 = time.perf_counter()
    fast = lacam(attached.roadmap, starts, goals, time_limit=60)
    t_lacam = time.perf_counter() - t0
    t0 = time.perf_counter()
    bounded = ecbs(attached.roadmap, starts, goals, w=2.0, time_limit=120)
    t_ecbs = time.perf_counter() - t0
    print(f"wall, {drones} drones, {attached.figures.vertices} vertices: LaCAM* {t_lacam:.2f} s, {fast.steps} steps, "
          f"sum of costs {fast.cost}; ECBS {t_ecbs:.2f} s, {bounded.makespan} steps, sum of costs {bounded.cost} "
          f"(lower bound {bounded.lower_bound}); time ratio ECBS / LaCAM* {t_ecbs / t_lacam:.1f}")


def field_build(pillars: int) -> None:
    """Per-pillar grids (the field) against one grid over the whole pillar mesh."""
    _, files = stress_scenes.pillar_field(10, pillars)
    mesh = files["pillars.stl"]
    axes = np.array([0.3, 0.3, 0.65])
    volume = np.array([[-25.0, -35.0, 1.0], [25.0, 35.0, 20.0]])
    t0 = time.perf_counter()
    field = ClearanceField(axes, [SiteMesh("pillars", mesh, ())], volume)
    t_parts = time.perf_counter() - t0
    t0 = time.perf_counter()
    whole = MeshDistanceGrid(mesh.vertices / axes, mesh.faces, 0.2, pad=2.4, solid=True)
    t_whole = time.perf_counter() - t0
    voxels = sum(int(np.prod(g.shape)) for g in field.grids)
    print(f"obstacle field, {pillars * pillars} pillars: {len(field.grids)} grids, {voxels / 1e6:.1f} M voxels in "
          f"{t_parts:.2f} s; one grid {np.prod(whole.shape) / 1e6:.1f} M voxels in {t_whole:.2f} s "
          f"(time ratio {t_whole / t_parts:.1f})")


def main(smoke: bool) -> int:
    defects = []
    with tempfile.TemporaryDirectory() as tmp:
        folder = Path(tmp)
        # Smoke sizes stay above the 32 drones up to which ``auto`` runs ECBS, so LaCAM* runs too.
        scenes = [("window_facade", (3 if smoke else 6,)), ("crowd_wall", (36 if smoke else 250,)),
                  ("pillar_field", (36, 2) if smoke else (1000, 4))]
        for builder, args in scenes:
            path = stress_scenes.write_scene(getattr(stress_scenes, builder)(*args), folder / builder, builder)
            defects += _report(load_scene(path), path.parent)
        print()
        search_comparison(8 if smoke else 64, folder)
        field_build(2 if smoke else 4)
    for d in defects:
        print(f"DEFECT: {d}")
    return 1 if defects else 0


if __name__ == "__main__":
    sys.exit(main("--smoke" in sys.argv))
