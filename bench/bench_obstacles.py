"""Obstacle-scene benchmarks: roadmap build + conflict annotation in a mesh site, annotation vs a
per-pair Python loop (same process, same subset), ECBS on the courtyard swap, makespan ratios.

Run: ``python bench/bench_obstacles.py`` (uses the sample scenes; builds without the disk cache).
"""

from __future__ import annotations

import math
import sys
import time
from pathlib import Path

import numpy as np

from core.obstacles import ClearanceField
from core.pipeline import plan
from core.roadmap.build import RoadmapSettings, build_roadmap
from core.roadmap.conflicts import annotate
from core.scene import load_scene
from core.scene.meshes import load_site_meshes

SAMPLES = Path(__file__).resolve().parents[1] / "sample_scenes"


def _loop_distance(p0, p1, q0, q1) -> float:
    """Closest distance between two segments, one pair at a time in plain Python (the baseline)."""
    best = math.inf
    d1, d2 = [b - a for a, b in zip(p0, p1, strict=True)], [b - a for a, b in zip(q0, q1, strict=True)]
    for p, a, d in ((p0, q0, d2), (p1, q0, d2), (q0, p0, d1), (q1, p0, d1)):
        dd = sum(x * x for x in d)
        t = 0.0 if dd == 0 else min(1.0, max(0.0, sum((pi - ai) * di for pi, ai, di in zip(p, a, d, strict=True)) / dd))
        best = min(best, math.dist(p, [ai + t * di for ai, di in zip(a, d, strict=True)]))
    w = [a - b for a, b in zip(p0, q0, strict=True)]
    uu, uv, vv = sum(x * x for x in d1), sum(x * y for x, y in zip(d1, d2, strict=True)), sum(x * x for x in d2)
    uw, vw = sum(x * y for x, y in zip(d1, w, strict=True)), sum(x * y for x, y in zip(d2, w, strict=True))
    det = uu * vv - uv * uv
    if det > 1e-12 * max(uu * vv, 1e-300):
        s, t = (uv * vw - vv * uw) / det, (uu * vw - uv * uw) / det
        if 0 < s < 1 and 0 < t < 1:
            best = min(best, math.dist([a + s * x for a, x in zip(p0, d1, strict=True)],
                                       [b + t * y for b, y in zip(q0, d2, strict=True)]))
    return best


def roadmap_benchmark(samples: int = 2600) -> None:
    scene = load_scene(SAMPLES / "courtyard_swap.json")
    axes = scene.fleet.semi_axes.max(axis=0)
    pair_envelope = scene.fleet.clearance.pair_envelope
    t0 = time.perf_counter()
    field = ClearanceField(axes, load_site_meshes(scene.site, SAMPLES), scene.site.flight_volume.bounds)
    t_field = time.perf_counter() - t0
    t0 = time.perf_counter()
    roadmap = build_roadmap(field, pair_envelope, RoadmapSettings(samples=samples))
    t_build = time.perf_counter() - t0
    t0 = time.perf_counter()
    conflicts = annotate(roadmap.vertices, roadmap.edges, pair_envelope)
    t_annotate = time.perf_counter() - t0
    print(f"roadmap ({scene.name}): {roadmap.n_vertices} vertices, {len(roadmap.edges)} edges, "
          f"{conflicts.count} conflicting pairs")
    print(f"  field {t_field:.2f} s; build incl. annotation {t_build:.2f} s; annotation alone {t_annotate:.2f} s; "
          f"field + build = {t_field + t_build:.2f} s (target ≤ 30 s)")
    # Subset: the first 400 edges and their end vertices; every action pair, vectorised vs plain loop.
    sub_e = roadmap.edges[:400]
    keep, local_edges = np.unique(sub_e, return_inverse=True)
    local_edges = local_edges.reshape(-1, 2)
    p = roadmap.vertices[keep] / pair_envelope
    segs = [(v, v) for v in p.tolist()] + [(p[a].tolist(), p[b].tolist()) for a, b in local_edges]
    t0 = time.perf_counter()
    loop = sum(_loop_distance(*segs[i], *segs[j]) < 1.0 for i in range(len(segs)) for j in range(i + 1, len(segs)))
    t_loop = time.perf_counter() - t0
    reps = 20
    t0 = time.perf_counter()
    for _ in range(reps):
        vec = annotate(roadmap.vertices[keep], local_edges, pair_envelope)
    t_vec = (time.perf_counter() - t0) / reps
    print(f"  annotation subset ({len(segs)} actions, {len(segs) * (len(segs) - 1) // 2} pairs): loop {t_loop:.2f} s "
          f"({loop} conflicts), vectorised {t_vec * 1000:.1f} ms ({vec.count} conflicts) → "
          f"{t_loop / t_vec:.0f}× faster (target ≥ 20×)")


def scene_benchmark(name: str) -> None:
    scene = load_scene(SAMPLES / name)
    t0 = time.perf_counter()
    result = plan(scene, base_dir=SAMPLES, use_cache=False)
    total = time.perf_counter() - t0
    print(f"{scene.name}: {result.trajectory.n_drones} drones, total {total:.2f} s, verified {result.verified}")
    print("  stages: " + ", ".join(f"{k} {v:.2f} s" for k, v in result.stage_seconds.items()))
    for t in result.transitions:
        extra = ""
        if t.search:
            f = t.search
            extra = (f"; {f.solver} w = {f.w:g}: {f.nodes_expanded} nodes expanded, {f.low_level_expansions} "
                     f"low-level expansions, {f.seconds:.2f} s, sum of costs {f.sum_of_costs} "
                     f"(lower bound {f.cost_lower_bound})")
        print(f"  {t.problem.source} → {t.problem.target}: makespan {t.duration:.1f} s = {t.makespan_ratio:.2f}× "
              f"the straight-line lower bound{extra}")


if __name__ == "__main__":
    if "--smoke" in sys.argv[1:]:  # seconds, for CI
        roadmap_benchmark(samples=300)
        scene_benchmark("bridge_inspection.json")
    else:
        roadmap_benchmark()
        roadmap_benchmark(samples=8000)
        scene_benchmark("courtyard_swap.json")
        scene_benchmark("bridge_inspection.json")
