"""Lay out a formation by clicking: a top-down view at a chosen altitude and a side view for height.

Click on empty ground adds a point (snapped to the grid), Shift-click always adds one (also on
top of points stacked in height), drag moves a point, click selects (Ctrl adds to the
selection), Delete removes the selected points. Every edit is one undo step.

What is drawn: the flight volume, where obstacle meshes and keep-out boxes meet the working plane,
the points in their group's colour (red: closer to another point than the clearance of the drones
that can stand on them; faded: away from the working plane, on another layer), markers as wide
as the clearance at the current zoom (kept between :data:`MARKER_PIXELS`), and the id of the
point under the mouse (its group, and which drone stands there when that is known). Selected
points and selected drones are the same thing where the formation says which drone stands where:
the start formation, and any formation the current plan flies to.
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

from . import theme
from .document import Document

#: Undo merge keys from here on: the steps of one drag share a key, so a drag is one undo step.
DRAG_MERGE_BASE = 1000
#: A click within this many pixels of a point picks the point.
PICK_PIXELS = 8.0
#: Points drawn within this many pixels of the nearest one count as stacked on it (in height, from above).
STACKED_PIXELS = 2.0
#: Opacity kept by points away from the working plane (another layer, seen through).
OFF_PLANE_ALPHA = 0.3
#: Markers are the clearance's width at the current zoom, but never smaller or larger than this (px).
MARKER_PIXELS = (5.0, 40.0)


def too_close(points: np.ndarray, clearance: ClearanceModel, shapes: np.ndarray | None) -> np.ndarray:
    """Mask ``(n,)`` of points closer to another point than the scene loader allows
    (:func:`core.scene.occupants.crowded_pairs`; ``shapes`` ``(n, K)`` who can stand where)."""
    if len(points) < 2:
        return np.zeros(len(points), dtype=bool)
    pairs, _ = crowded_pairs(points, clearance, shapes)
    mask = np.zeros(len(points), dtype=bool)
    mask[pairs.ravel()] = True
    return mask


def occupant_reach(clearance: ClearanceModel, shapes: np.ndarray, axis: int) -> np.ndarray:
    """``(n,)`` m: the largest clearance half-axis along ``axis`` (0 = x, 2 = z) of the drones
    that can stand on each point (``shapes`` ``(n, K)`` from
    :func:`core.scene.occupants.possible_shapes`)."""
    return np.where(shapes, clearance.kind_axes[None, :, axis], 0.0).max(axis=1, initial=0.0)


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
        self.widths = np.zeros(0)
        #: Depth of the plane points are added in (altitude or side-view y); the top view prefers
        #: the point nearest it when points are stacked.
        self.plane = 0.0
        self.setAspectLocked(axes == (0, 1))  # true shapes from above; the side view stretches heights
        self.getPlotItem().setMenuEnabled(False, enableViewBoxMenu=False)  # right-click: no plotting-library menu
        self.showGrid(x=True, y=True, alpha=0.25)
        self.setLabel("bottom", "x", units="m")
        self.setLabel("left", "y" if axes[1] == 1 else "z", units="m")
        self.outline = pg.PlotDataItem()
        #: Where obstacles and keep-out boxes meet the plane points are added in (altitude / side-view y).
        self.obstacles = pg.PlotDataItem(connect="pairs")
        self.scatter = _PassiveScatter(size=10, pxMode=True)
        #: The selected points' outlines, drawn over the points (a selection redraws only these).
        self.outlines = _PassiveScatter(size=10, pxMode=True, brush=None)
        self.selected: list[int] = []
        self.hover_label = pg.TextItem(anchor=(0, 1))
        self.hover_label.setZValue(10)
        self.hover_label.hide()
        for item in (self.outline, self.obstacles, self.scatter, self.outlines, self.hover_label):
            self.addItem(item)
        self.box.sigRangeChanged.connect(lambda *_args: self.scale_markers())

    def apply_theme(self) -> None:
        look = theme.current()
        self.setBackground(look.qcolor(look.canvas))
        theme.style_plot(self.getPlotItem(), look)
        self.outline.setPen(pg.mkPen(look.qcolor(look.volume), width=1))
        self.obstacles.setPen(pg.mkPen(look.qcolor(look.obstacle_edge[:3] + (1.0,)), width=2))
        self.hover_label.setColor(look.qcolor(look.canvas_text))

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

    def show_points(self, points: np.ndarray, colours: np.ndarray, widths: np.ndarray, reach: np.ndarray) -> None:
        """``points`` ``(n, 3)`` m filled with ``colours`` ``(n, 4)``, markers ``widths`` ``(n,)`` m
        wide at the current zoom; points farther than ``reach`` ``(n,)`` m from the working plane
        (along the axis this view looks along) are faded: they are on another layer. One brush
        per distinct colour: the plotting library renders a symbol per distinct brush."""
        look = theme.current()
        self.points, self.widths = points, widths
        depth = 3 - sum(self.axes)
        colours = np.array(colours, dtype=float)
        colours[np.abs(points[:, depth] - self.plane) > reach, 3] *= OFF_PLANE_ALPHA
        distinct, which = np.unique(np.asarray(colours), axis=0, return_inverse=True)
        brushes = [pg.mkBrush(look.qcolor(tuple(c))) for c in distinct]
        self.scatter.setData(pos=points[:, list(self.axes)], brush=[brushes[k] for k in np.ravel(which)],
                             pen=None, size=self.marker_pixels())
        self.show_selection(self.selected)

    def show_selection(self, selected) -> None:
        """Outline the points ``selected`` (indices)."""
        look = theme.current()
        self.selected = [k for k in sorted(selected) if k < len(self.points)]
        pen = pg.mkPen(look.qcolor(look.selected_outline), width=2.5)
        self.outlines.setData(pos=self.points[self.selected][:, list(self.axes)], pen=pen, brush=None,
                              size=self.marker_pixels()[self.selected] + 4)

    def marker_pixels(self) -> np.ndarray:
        """``(n,)`` px: each point's clearance width at the current zoom, within :data:`MARKER_PIXELS`."""
        px = self.box.viewPixelSize()[0] if self.box.width() > 0 else 1.0
        return np.clip(self.widths / max(px, 1e-9), *MARKER_PIXELS)

    def scale_markers(self) -> None:
        if len(self.points):
            sizes = self.marker_pixels()
            self.scatter.setSize(sizes)
            if self.selected:
                self.outlines.setSize(sizes[self.selected] + 4)

    def pick(self, x: float, y: float) -> int | None:
        """Index of the point within :data:`PICK_PIXELS` of view position (x, y), or None; of
        points stacked there, the one nearest this view's working plane."""
        if not len(self.points):
            return None
        px, py = self.box.viewPixelSize()
        d = np.hypot((self.points[:, self.axes[0]] - x) / px, (self.points[:, self.axes[1]] - y) / py)
        if d.min() > PICK_PIXELS:
            return None
        stacked = np.flatnonzero(d <= d.min() + STACKED_PIXELS)  # drawn on top of one another
        depth = 3 - sum(self.axes)  # the axis this view looks along
        return int(stacked[np.argmin(np.abs(self.points[stacked, depth] - self.plane))])

    def show_hover(self, k: int | None, text: str) -> None:
        """Write ``text`` beside point ``k`` (hidden for None)."""
        if k is None:
            self.hover_label.hide()
            return
        self.hover_label.setText(text)
        self.hover_label.setPos(*self.points[k, list(self.axes)])
        self.hover_label.show()


class LayoutView(QWidget):
    """Top and side views of the active formation, with altitude, grid and snapping controls."""

    def __init__(self, document: Document, parent=None):
        super().__init__(parent)
        self.document = document
        self.selected: set[int] = set()
        self._drag_index: int | None = None
        self._drag_serial = 0
        self._section_key: tuple | None = None  # (site, altitude, side-view y) of the cuts drawn
        self._split_set = False
        self.altitude = QDoubleSpinBox(minimum=-1000, maximum=10000, value=2.0, suffix=" m", singleStep=0.5,
                                       toolTip="height of points added in the top view")
        self.section_y = QDoubleSpinBox(minimum=-10000, maximum=10000, value=0.0, suffix=" m", singleStep=0.5,
                                        toolTip="y of points added in the side view")
        self.grid = QDoubleSpinBox(minimum=0.05, maximum=100, value=1.0, suffix=" m", singleStep=0.25)
        self.snap = QCheckBox("snap to grid", checked=True)
        self.status = QLabel(wordWrap=True)
        for spin in (self.altitude, self.section_y, self.grid):
            spin.setMinimumWidth(80)  # below their range's text width: the window fits 1280 px
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
        self.split = split = QSplitter(Qt.Orientation.Vertical)
        split.addWidget(self.top)
        split.addWidget(self.side)
        layout = QVBoxLayout(self)
        layout.addLayout(controls)
        layout.addWidget(split, 1)
        layout.addWidget(self.status)
        for plot in (self.top, self.side):
            plot.box.clicked.connect(lambda x, y, mods, plot=plot: self._clicked(plot, x, y, mods))
            plot.box.drag_started.connect(lambda x, y, plot=plot: self._drag_start(plot, x, y))
            plot.box.dragged.connect(lambda x, y, done, plot=plot: self._drag(plot, x, y, done))
            plot.scene().sigMouseMoved.connect(lambda pos, plot=plot: self._hover(plot, pos))
        document.scene_changed.connect(self.refresh)
        document.plan_changed.connect(self._document_selection)  # who stands where may have changed
        document.selection_changed.connect(self._document_selection)
        document.formation_chosen.connect(self._formation_chosen)
        self.altitude.valueChanged.connect(self.refresh)  # layers and cuts follow the working planes
        self.section_y.valueChanged.connect(self.refresh)
        self.altitude.setToolTip("height of points added in the top view; obstacles are drawn where they "
                                 "meet this height")
        self.section_y.setToolTip("y of points added in the side view; obstacles are drawn where they meet "
                                  "this plane")
        self.apply_theme()
        self.frame()

    def apply_theme(self) -> None:
        for plot in (self.top, self.side):
            plot.apply_theme()
        self.refresh()

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
        self._document_selection()

    def drones_on_points(self) -> np.ndarray | None:
        """``(n_points,)`` index of the drone standing on each point of the active formation (−1:
        none), or None where that is not known: the start formation's point k is drone k's start;
        a formation the current plan flies to has the plan's assignment."""
        scene, f = self.document.scene, self.formation
        n = len(scene.fleet.drones)
        if f.name == scene.timeline.start and len(f.points) == n:
            return np.arange(n)
        plan = self.document.plan
        if plan is not None and self.document.plan_is_current:
            for t in plan.transitions:
                if t.problem.target == f.name:
                    on = np.full(len(f.points), -1)
                    on[t.assignment.goal_of] = np.arange(n)
                    return on
        return None

    def point_colours(self, close: np.ndarray) -> np.ndarray:
        """``(n, 4)`` RGBA: the group's colour (the formation colour without groups), red where too close."""
        look, f = theme.current(), self.formation
        colours = np.tile(np.asarray(look.formation, dtype=float), (len(f.points), 1))
        if f.groups is not None:
            names = list(dict.fromkeys(f.groups))
            palette = theme.group_colours(len(names), look)
            colours = palette[[names.index(g) for g in f.groups]]
        colours[close] = look.too_close
        return colours

    def refresh(self) -> None:
        f = self.formation
        points = f.positions
        self.selected = {k for k in self.selected if k < len(points)}
        scene = self.document.scene
        shapes = possible_shapes(scene)[f.name]
        close = too_close(points, scene.fleet.clearance, shapes)
        clearance = scene.fleet.clearance
        colours, widths = self.point_colours(close), 2.0 * occupant_reach(clearance, shapes, 0)
        reach_z, reach_y = occupant_reach(clearance, shapes, 2), occupant_reach(clearance, shapes, 1)
        self.top.plane, self.side.plane = self.altitude.value(), self.section_y.value()
        for plot, reach in ((self.top, reach_z), (self.side, reach_y)):
            plot.selected = sorted(self.selected)
            plot.show_points(points, colours, widths, reach)
            plot.show_volume(self.document.scene.site.flight_volume.bounds)
        self.refresh_sections()
        n_fleet = len(self.document.scene.fleet.drones)
        text = f"{f.name}: {len(points)} points for {n_fleet} drones"
        if f.groups is not None:
            text += f", {len(set(f.groups))} groups (colours)"
        off = np.abs(points[:, 2] - self.altitude.value()) > reach_z
        if off.any():
            text += f"; {int(off.sum())} not at altitude {self.altitude.value():g} m (faded from above)"
        if close.any():
            text += f"; {int(close.sum())} points closer than the clearance (red)"
        self.status.setText(text + ". Shift-click adds a point on top of others.")

    def hover_text(self, k: int) -> str:
        """What the label beside point ``k`` says: its number, group and drone where known."""
        f, parts = self.formation, [f"point {k}"]
        if f.groups is not None:
            parts.append(f"group {f.groups[k]}")
        on = self.drones_on_points()
        if on is not None and on[k] >= 0:
            parts.append(f"drone {self.document.scene.fleet.drones[on[k]].id}")
        return " · ".join(parts)

    def _hover(self, plot: ProjectionPlot, scene_pos) -> None:
        p = plot.box.mapSceneToView(scene_pos)
        k = plot.pick(p.x(), p.y())
        plot.show_hover(k, "" if k is None else self.hover_text(k))

    def _clicked(self, plot: ProjectionPlot, x: float, y: float, modifiers) -> None:
        k = None if modifiers & Qt.KeyboardModifier.ShiftModifier else plot.pick(x, y)
        if k is not None:
            if modifiers & Qt.KeyboardModifier.ControlModifier:
                self.selected ^= {k}
            else:
                self.selected = {k}
            self._show_selection()
            self._selection_to_document()
            return
        f = self.formation
        points = np.vstack([f.positions, self._point_from(plot, x, y)])
        group = None if f.groups is None else self._group_for_new_point()
        self.selected = {len(points) - 1}
        self.document.edit_formation(f.name, points, None if group is None else f.groups + (group,),
                                     f"add point to {f.name}")
        if group is not None:
            self.status.setText(f"New point added to group {group}: it joins the selected point's group (the "
                                "last group when none is selected).")

    def _group_for_new_point(self) -> str:
        """A new point joins the group of the selected point (the last group when none is selected)."""
        f = self.formation
        chosen = sorted(k for k in self.selected if k < len(f.groups))
        return f.groups[chosen[-1]] if chosen else f.groups[-1]

    def _selection_to_document(self) -> None:
        """Selected points → selected drones, where the formation says who stands where."""
        on = self.drones_on_points()
        if on is not None:
            self.document.select(tuple(int(on[k]) for k in self.selected if on[k] >= 0))

    def _document_selection(self) -> None:
        """Selected drones → selected points (where known), outlined in both views."""
        on = self.drones_on_points()
        if on is None:
            return
        wanted = {int(k) for k in np.flatnonzero(np.isin(on, self.document.selected))}
        if wanted != self.selected:
            self.selected = wanted
            self._show_selection()

    def _show_selection(self) -> None:
        for plot in (self.top, self.side):
            plot.show_selection(self.selected)

    def _drag_start(self, plot: ProjectionPlot, x: float, y: float) -> None:
        self._drag_index = plot.pick(x, y)
        self._drag_serial += 1
        if self._drag_index is not None:
            self.selected = {self._drag_index}
            self._show_selection()

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

    def resizeEvent(self, event):  # noqa: N802 - Qt's name
        """Views side by side in a wide area, stacked in a tall one, each given half: the side view
        is a working view, not a strip."""
        super().resizeEvent(event)
        wide = event.size().width() > 1.4 * event.size().height()
        orientation = Qt.Orientation.Horizontal if wide else Qt.Orientation.Vertical
        if orientation != self.split.orientation() or not self._split_set:
            self._split_set = True
            self.split.setOrientation(orientation)
            half = (self.split.width() if wide else self.split.height()) // 2
            self.split.setSizes([half, half])

    def keyPressEvent(self, event):  # noqa: N802 - Qt's name
        if event.key() in (Qt.Key.Key_Delete, Qt.Key.Key_Backspace):
            self.delete_selected()
        else:
            super().keyPressEvent(event)

