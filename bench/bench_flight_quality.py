"""Flight quality: how close plans come to the limits, and whether any scene falls back.

Run: ``python bench/bench_flight_quality.py`` (``--smoke``: small sizes, for CI). Prints, per
transition, the method, duration, the straight-line (trapezoid) bound and, for roadmap
transitions, the free-space bound, with the ratios; the smoothing rounds' fallbacks; and for the
open-air scenes the cruise law against the one-piece minimum-snap profile in the same process.
Exits 1 when a transition stays stop-and-go or a plan fails verification: a fallback in a bench
scene is a defect to fix, not a figure.
"""

from __future__ import annotations

import sys
import tempfile
import time
from dataclasses import replace
from pathlib import Path

import numpy as np
import stress_scenes
from bench_foundation import show_scene

from core.pipeline import plan
from core.planning import TransitionMethod
from core.scene import load_scene

SAMPLES = Path(__file__).resolve().parents[1] / "sample_scenes"


def open_air(smoke: bool) -> None:
    """Straight-line transitions: makespan over the trapezoid bound, cruise law vs minimum snap."""
    scenes = [("meadow show", load_scene(SAMPLES / "meadow_show.json"))]
    scenes.append(("ground → shell", show_scene(50 if smoke else 1000)))
    for name, scene in scenes:
        for profile in ("cruise", "min_snap"):
            result = plan(scene, settings=replace(scene.planner, profile=profile), base_dir=SAMPLES)
            ratios = ", ".join(f"{t.makespan_ratio:.3f}" for t in result.transitions if t.problem.duration == "fastest")
            print(f"{name:<16} {profile:<9} makespan / trapezoid bound: {ratios}  "
                  f"{'verified' if result.verified else 'NOT VERIFIED'}")


def stress(smoke: bool) -> list[str]:
    """Plan every stress scene; return the defects found (stop-and-go transitions, failed plans)."""
    sizes = {"wall_crossing": (16,) if smoke else (64,), "tower_stations": (4,) if smoke else (10,),
             "line_swap": (3,) if smoke else (5,), "floor_pads": (1, 3) if smoke else (2, 6),
             "mixed_crown": (2, 6) if smoke else (4, 12), "mixed_slot": (1, 3) if smoke else (2, 6)}
    defects = []
    with tempfile.TemporaryDirectory() as folder:
        for builder, args in sizes.items():
            path = stress_scenes.write_scene(getattr(stress_scenes, builder)(*args), Path(folder) / builder, builder)
            defects += _report(load_scene(path), path.parent)
        if not smoke:
            for sample in ("courtyard_swap.json", "viaduct_survey.json"):
                defects += _report(load_scene(SAMPLES / sample), SAMPLES)
    return defects


def _report(scene, base_dir: Path) -> list[str]:
    """Plan ``scene`` on 2 worker processes (pool start included) and print its figures."""
    t0 = time.perf_counter()
    result = plan(scene, base_dir=base_dir, workers=2)
    seconds = time.perf_counter() - t0
    print(f"\n{scene.name}: whole plan {seconds:.1f} s, {'verified' if result.verified else 'NOT VERIFIED'}")
    defects = [] if result.verified else [f"{scene.name}: not verified"]
    for t in result.transitions:
        free = "" if t.free_space_bound is None else \
            f", free-space bound {t.free_space_bound:.2f} s ({t.free_space_ratio:.2f}×)"
        print(f"  {t.problem.source} → {t.problem.target}: {t.method.name.lower()}, {t.duration:.2f} s; "
              f"straight-line bound {t.lower_bound:.2f} s ({t.makespan_ratio:.2f}×){free}")
        if t.search is not None:
            s = t.search
            print(f"    search: {s.solver} ({s.reason}), {s.steps} steps, {s.seconds:.2f} s"
                  + (f"; {s.refinement}" if s.refinement else ""))
        if t.smoothing is not None:
            rounds = [f"{h.duration_s:.2f} s{' (re-timed)' if h.retimed else ''}"
                      f"{'' if h.accepted else (' not kept: no shorter' if h.verified else ' rejected')}"
                      f"{f', kept {len(h.fell_back)} earlier' if h.fell_back else ''}"
                      f"{f', {len(h.second_solver)} by the second solver' if h.second_solver else ''}"
                      for h in t.smoothing.rounds if h.duration_s is not None]
            print(f"    stop-and-go {t.stop_and_go.duration_s:.2f} s; rounds: " + "; ".join(rounds))
            if t.smoothing.note:
                print(f"    note: {t.smoothing.note}")
        if t.method is TransitionMethod.STOP_AND_GO:
            defects.append(f"{scene.name}: {t.problem.where} stayed stop-and-go")
    return defects


def main(smoke: bool) -> int:
    open_air(smoke)
    defects = stress(smoke)
    for d in defects:
        print(f"DEFECT: {d}")
    return 1 if defects else 0


if __name__ == "__main__":
    np.set_printoptions(precision=3)
    sys.exit(main("--smoke" in sys.argv[1:]))
