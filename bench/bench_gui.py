"""Designer drawing benchmarks at 1 000 drones (run under an X server: ``xvfb-run -a python
bench/bench_gui.py``; ``--smoke`` runs 50 drones). Each figure is a ratio against a baseline timed
in the same process (machines are noisy):

- curves: one line item for the whole fleet against one item per drone (draw time);
- animation frame: positions at a new time plus a full draw, against a draw alone;
- selection: ten drones selected (recolour curves and markers, ellipsoids, motion plots, drone
  list, layout outline, then draw) against rebuilding every curve and drawing;
- layout: a moved point redrawn (crowding check, group colours, zoom-scaled markers) and a zoom
  step (markers re-scaled), against setting the same points on a bare scatter.
"""

from __future__ import annotations

import statistics
import sys
import time

import numpy as np
import pyqtgraph as pg
import pyqtgraph.opengl as gl
from PySide6.QtCore import QSettings
from PySide6.QtWidgets import QApplication

from app.document import Document
from app.main import prepare_qt
from app.main_window import MainWindow
from app.site_view import CURVE_SAMPLES
from core.executors import InlineExecutor
from core.formations import grid, sphere
from core.inspection import sample_times
from core.pipeline import plan
from core.scene import scene_from_dict


def thousand_drone_scene(n: int = 1000):
    ground = grid(n, 2.0)
    sky = sphere(n, 40.0, center=(30.0, 30.0, 50.0))
    groups = [f"g{k * 8 // n}" for k in range(n)]  # eight start groups, as a show's colour blocks
    return scene_from_dict({
        "name": "bench", "site": {"flight_volume": {"lower": [-20, -20, -1], "upper": [90, 90, 100]}},
        "fleet": {"types": [{"name": "q", "radius_xy": 0.3, "radius_z": 0.6, "max_speed_xy": 4, "max_speed_z": 2,
                             "max_acceleration": 3}], "drones": [{"id": f"d{i}", "type": "q"} for i in range(n)]},
        "formations": [{"name": "ground", "points": ground.tolist(), "groups": groups},
                       {"name": "sky", "points": sky.tolist()}],
        "timeline": {"start": "ground", "transitions": [{"to": "sky"}]},
    })


def _median_ms(samples: list[float]) -> float:
    return 1e3 * statistics.median(samples)


def _timed(app, action, repeats: int) -> list[float]:
    """Seconds of ``action(k)`` and the events it causes (the repaints of every shown view that
    changed), ``repeats`` times."""
    out = []
    for k in range(repeats):
        t0 = time.perf_counter()
        action(k)
        app.processEvents()
        out.append(time.perf_counter() - t0)
    return out


def main(n: int = 1000) -> None:
    prepare_qt()
    app = QApplication([])
    scene = thousand_drone_scene(n)
    result = plan(scene, executor=InlineExecutor())
    settings = QSettings(QSettings.Format.IniFormat, QSettings.Scope.UserScope, "SkyloomBench", "gui")
    document = Document(scene, None, settings)
    window = MainWindow(document)
    window.resize(1280, 720)
    window.show()
    app.processEvents()
    view = window.site

    t0 = time.perf_counter()
    document.set_plan(result)
    app.processEvents()
    build = time.perf_counter() - t0
    draws = _timed(app, lambda k: view.update(), 10)
    frames = _timed(app, lambda k: document.set_time(0.1 * (k + 1)), 30)
    print(f"{n} drones, {result.trajectory.n_segments} pieces, {CURVE_SAMPLES} samples per piece: plan shown in "
          f"{build * 1e3:.0f} ms; animation frame (positions, time bar, plot cursors, repaints) median "
          f"{_median_ms(frames):.1f} ms = {_median_ms(frames) / _median_ms(draws):.2f}× a repaint of the 3D view "
          f"alone ({_median_ms(draws):.1f} ms)")

    # Selection: ten drones at a time, against rebuilding every curve (what a selection would cost
    # if the view re-sampled the plan instead of recolouring it).
    chosen = [tuple(sorted({(k * 10 + j) % n for j in range(10)})) for k in range(12)]
    select = _timed(app, lambda k: document.select(chosen[k % len(chosen)]), 12)
    rebuild = _timed(app, lambda k: view.refresh_plan(), 6)
    print(f"selecting 10 drones (3D, motion plots, drone list, layout, repaints): median {_median_ms(select):.1f} "
          f"ms = {_median_ms(select) / _median_ms(rebuild):.2f}× re-sampling every curve and repainting the 3D view "
          f"({_median_ms(rebuild):.1f} ms)")
    document.select(())

    # Formation layout: a moved point and a zoom step, against a bare scatter of the same points.
    layout = window.layout_view
    window.centre.setCurrentWidget(layout)
    app.processEvents()
    start = document.formation("ground")
    pts = start.positions.copy()

    def move(k: int) -> None:
        pts[k] += (0.0, 0.0, 0.5)
        document.edit_formation("ground", pts, start.groups, "move")

    moved = _timed(app, move, 10)
    zoom = _timed(app, lambda k: layout.top.box.scaleBy((0.9, 0.9)), 10)
    bare = pg.PlotWidget()
    bare.resize(layout.top.size())
    bare.show()
    scatter = pg.ScatterPlotItem(size=10, pxMode=True)
    bare.addItem(scatter)
    baseline = _timed(app, lambda k: scatter.setData(pos=pts[:, :2] + k * 0.01), 10)
    print(f"layout with {n} points: a moved point redrawn (crowding, group colours, scaled markers, both views) "
          f"median {_median_ms(moved):.1f} ms, a zoom step {_median_ms(zoom):.1f} ms; a bare scatter of the same "
          f"points {_median_ms(baseline):.1f} ms (one view) → {_median_ms(moved) / _median_ms(baseline):.1f}× and "
          f"{_median_ms(zoom) / _median_ms(baseline):.1f}×")

    # Curves: one line item against one item per drone (the obvious approach).
    window.centre.setCurrentWidget(view)
    app.processEvents()
    traj = result.trajectory
    points = np.swapaxes(traj.evaluate(sample_times(traj, CURVE_SAMPLES)), 0, 1)
    view.removeItem(view._curves)
    t0 = time.perf_counter()
    items = [gl.GLLinePlotItem(pos=p, mode="line_strip") for p in points]
    for item in items:
        view.addItem(item)
    baseline_build = time.perf_counter() - t0
    per_drone = _timed(app, lambda k: view.update(), 10)
    for item in items:
        view.removeItem(item)
    view.addItem(view._curves)
    ours = _timed(app, lambda k: view.update(), 10)
    print(f"3D repaint, median of 10: one line item {_median_ms(ours):.1f} ms vs one item per drone "
          f"{_median_ms(per_drone):.1f} ms ({_median_ms(per_drone) / _median_ms(ours):.1f}×); "
          f"baseline build {baseline_build * 1e3:.0f} ms")
    document.undo_stack.setClean()  # nothing to ask about on close
    window.close()
    bare.close()
    app.processEvents()


if __name__ == "__main__":
    main(50 if "--smoke" in sys.argv[1:] else 1000)
