"""Foundation benchmarks: obstacle-free unlabeled transition (ground grid → sphere shell).

Run: ``python bench/bench_foundation.py [N ...]`` (default 100 1000 5000; ``--smoke``: 50, for CI). Prints stage times,
the verifier's speed-up over a naive all-pairs numpy check at the same sample times (same
process, so machine noise affects both alike), and the makespan ratio to the trapezoidal bound.
"""

from __future__ import annotations

import sys
import time

import numpy as np

from core.clearance import ClearanceModel
from core.formations import grid, sphere
from core.pipeline import plan
from core.scene import scene_from_dict
from core.verify import spec_from_scene
from core.verify.checker import check_separation

AXES = np.array([0.3, 0.3, 0.8])


def show_scene(n: int):
    ground = grid(n, 2.0)
    centre = ground.mean(axis=0) + [0.0, 0.0, 60.0]
    radius = 1.0
    model = ClearanceModel(np.repeat(AXES[None], n, axis=0))
    while model.neighbourhood(sphere(n, radius, centre), 0.0)[2].min() < 1.5:
        radius *= 1.05
    shell = sphere(n, radius, centre)
    lo = np.minimum(ground.min(0), shell.min(0)) - 5
    hi = np.maximum(ground.max(0), shell.max(0)) + 5
    return scene_from_dict({
        "name": f"bench {n}",
        "site": {"flight_volume": {"lower": lo.tolist(), "upper": hi.tolist()}},
        "fleet": {"types": [{"name": "q", "radius_xy": 0.3, "radius_z": 0.8, "max_speed_xy": 6.0,
                             "max_speed_z": 3.0, "max_acceleration": 4.0}],
                  "drones": [{"id": f"D{i:05d}", "type": "q"} for i in range(n)]},
        "formations": [{"name": "ground", "points": ground.tolist()}, {"name": "shell", "points": shell.tolist()}],
        "timeline": {"start": "ground", "transitions": [{"to": "shell", "assignment": "unlabeled"}]},
    })


def naive_separation(traj, semi_axes, times) -> float:
    """All-pairs numpy ratio check at ``times``; returns the smallest ratio."""
    radii = semi_axes[:, None, :] + semi_axes[None, :, :]
    worst = np.inf
    for t in times:
        p = traj.evaluate(np.array([t]))[0]
        r = np.linalg.norm((p[:, None, :] - p[None, :, :]) / radii, axis=-1)
        np.fill_diagonal(r, np.inf)
        worst = min(worst, r.min())
    return worst


def main(sizes: list[int]) -> None:
    print(f"{'N':>6} {'straight s':>10} {'verify s':>9} {'total s':>8} {'method':>20} "
          f"{'min ratio':>9} {'makespan/LB':>11}")
    for n in sizes:
        scene = show_scene(n)
        t0 = time.perf_counter()
        result = plan(scene)
        total = time.perf_counter() - t0
        st, tr = result.stage_seconds, result.transitions[0]
        print(f"{n:>6} {st['straight lines']:>10.2f} {st['verification']:>9.2f} {total:>8.2f} "
              f"{tr.assignment.method:>20} {result.report.min_separation_ratio:>9.3f} {tr.makespan_ratio:>11.3f}"
              f"  {'PASSED' if result.verified else 'FAILED'}")
        if n == 1000:
            spec = spec_from_scene(scene)
            t0 = time.perf_counter()
            _, per_drone, timeline, facts = check_separation(result.trajectory, spec)
            ours = time.perf_counter() - t0
            t0 = time.perf_counter()
            naive_min = naive_separation(result.trajectory, spec.semi_axes, np.asarray(timeline["t"]))
            naive = time.perf_counter() - t0
            print(f"       separation check at N=1000 over {facts['separation_samples']} sample times: ours "
                  f"{ours:.2f} s, naive all-pairs {naive:.2f} s → {naive / ours:.1f}× faster "
                  f"(min ratio ours {per_drone.min():.4f}, naive {naive_min:.4f})")


if __name__ == "__main__":
    args = sys.argv[1:]
    main([50] if "--smoke" in args else [int(a) for a in args] or [100, 1000, 5000])
