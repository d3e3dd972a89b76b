"""Planning-wing benchmarks, each a ratio measured in one process (machines are noisy):

1. QP set-up per smoothing round: every drone's QP matrices built from scratch vs with the
   round-independent rows built once per transition (the same matrices, so the same plan).
2. Export of a 1 000-drone plan with 40 pieces per drone (target ≤ 3 s), and the share of the
   power-basis conversion, which now runs once per export instead of once per drone.
3. A Dask LocalCluster vs the process pool (2 workers each) on a roadmap scene.

Run: ``python bench/bench_planning.py`` (full sizes) or ``python bench/bench_planning.py --smoke``
(seconds; CI runs this through ``tests/test_benchmarks.py``).
"""

from __future__ import annotations

import sys
import tempfile
import time
from dataclasses import replace
from pathlib import Path

import numpy as np

ROOT = Path(__file__).resolve().parents[1]
sys.path.insert(0, str(ROOT))

from core.bezier import split_equal_parts  # noqa: E402
from core.export import export_plan  # noqa: E402
from core.pipeline import plan  # noqa: E402
from core.scene import load_scene  # noqa: E402
from core.smoothing import qp  # noqa: E402
from core.trajectory import FleetTrajectory  # noqa: E402

sys.path.insert(0, str(ROOT / "bench"))
from bench_foundation import show_scene  # noqa: E402


def qp_setup(scene_name: str) -> None:
    """Smooth a scene's first roadmap transition once, collecting its round-2 QPs; then time their
    matrix set-up both ways."""
    captured = []
    solve = qp.solve_drone

    def capture(problem, options=None):
        captured.append(problem)
        return solve(problem, options)

    qp.solve_drone = capture
    import core.smoothing.smoother as smoother
    smoother.solve_drone = capture
    try:
        path = ROOT / "sample_scenes" / scene_name
        result = plan(load_scene(path), base_dir=path.parent, workers=1)
    finally:
        qp.solve_drone = smoother.solve_drone = solve
    n = result.scene.fleet.ids.__len__()
    later = captured[n: 2 * n] or captured[:n]  # a later round: the fixed rows are cached by then
    fresh = [replace(p, fixed_key=None) for p in later]
    t0 = time.perf_counter()
    for p in fresh:
        qp.build_matrices(p)
    rebuilt = time.perf_counter() - t0
    for p in later:
        qp.build_matrices(p)  # warm the cache
    t0 = time.perf_counter()
    for p in later:
        qp.build_matrices(p)
    once = time.perf_counter() - t0
    t0 = time.perf_counter()
    for p in later:
        solve(p)
    whole = time.perf_counter() - t0
    same = all(np.array_equal(qp.build_matrices(a).A.toarray(), qp.build_matrices(b).A.toarray())
               for a, b in zip(fresh[:3], later[:3], strict=True))
    print(f"QP set-up, {scene_name}, {len(later)} drone QPs of one round: rebuilt {rebuilt * 1e3:.1f} ms, fixed rows "
          f"once {once * 1e3:.1f} ms → {rebuilt / once:.2f}× faster set-up; whole round (set-up + OSQP) "
          f"{whole * 1e3:.0f} ms, so the round is {whole / (whole - rebuilt + once):.2f}× faster; same matrices {same}")


def export_speed(n: int, pieces: int) -> None:
    result = plan(show_scene(n), workers=1)
    traj = result.trajectory
    split = split_equal_parts(traj.control_points, pieces)  # the same curves, cut into `pieces` per piece
    n_drones, segments = traj.n_drones, traj.n_segments * pieces
    fractions = np.tile(np.arange(1, pieces + 1) / pieces, traj.n_segments)
    breaks = np.r_[0.0, np.repeat(traj.breaks[:-1], pieces) + fractions * np.repeat(traj.durations, pieces)]
    fine = FleetTrajectory(breaks, split.reshape(n_drones, segments, *split.shape[-2:]), traj.drone_ids)
    result = replace(result, trajectory=fine, transitions=result.transitions)
    with tempfile.TemporaryDirectory() as folder:
        t0 = time.perf_counter()
        fine.monomial_coefficients()
        convert = time.perf_counter() - t0
        t0 = time.perf_counter()
        export_plan(result, Path(folder) / "out")
        total = time.perf_counter() - t0
        size = sum(p.stat().st_size for p in (Path(folder) / "out").rglob("*") if p.is_file()) / 2**20
    print(f"export, {n_drones} drones × {segments} pieces, {fine.duration:.0f} s at 10 Hz: {total:.2f} s "
          f"({size:.0f} MiB); "
          f"power-basis conversion once {convert:.3f} s — once per drone it would be {n_drones * convert:.1f} s")


def dask_vs_pool(scene_name: str) -> None:
    from dask.distributed import Client, LocalCluster

    path = ROOT / "sample_scenes" / scene_name
    scene = load_scene(path)
    t0 = time.perf_counter()
    pooled = plan(scene, base_dir=path.parent, workers=2)
    pool_s = time.perf_counter() - t0
    t0 = time.perf_counter()
    with LocalCluster(n_workers=2, threads_per_worker=1, processes=True, dashboard_address=None) as cluster, \
            Client(cluster) as client:
        started = time.perf_counter() - t0
        clustered = plan(scene, base_dir=path.parent, executor=client.get_executor())
    dask_s = time.perf_counter() - t0
    same = np.array_equal(pooled.trajectory.control_points, clustered.trajectory.control_points)
    print(f"{scene_name}: process pool (2) {pool_s:.1f} s, Dask LocalCluster (2) {dask_s:.1f} s including "
          f"{started:.1f} s start-up → ratio {dask_s / pool_s:.2f}; identical plans {same}")


def main(smoke: bool) -> None:
    qp_setup("bridge_inspection.json" if smoke else "courtyard_swap.json")
    export_speed(*((20, 4) if smoke else (1000, 40)))
    dask_vs_pool("bridge_inspection.json" if smoke else "courtyard_swap.json")


if __name__ == "__main__":
    main("--smoke" in sys.argv[1:])
