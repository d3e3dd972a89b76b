"""Motion of the plotted drones over time, one quantity at a time (speed, acceleration, jerk or
snap, chosen with the buttons above), beside the fleet's smallest separation ratio over time
(1 = the clearance). Limits are drawn as lines; a legend names each plotted drone in the colour
the 3D view uses for it. Two plots side by side stay legible in a short dock (1280×720)."""

from __future__ import annotations

import html

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import Qt
from PySide6.QtWidgets import QButtonGroup, QHBoxLayout, QLabel, QPushButton, QVBoxLayout, QWidget

from core.inspection import motion_curves, sample_times

from . import theme
from .document import Document

#: Drones plotted when none is selected.
DEFAULT_PLOTTED = 6
#: Drones named in the legend (the rest are counted).
LEGEND_NAMES = 12
#: Quantity buttons: (button text, key of :func:`core.inspection.motion_curves`, unit, tooltip).
QUANTITIES = (
    ("Speed", "speed", "m/s", "horizontal speed (solid) and vertical speed (dashed) against each type's limits"),
    ("Acceleration", "acceleration", "m/s²", "magnitude of the acceleration against each type's limit"),
    ("Jerk", "jerk", "m/s³", "magnitude of the jerk (rate of change of acceleration): high values shake the airframe"),
    ("Snap", "snap", "m/s⁴", "magnitude of the snap (what the smoothing minimises): a measure of how hard the "
                              "motors work to follow the curve"),
)


class MotionPlots(QWidget):
    """The chosen quantity and the separation ratio side by side, sharing the time axis and a
    movable time cursor."""

    def __init__(self, document: Document, parent=None):
        super().__init__(parent)
        self.document = document
        self.buttons = QButtonGroup(self)
        self.chooser = QWidget()  # a column beside the plots: the dock's height goes to the plots
        bar = QVBoxLayout(self.chooser)
        bar.setContentsMargins(0, 0, 0, 0)
        for k, (text, _, _, tip) in enumerate(QUANTITIES):
            button = QPushButton(text, checkable=True, checked=k == 0, toolTip=tip)
            self.buttons.addButton(button, k)
            bar.addWidget(button)
        self.legend = QLabel(textFormat=Qt.TextFormat.RichText, wordWrap=True,
                             alignment=Qt.AlignmentFlag.AlignTop | Qt.AlignmentFlag.AlignLeft)
        self.legend.setFixedWidth(150)
        bar.addWidget(self.legend, 1)
        self.layout_widget = pg.GraphicsLayoutWidget()
        self.motion = self.layout_widget.addPlot(row=0, col=0)
        self.separation = self.layout_widget.addPlot(row=0, col=1)
        self.separation.setLabel("left", "smallest separation ratio")
        self.layout_widget.ci.layout.setColumnStretchFactor(0, 3)
        self.layout_widget.ci.layout.setColumnStretchFactor(1, 2)
        self.plots = [self.motion, self.separation]
        self.cursors: list[pg.InfiniteLine] = []
        for plot in self.plots:
            plot.showGrid(x=True, y=True, alpha=0.2)
            plot.setMenuEnabled(False, enableViewBoxMenu=False)  # right-click: no plotting-library menu
            plot.setLabel("bottom", "time", units="s")
            cursor = pg.InfiniteLine(angle=90, movable=True)
            cursor.sigPositionChanged.connect(lambda line: self.document.set_time(line.value()))
            self.cursors.append(cursor)
        self.separation.setXLink(self.motion)
        #: Shown instead of the plots until there is a plan (empty axes say nothing).
        self.placeholder = QLabel("No plan yet. Press Plan (F5) to see each drone's speed, acceleration, jerk "
                                  "and snap against its limits, and the fleet's smallest separation over time.",
                                  wordWrap=True, alignment=Qt.AlignmentFlag.AlignCenter)
        row = QHBoxLayout(self)
        row.setContentsMargins(4, 4, 4, 4)
        row.addWidget(self.chooser)
        row.addWidget(self.placeholder, 1)
        row.addWidget(self.layout_widget, 1)
        self.buttons.idClicked.connect(lambda _k: self.refresh())
        document.plan_changed.connect(self.refresh)
        document.selection_changed.connect(self.refresh)
        document.time_changed.connect(self.move_cursor)
        self.apply_theme()

    @property
    def quantity(self) -> tuple[str, str, str, str]:
        """The chosen row of :data:`QUANTITIES`."""
        return QUANTITIES[max(self.buttons.checkedId(), 0)]

    def apply_theme(self) -> None:
        look = theme.current()
        self.layout_widget.setBackground(look.qcolor(look.canvas))
        for plot, cursor in zip(self.plots, self.cursors, strict=True):
            theme.style_plot(plot, look)
            cursor.setPen(pg.mkPen(look.qcolor(look.cursor), width=1))
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
        self.chooser.setVisible(plan is not None)
        if plan is None:
            return
        look = theme.current()
        text, key, unit, _ = self.quantity
        self.motion.setLabel("left", text.lower(), units=unit)
        traj = plan.trajectory
        drones = self.plotted_drones()
        times = sample_times(traj, 32)
        curves = motion_curves(traj, drones, times)
        colours = theme.drone_colours(traj.n_drones)
        limit_pen = pg.mkPen(look.qcolor(look.limit), width=1, style=Qt.PenStyle.DashDotLine)
        # Limit names at the right end, under their lines (inside the plot, clear of the axis and the top).
        label_options = {"color": look.qcolor(look.limit), "position": 0.99, "anchors": [(1, 0), (1, 0)]}
        for k, d in enumerate(drones):
            pen = pg.mkPen(look.qcolor(tuple(colours[d])), width=1.5)
            if key == "speed":
                self.motion.plot(times, curves["speed_xy"][:, k], pen=pen)
                self.motion.plot(times, curves["speed_z"][:, k], pen=pg.mkPen(pen.color(), width=1.5,
                                                                               style=Qt.PenStyle.DashLine))
            else:
                self.motion.plot(times, curves[key][:, k], pen=pen)
        limits = plan.scene.fleet.limits[drones]
        lines = {"speed": ((0, "xy limit"), (1, "z limit")), "acceleration": ((2, "limit"),)}.get(key, ())
        for column, label in lines:
            for value in np.unique(limits[:, column]):
                self.motion.addItem(pg.InfiniteLine(pos=value, angle=0, pen=limit_pen, label=label,
                                                    labelOpts=label_options))
        timeline = plan.report.separation_timeline
        if timeline.get("t"):
            self.separation.plot(np.asarray(timeline["t"]), np.asarray(timeline["min_ratio"], dtype=float),
                                 pen=pg.mkPen(look.qcolor(look.volume), width=1.5))
        above = {**label_options, "anchors": [(1, 1), (1, 1)]}  # the clearance line is at the bottom
        self.separation.addItem(pg.InfiniteLine(pos=1.0, angle=0, pen=limit_pen, label="clearance", labelOpts=above))
        self.legend.setText(self._legend_html(plan.scene.fleet.ids, drones, colours))
        self.move_cursor(self.document.time)

    def _legend_html(self, ids, drones: np.ndarray, colours: np.ndarray) -> str:
        """Coloured squares with the plotted drones' ids (the first :data:`LEGEND_NAMES`)."""
        parts = []
        for d in drones[:LEGEND_NAMES]:
            r, g, b = (int(round(255 * c)) for c in colours[d][:3])
            parts.append(f'<span style="color: rgb({r},{g},{b})">■</span>&nbsp;{html.escape(ids[d])}')
        more = f" and {len(drones) - LEGEND_NAMES} more" if len(drones) > LEGEND_NAMES else ""
        which = "selected" if self.document.selected else "first drones (select drones to plot others)"
        return f"{which}:<br>" + "<br>".join(parts) + more

    def move_cursor(self, t: float) -> None:
        for cursor in self.cursors:
            cursor.blockSignals(True)
            cursor.setValue(t)
            cursor.blockSignals(False)

    def curve_count(self) -> int:
        """Data curves drawn (for tests and the status line)."""
        return sum(len(p.listDataItems()) for p in self.plots)

