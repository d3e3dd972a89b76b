"""Lay out a formation by clicking: a top-down view at a chosen altitude and a side view for height.

Click on empty ground adds a point (snapped to the grid), drag moves a point, click selects (Ctrl
adds to the selection), Delete removes the selected points. Points closer to another point than
the clearance of the drones that can stand on them are drawn red. Every edit is one undo step.
"""

from __future__ import annotations

import numpy as np
import pyqtgraph as pg
from PySide6.QtCore import Qt, Signal
from PySide6.QtWidgets import (
    QCheckBox,
    QDoubleSpinBox,
    QFormLayout,
    QHBoxLayout,
    QLabel,
    QSplitter,
    QVBoxLayout,
    QWidget,
)

from core.clearance import ClearanceModel
from core.scene.occupants import crowded_pairs, possible_shapes
from core.scene.sections import site_section

from . import palette
from .document import Document

#: Undo merge keys from here on: the steps of one drag share a key, so a drag is one undo step.
DRAG_MERGE_BASE = 1000
#: A click within this many pixels of a point picks the point.
PICK_PIXELS = 8.0


def too_close(points: np.ndarray, clearance: ClearanceModel, shapes: np.ndarray | None) -> np.ndarray:
    """Mask ``(n,)`` of points closer to another point than the scene loader allows
    (:func:`core.scene.occupants.crowded_pairs`; ``shapes`` ``(n, K)`` who can stand where)."""
    if len(points) < 2:
        return np.zeros(len(points), dtype=bool)
    pairs, _ = crowded_pairs(points, clearance, shapes)
    mask = np.zeros(len(points), dtype=bool)
    mask[pairs.ravel()] = True
    return mask


class _EditBox(pg.ViewBox):
    """A view box whose clicks and drags edit points (empty-space drags still pan)."""

    clicked = Signal(float, float, object)  # view x, view y, modifiers
    drag_started = Signal(float, float)
    dragged = Signal(float, float, bool)  # view x, view y, finished

    def __init__(self, picker):
        super().__init__()
        self._picker = picker
        self._dragging = False

    def mouseClickEvent(self, ev):  # noqa: N802 - pyqtgraph's name
        if ev.button() == Qt.MouseButton.LeftButton:
            p = self.mapSceneToView(ev.scenePos())
            self.clicked.emit(p.x(), p.y(), ev.modifiers())
            ev.accept()
        else:
            super().mouseClickEvent(ev)

    def mouseDragEvent(self, ev, axis=None):  # noqa: N802 - pyqtgraph's name
        if ev.button() != Qt.MouseButton.LeftButton:
            return super().mouseDragEvent(ev, axis)
        if ev.isStart():
            start = self.mapSceneToView(ev.buttonDownScenePos())
            self._dragging = self._picker(start.x(), start.y()) is not None
            if self._dragging:
                self.drag_started.emit(start.x(), start.y())
        if not self._dragging:
            return super().mouseDragEvent(ev, axis)
        p = self.mapSceneToView(ev.scenePos())
        self.dragged.emit(p.x(), p.y(), ev.isFinish())
        ev.accept()


class _PassiveScatter(pg.ScatterPlotItem):
    """Points that leave clicks to the edit box (which picks them itself)."""

    def mouseClickEvent(self, ev):  # noqa: N802 - pyqtgraph's name
        ev.ignore()


class ProjectionPlot(pg.PlotWidget):
    """One projection of the active formation: ``axes`` (0, 1) = top view, (0, 2) = side view."""

    def __init__(self, axes: tuple[int, int], title: str):
        self.box = _EditBox(self.pick)
        super().__init__(viewBox=self.box, title=title)
        self.axes = axes
        self.points = np.zeros((0, 3))
        self.setAspectLocked(axes == (0, 1))  # true shapes from above; the side view stretches heights
        self.getPlotItem().setMenuEnabled(False, enableViewBoxMenu=False)  # right-click: no plotting-library menu
        self.showGrid(x=True, y=True, alpha=0.25)
        self.setLabel("bottom", "x", units="m")
        self.setLabel("left", "y" if axes[1] == 1 else "z", units="m")
        self.outline = pg.PlotDataItem(pen=pg.mkPen(*(int(255 * c) for c in palette.VOLUME[:3]), width=1))
        #: Where obstacles and keep-out boxes meet the plane points are added in (altitude / side-view y).
        self.obstacles = pg.PlotDataItem(connect="pairs",
                                         pen=pg.mkPen(*(int(255 * c) for c in palette.OBSTACLE_EDGE[:3]), width=2))
        self.scatter = _PassiveScatter(size=10, pxMode=True)
        for item in (self.outline, self.obstacles, self.scatter):
            self.addItem(item)

    def show_volume(self, bounds: np.ndarray) -> None:
        """Outline of the flight volume ``(2, 3)`` in this projection."""
        (x0, y0), (x1, y1) = bounds[:, list(self.axes)]
        self.outline.setData([x0, x1, x1, x0, x0], [y0, y0, y1, y1, y0])

    def show_section(self, segments: np.ndarray) -> None:
        """Obstacle cut lines ``(M, 2, 2)`` metres in this view's coordinates."""
        flat = segments.reshape(-1, 2)
        self.obstacles.setData(flat[:, 0], flat[:, 1])

    def frame_volume(self, bounds: np.ndarray) -> None:
        (x0, y0), (x1, y1) = bounds[:, list(self.axes)]
        self.setRange(xRange=(x0, x1), yRange=(y0, y1), padding=0.05)

    def show_points(self, points: np.ndarray, selected: set[int], close: np.ndarray) -> None:
        self.points = points
        brushes = [pg.mkBrush(*(int(255 * c) for c in (palette.TOO_CLOSE if close[k] else palette.FORMATION)))
                   for k in range(len(points))]
        pens = [pg.mkPen("w", width=2.5) if k in selected else pg.mkPen(None) for k in range(len(points))]
        self.scatter.setData(pos=points[:, list(self.axes)], brush=brushes, pen=pens)

    def pick(self, x: float, y: float) -> int | None:
        """Index of the point within :data:`PICK_PIXELS` of view position (x, y), or None."""
        if not len(self.points):
            return None
        px, py = self.box.viewPixelSize()
        d = np.hypot((self.points[:, self.axes[0]] - x) / px, (self.points[:, self.axes[1]] - y) / py)
        k = int(np.argmin(d))
        return k if d[k] <= PICK_PIXELS else None


class LayoutView(QWidget):
    """Top and side views of the active formation, with altitude, grid and snapping controls."""

    def __init__(self, document: Document, parent=None):
        super().__init__(parent)
        self.document = document
        self.selected: set[int] = set()
        self._drag_index: int | None = None
        self._drag_serial = 0
        self._section_key: tuple | None = None  # (site, altitude, side-view y) of the cuts drawn
        self.altitude = QDoubleSpinBox(minimum=-1000, maximum=10000, value=2.0, suffix=" m", singleStep=0.5,
                                       toolTip="height of points added in the top view")
        self.section_y = QDoubleSpinBox(minimum=-10000, maximum=10000, value=0.0, suffix=" m", singleStep=0.5,
                                        toolTip="y of points added in the side view")
        self.grid = QDoubleSpinBox(minimum=0.05, maximum=100, value=1.0, suffix=" m", singleStep=0.25)
        self.snap = QCheckBox("snap to grid", checked=True)
        self.status = QLabel()
        controls = QFormLayout()
        row = QHBoxLayout()
        for label, w in (("altitude", self.altitude), ("side-view y", self.section_y), ("grid", self.grid)):
            row.addWidget(QLabel(label))
            row.addWidget(w)
        row.addWidget(self.snap)
        row.addStretch(1)
        controls.addRow(row)
        self.top = ProjectionPlot((0, 1), "from above")
        self.side = ProjectionPlot((0, 2), "from the side")
        split = QSplitter(Qt.Orientation.Vertical)
        split.addWidget(self.top)
        split.addWidget(self.side)
        split.setSizes([600, 250])
        layout = QVBoxLayout(self)
        layout.addLayout(controls)
        layout.addWidget(split, 1)
        layout.addWidget(self.status)
        for plot in (self.top, self.side):
            plot.box.clicked.connect(lambda x, y, mods, plot=plot: self._clicked(plot, x, y, mods))
            plot.box.drag_started.connect(lambda x, y, plot=plot: self._drag_start(plot, x, y))
            plot.box.dragged.connect(lambda x, y, done, plot=plot: self._drag(plot, x, y, done))
        document.scene_changed.connect(self.refresh)
        document.formation_chosen.connect(self._formation_chosen)
        self.altitude.valueChanged.connect(self.refresh_sections)
        self.section_y.valueChanged.connect(self.refresh_sections)
        self.altitude.setToolTip("height of points added in the top view; obstacles are drawn where they "
                                 "meet this height")
        self.section_y.setToolTip("y of points added in the side view; obstacles are drawn where they meet "
                                  "this plane")
        self.refresh()
        self.frame()

    def refresh_sections(self) -> None:
        """Draw where meshes and keep-out boxes meet the top view's altitude and the side view's
        plane; cut again only when the site or a plane changed (not on every point edit)."""
        scene = self.document.scene
        key = (scene.site, self.altitude.value(), self.section_y.value())
        if key == self._section_key:
            return
        self._section_key = key
        meshes, boxes = self.document.meshes(), [b.bounds for b in scene.site.keep_out]
        self.top.show_section(site_section(meshes, boxes, 2, self.altitude.value(), self.top.axes))
        self.side.show_section(site_section(meshes, boxes, 1, self.section_y.value(), self.side.axes))

    def frame(self) -> None:
        """Fit both views to the flight volume."""
        for plot in (self.top, self.side):
            plot.frame_volume(self.document.scene.site.flight_volume.bounds)

    # --- helpers -----------------------------------------------------------------------------
    @property
    def formation(self):
        return self.document.formation(self.document.active_formation)

    def snapped(self, value: float) -> float:
        g = self.grid.value()
        return round(value / g) * g if self.snap.isChecked() else value

    def _point_from(self, plot: ProjectionPlot, x: float, y: float, base: np.ndarray | None = None) -> np.ndarray:
        if base is not None:
            p = np.array(base, dtype=float)
        elif plot is self.top:
            p = np.array([0.0, 0.0, self.altitude.value()])
        else:
            p = np.array([0.0, self.section_y.value(), 0.0])
        p[plot.axes[0]], p[plot.axes[1]] = self.snapped(x), self.snapped(y)
        return p

    # --- events ------------------------------------------------------------------------------
    def _formation_chosen(self, _name: str) -> None:
        self.selected = set()
        self.refresh()

    def refresh(self) -> None:
        f = self.formation
        points = f.positions
        self.selected = {k for k in self.selected if k < len(points)}
        scene = self.document.scene
        close = too_close(points, scene.fleet.clearance, possible_shapes(scene)[f.name])
        for plot in (self.top, self.side):
            plot.show_points(points, self.selected, close)
            plot.show_volume(self.document.scene.site.flight_volume.bounds)
        self.refresh_sections()
        n_fleet = len(self.document.scene.fleet.drones)
        text = f"{f.name}: {len(points)} points for {n_fleet} drones"
        if close.any():
            text += f"; {int(close.sum())} points closer than the clearance (red)"
        self.status.setText(text)

    def _clicked(self, plot: ProjectionPlot, x: float, y: float, modifiers) -> None:
        k = plot.pick(x, y)
        if k is not None:
            if modifiers & Qt.KeyboardModifier.ControlModifier:
                self.selected ^= {k}
            else:
                self.selected = {k}
            self.refresh()
            return
        f = self.formation
        points = np.vstack([f.positions, self._point_from(plot, x, y)])
        groups = None if f.groups is None else f.groups + (f.groups[-1],)
        self.selected = {len(points) - 1}
        self.document.edit_formation(f.name, points, groups, f"add point to {f.name}")

    def _drag_start(self, plot: ProjectionPlot, x: float, y: float) -> None:
        self._drag_index = plot.pick(x, y)
        self._drag_serial += 1
        if self._drag_index is not None:
            self.selected = {self._drag_index}

    def _drag(self, plot: ProjectionPlot, x: float, y: float, finished: bool) -> None:
        if self._drag_index is None:
            return
        f = self.formation
        points = f.positions.copy()
        points[self._drag_index] = self._point_from(plot, x, y, base=points[self._drag_index])
        self.document.edit_formation(f.name, points, f.groups, f"move point in {f.name}",
                                     DRAG_MERGE_BASE + self._drag_serial)
        if finished:
            self._drag_index = None

    def delete_selected(self) -> None:
        f = self.formation
        if not self.selected or len(self.selected) >= len(f.positions):
            return
        keep = [k for k in range(len(f.positions)) if k not in self.selected]
        groups = None if f.groups is None else tuple(f.groups[k] for k in keep)
        self.selected = set()
        self.document.edit_formation(f.name, f.positions[keep], groups, f"delete points from {f.name}")

    def keyPressEvent(self, event):  # noqa: N802 - Qt's name
        if event.key() in (Qt.Key.Key_Delete, Qt.Key.Key_Backspace):
            self.delete_selected()
        else:
            super().keyPressEvent(event)

