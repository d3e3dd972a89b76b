"""Speed, acceleration, jerk and snap over time for the selected drones (limit lines drawn), and
the fleet's smallest separation ratio over time (1 = the clearance)."""

from __future__ import annotations

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import Qt
from PySide6.QtWidgets import QLabel, QVBoxLayout, QWidget

from core.inspection import motion_curves, sample_times

from . import palette
from .document import Document

#: Drones plotted when none is selected.
DEFAULT_PLOTTED = 6


class MotionPlots(QWidget):
    """Five stacked plots sharing the time axis, each with a time cursor."""

    ROWS = (("speed", "m/s"), ("accel.", "m/s²"), ("jerk", "m/s³"), ("snap", "m/s⁴"), ("min. sep. ratio", ""))

    def __init__(self, document: Document, parent=None):
        super().__init__(parent)
        self.document = document
        self.layout_widget = pg.GraphicsLayoutWidget()
        self.plots: list[pg.PlotItem] = []
        self.cursors: list[pg.InfiniteLine] = []
        for row, (name, unit) in enumerate(self.ROWS):
            plot = self.layout_widget.addPlot(row=row, col=0)
            plot.setLabel("left", name, units=unit)
            plot.showGrid(x=True, y=True, alpha=0.2)
            plot.setMenuEnabled(False, enableViewBoxMenu=False)  # right-click: no plotting-library menu
            if self.plots:
                plot.setXLink(self.plots[0])
            cursor = pg.InfiniteLine(angle=90, movable=True, pen=pg.mkPen("w", width=1))
            cursor.sigPositionChanged.connect(lambda line: self.document.set_time(line.value()))
            plot.addItem(cursor)
            self.plots.append(plot)
            self.cursors.append(cursor)
        for plot in self.plots[:-1]:  # one time axis, at the bottom
            plot.getAxis("bottom").setStyle(showValues=False)
            plot.getAxis("bottom").setHeight(4)
        self.plots[-1].setLabel("bottom", "time", units="s")
        #: Shown instead of the plots until there is a plan (empty axes say nothing).
        self.placeholder = QLabel("No plan yet. Press Plan (F5) to see each drone's speed, acceleration, jerk "
                                  "and snap against its limits, and the fleet's smallest separation over time.",
                                  wordWrap=True, alignment=Qt.AlignmentFlag.AlignCenter)
        column = QVBoxLayout(self)
        column.addWidget(self.placeholder)
        column.addWidget(self.layout_widget)
        document.plan_changed.connect(self.refresh)
        document.selection_changed.connect(self.refresh)
        document.time_changed.connect(self.move_cursor)
        self.refresh()

    def plotted_drones(self) -> np.ndarray:
        plan = self.document.plan
        if plan is None:
            return np.zeros(0, dtype=int)
        chosen = self.document.selected or tuple(range(min(DEFAULT_PLOTTED, plan.trajectory.n_drones)))
        return np.array(chosen, dtype=int)

    def refresh(self) -> None:
        for plot, cursor in zip(self.plots, self.cursors, strict=True):
            plot.clear()
            plot.addItem(cursor)
        plan = self.document.plan
        self.placeholder.setVisible(plan is None)
        self.layout_widget.setVisible(plan is not None)
        if plan is None:
            return
        traj = plan.trajectory
        drones = self.plotted_drones()
        times = sample_times(traj, 32)
        curves = motion_curves(traj, drones, times)
        colours = palette.drone_colours(traj.n_drones)
        for k, d in enumerate(drones):
            pen = pg.mkPen(*(int(255 * c) for c in colours[d][:3]), width=1.5)
            self.plots[0].plot(times, curves["speed_xy"][:, k], pen=pen)
            dashed = pg.mkPen(pen.color(), width=1.5, style=Qt.PenStyle.DashLine)
            self.plots[0].plot(times, curves["speed_z"][:, k], pen=dashed)
            for row, name in ((1, "acceleration"), (2, "jerk"), (3, "snap")):
                self.plots[row].plot(times, curves[name][:, k], pen=pen)
        limits = plan.scene.fleet.limits[drones]
        limit_pen = pg.mkPen(255, 90, 90, width=1, style=Qt.PenStyle.DotLine)
        for value in np.unique(limits[:, 0]):
            self.plots[0].addItem(pg.InfiniteLine(pos=value, angle=0, pen=limit_pen, label="xy limit"))
        for value in np.unique(limits[:, 1]):
            self.plots[0].addItem(pg.InfiniteLine(pos=value, angle=0, pen=limit_pen, label="z limit"))
        for value in np.unique(limits[:, 2]):
            self.plots[1].addItem(pg.InfiniteLine(pos=value, angle=0, pen=limit_pen, label="limit"))
        timeline = plan.report.separation_timeline
        if timeline.get("t"):
            self.plots[4].plot(np.asarray(timeline["t"]), np.asarray(timeline["min_ratio"], dtype=float),
                               pen=pg.mkPen(120, 200, 255, width=1.5))
        self.plots[4].addItem(pg.InfiniteLine(pos=1.0, angle=0, pen=limit_pen, label="clearance"))
        self.move_cursor(self.document.time)

    def move_cursor(self, t: float) -> None:
        for cursor in self.cursors:
            cursor.blockSignals(True)
            cursor.setValue(t)
            cursor.blockSignals(False)

    def curve_count(self) -> int:
        """Data curves drawn (for tests and the status line)."""
        return sum(len(p.listDataItems()) for p in self.plots)
