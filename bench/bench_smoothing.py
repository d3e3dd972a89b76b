"""Smoothing benchmarks: the courtyard swap's corridors + QP rounds with 2 workers (and inline, same
process), the direct sparse OSQP QP vs the cvxpy formulation of the same QP (build + solve, same
problems), and smoothed vs stop-and-go figures per round.

Run: ``python bench/bench_smoothing.py`` (uses the sample scenes; ``--smoke``: the bridge instead of
the courtyard, 2 QPs, for CI).
"""

from __future__ import annotations

import statistics
import sys
import time
import warnings
from pathlib import Path

import cvxpy as cp
import numpy as np

from core.executors import InlineExecutor
from core.pipeline import plan
from core.scene import load_scene
from core.smoothing import qp, smoother
from core.smoothing.reference import reference_problem

SAMPLES = Path(__file__).resolve().parents[1] / "sample_scenes"


def courtyard_benchmark(name: str = "courtyard_swap.json") -> list[qp.DroneProblem]:
    """Plans the courtyard (or ``name``) with 2 worker processes and inline; returns the first round's QPs."""
    scene = load_scene(SAMPLES / name)
    plan(scene, base_dir=SAMPLES, executor=InlineExecutor())  # warm the roadmap cache
    captured: list[qp.DroneProblem] = []
    original = smoother.solve_drone
    for label, kwargs in (("2 workers", {"workers": 2}), ("inline", {"executor": InlineExecutor()})):
        if label == "inline":
            smoother.solve_drone = lambda p: (captured.append(p), original(p))[1]
        try:
            t0 = time.perf_counter()
            result = plan(scene, base_dir=SAMPLES, **kwargs)
            total = time.perf_counter() - t0
        finally:
            smoother.solve_drone = original
        t = result.transitions[0]
        sec = t.smoothing.seconds
        print(f"{scene.name}, {len(scene.fleet.drones)} drones, {label}: search "
              f"{result.stage_seconds['search']:.2f} s, smoothing {result.stage_seconds['smoothing']:.2f} s "
              f"(corridors {sec['corridors']:.2f} s, QPs {sec['qp']:.2f} s, verification {sec['verification']:.2f} s), "
              f"whole plan {total:.2f} s, verified {result.verified}")
    base = t.stop_and_go
    print(f"  stop-and-go: {base.duration_s:.2f} s, peak acceleration {base.peak_acceleration:.2f} m/s², "
          f"∫|snap|² {base.snap_integral:.4g}")
    for h in t.smoothing.rounds:
        if h.duration_s is not None:
            print(f"  round {h.iteration}: makespan ratio {h.duration_s / base.duration_s:.3f}, peak "
                  f"acceleration ratio {h.peak_acceleration / base.peak_acceleration:.3f}, ∫|snap|² "
                  f"{h.snap_integral:.4g} (ratio {h.snap_integral / base.snap_integral:.4f}), QP objective "
                  f"{h.qp_objective:.4g}, {h.qp_iterations} OSQP iterations")
        else:
            print(f"  round {h.iteration}: no improvement, stopped")
    return captured[:len(scene.fleet.drones)]


def osqp_vs_cvxpy(problems: list[qp.DroneProblem], count: int = 6) -> None:
    """Build + solve time of the same QPs: direct sparse OSQP vs cvxpy (OSQP with the same
    tolerances and a 10× iteration cap, and Clarabel); objective gap of ours to Clarabel's optimum."""
    warnings.filterwarnings("ignore", module="cvxpy")
    picked = problems[:: max(1, len(problems) // count)][:count]
    times = {"direct OSQP": [], "cvxpy + OSQP": [], "cvxpy + Clarabel": []}
    gaps, statuses = [], []
    osqp_options = {**qp.SOLVER_OPTIONS, "max_iter": 10 * qp.SOLVER_OPTIONS["max_iter"]}
    for p in picked:
        t0 = time.perf_counter()
        s = qp.solve_drone(p)
        times["direct OSQP"].append(time.perf_counter() - t0)
        for label, solver, options in (("cvxpy + OSQP", "OSQP", osqp_options), ("cvxpy + Clarabel", "CLARABEL", {})):
            t0 = time.perf_counter()
            prob, _ = reference_problem(p)
            prob.solve(solver=solver, canon_backend=cp.SCIPY_CANON_BACKEND, **options)
            times[label].append(time.perf_counter() - t0)
            statuses.append(f"{solver}: {prob.status}")
        gaps.append((s.objective - prob.value) / prob.value)
    ours = np.array(times["direct OSQP"])
    print(f"QP build+solve, {len(picked)} courtyard drones ({picked[0].degree + 1} control points × "
          f"{len(picked[0].durations)} pieces, {s.facts['rows']} rows):")
    for label, values in times.items():
        ratio = statistics.median(np.array(values) / ours)
        print(f"  {label}: median {statistics.median(values) * 1e3:.0f} ms ({ratio:.1f}× direct OSQP)")
    print(f"  cvxpy statuses: {sorted(set(statuses))}; direct OSQP objective above the Clarabel optimum: "
          f"median {statistics.median(gaps):.2%}, max {max(gaps):.2%}")


if __name__ == "__main__":
    if "--smoke" in sys.argv[1:]:
        osqp_vs_cvxpy(courtyard_benchmark("bridge_inspection.json"), count=2)
    else:
        osqp_vs_cvxpy(courtyard_benchmark())
