"""Designer drawing benchmarks (run under an X server: ``xvfb-run -a python bench/bench_gui.py``):
time to draw 1 000 planned drones' curves and to advance one animation frame, against a baseline
of one line item per drone, in the same process."""

from __future__ import annotations

import statistics
import sys
import time

import numpy as np
import pyqtgraph.opengl as gl
from PySide6.QtWidgets import QApplication

from app.document import Document
from app.main import prepare_qt
from app.site_view import CURVE_SAMPLES, SiteView
from core.executors import InlineExecutor
from core.formations import grid, sphere
from core.inspection import sample_times
from core.pipeline import plan
from core.scene import scene_from_dict


def thousand_drone_scene(n: int = 1000):
    ground = grid(n, 2.0)
    sky = sphere(n, 40.0, center=(30.0, 30.0, 50.0))
    return scene_from_dict({
        "name": "bench", "site": {"flight_volume": {"lower": [-20, -20, -1], "upper": [90, 90, 100]}},
        "fleet": {"types": [{"name": "q", "radius_xy": 0.3, "radius_z": 0.6, "max_speed_xy": 4, "max_speed_z": 2,
                             "max_acceleration": 3}], "drones": [{"id": f"d{i}", "type": "q"} for i in range(n)]},
        "formations": [{"name": "ground", "points": ground.tolist()}, {"name": "sky", "points": sky.tolist()}],
        "timeline": {"start": "ground", "transitions": [{"to": "sky"}]},
    })


def _render(app, view) -> float:
    t0 = time.perf_counter()
    view.grabFramebuffer()  # forces a full paint
    app.processEvents()
    return time.perf_counter() - t0


def main(n: int = 1000) -> None:
    prepare_qt()
    app = QApplication([])
    scene = thousand_drone_scene(n)
    result = plan(scene, executor=InlineExecutor())
    document = Document(scene)
    view = SiteView(document)
    view.resize(1280, 800)
    view.show()
    app.processEvents()
    t0 = time.perf_counter()
    document.set_plan(result)
    build = time.perf_counter() - t0
    first = _render(app, view)
    frames = []
    for k in range(30):
        t0 = time.perf_counter()
        document.set_time(0.1 * k)
        frames.append(time.perf_counter() - t0 + _render(app, view))
    print(f"1 000 drones, {result.trajectory.n_segments} pieces, {CURVE_SAMPLES} samples per piece: curves built "
          f"in {build * 1e3:.0f} ms, first draw {first * 1e3:.0f} ms; animation frame (positions + draw) median "
          f"{statistics.median(frames) * 1e3:.1f} ms")
    # Baseline: one GLLinePlotItem per drone (the obvious approach).
    traj = result.trajectory
    points = np.swapaxes(traj.evaluate(sample_times(traj, CURVE_SAMPLES)), 0, 1)
    view.removeItem(view._curves)
    t0 = time.perf_counter()
    items = [gl.GLLinePlotItem(pos=p, mode="line_strip") for p in points]
    for item in items:
        view.addItem(item)
    baseline_build = time.perf_counter() - t0
    baseline = [_render(app, view) for _ in range(10)]
    for item in items:
        view.removeItem(item)
    view.addItem(view._curves)
    ours = [_render(app, view) for _ in range(10)]
    print(f"draw only, median of 10: one line item {statistics.median(ours) * 1e3:.1f} ms vs one item per drone "
          f"{statistics.median(baseline) * 1e3:.1f} ms ({statistics.median(baseline) / statistics.median(ours):.1f}×); "
          f"baseline build {baseline_build * 1e3:.0f} ms")
    view.close()
    view.deleteLater()
    app.processEvents()


if __name__ == "__main__":
    main(50 if "--smoke" in sys.argv[1:] else 1000)
