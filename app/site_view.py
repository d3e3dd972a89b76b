"""The 3D site: obstacle meshes, flight volume with a ground grid on its floor (its spacing
written in the view's corner), keep-out boxes, formation points, planned curves (one line item for the whole
fleet), drones at the current time, and the selected drones' clearance ellipsoids. A click on a
drone's marker selects it (picked in numpy: markers projected with the view's matrices)."""

from __future__ import annotations

import numpy as np
import pyqtgraph.opengl as gl
from PySide6.QtCore import Qt, QTimer
from PySide6.QtGui import QVector3D
from PySide6.QtWidgets import QLabel

from core.inspection import sample_times
from core.scene.meshes import feature_edges

from . import theme
from .document import Document
from .mesh_shading import HEADLIGHT

#: Curve samples per piece (polyline vertices).
CURVE_SAMPLES = 16
#: Curves are antialiased up to this many vertices: beyond, smoothing the lines costs 5× the whole
#: repaint on a software renderer (1 000 drones: 74 ms against 14 ms under Mesa llvmpipe).
ANTIALIAS_VERTICES = 60_000
#: Most ground-grid cells along the flight volume's longer side.
GRID_CELLS = 20
#: A click picks the drone whose marker is nearest, if within this many pixels; a press and
#: release farther apart than :data:`CLICK_SLOP` pixels is a camera drag, not a pick.
PICK_PIXELS = 12.0
CLICK_SLOP = 4.0


def grid_spacing(length: float) -> float:
    """A round grid spacing (1, 2 or 5 × 10^k m) giving at most :data:`GRID_CELLS` cells over
    ``length`` m, and at least a quarter of that."""
    raw = max(float(length), 1e-3) / GRID_CELLS
    exponent = np.floor(np.log10(raw))
    for step in (1.0, 2.0, 5.0, 10.0):
        if step * 10.0**exponent >= raw:
            return float(step * 10.0**exponent)
    return float(10.0 ** (exponent + 1))


def box_edges(bounds: np.ndarray) -> np.ndarray:
    """``(24, 3)`` segment end points of the 12 edges of a box ``(2, 3)``."""
    lo, hi = bounds
    corners = np.array([[x, y, z] for x in (lo[0], hi[0]) for y in (lo[1], hi[1]) for z in (lo[2], hi[2])])
    pairs = [(0, 1), (0, 2), (0, 4), (1, 3), (1, 5), (2, 3), (2, 6), (3, 7), (4, 5), (4, 6), (5, 7), (6, 7)]
    return corners[np.array(pairs).ravel()]


class SiteView(gl.GLViewWidget):
    """3D view bound to a :class:`Document`."""

    def __init__(self, document: Document, parent=None):
        super().__init__(parent)
        self.document = document
        self._mesh_items: list[gl.GLGraphicsItem.GLGraphicsItem] = []
        self._box_items: list[gl.GLMeshItem] = []
        self._volume = gl.GLLinePlotItem(mode="lines", width=1.0, antialias=True)
        self._curves = gl.GLLinePlotItem(mode="lines", width=1.5, antialias=True)
        self._formation = gl.GLScatterPlotItem(size=6.0, pxMode=True, glOptions="translucent")
        self._drones = gl.GLScatterPlotItem(size=9.0, pxMode=True, glOptions="translucent")  # not additive: keeps hues
        self._ellipsoids: list[gl.GLMeshItem] = []
        self._ground: list[gl.GLGraphicsItem.GLGraphicsItem] = []
        self.ground_spacing = 1.0
        self._shown_once = False
        #: The ground grid's spacing, over the view's top-left corner.
        self.scale_label = QLabel(self)
        self._sphere = gl.MeshData.sphere(rows=12, cols=18)
        for item in (self._volume, self._curves, self._formation, self._drones):
            self.addItem(item)
        self.shown_formation: str | None = None
        self.selected_curves_only = False
        self._colours = np.zeros((0, 4))
        #: Planned curves as segment end points ``(2M, 3)`` and the drone of each end point ``(2M,)``.
        self._segments = np.zeros((0, 3), dtype=np.float32)
        self._segment_drone = np.zeros(0, dtype=int)
        self._press = None
        document.scene_changed.connect(self.refresh_scene)
        document.plan_changed.connect(self.refresh_plan)
        document.time_changed.connect(self.refresh_time)
        document.selection_changed.connect(self._selection_changed)
        self.apply_theme()
        self.frame_all()

    def apply_theme(self) -> None:
        """Draw everything again in :func:`theme.current`'s colours."""
        look = theme.current()
        self.setBackgroundColor(look.rgb255(look.canvas))
        r, g, b = look.rgb255(look.canvas_text)
        self.scale_label.setStyleSheet(f"color: rgb({r}, {g}, {b}); background: transparent; padding: 4px;")
        self.refresh_scene()
        self.refresh_plan()

    # --- scene -------------------------------------------------------------------------------
    def refresh_scene(self) -> None:
        scene, look = self.document.scene, theme.current()
        self._volume.setData(pos=box_edges(scene.site.flight_volume.bounds), color=look.volume)
        for item in self._mesh_items + self._box_items:
            self.removeItem(item)
        self._mesh_items = [
            gl.GLMeshItem(vertexes=np.asarray(m.mesh.vertices, dtype=np.float32), faces=np.asarray(m.mesh.faces),
                          smooth=False, shader=HEADLIGHT, color=look.obstacle, glOptions="opaque")
            for m in self.document.meshes()]
        # Their creases as lines: faces turned from the light stay legible.
        self._mesh_items += [gl.GLLinePlotItem(pos=feature_edges(m.mesh).astype(np.float32), mode="lines",
                                               color=look.obstacle_edge, width=1.0, antialias=True)
                             for m in self.document.meshes()]
        self._box_items = [self._box_item(b.bounds) for b in scene.site.keep_out]
        for item in self._mesh_items + self._box_items:
            self.addItem(item)
        self._show_ground(scene.site.flight_volume.bounds)
        self.show_formation(self.shown_formation)

    def _show_ground(self, bounds: np.ndarray) -> None:
        """A grid over the flight volume's floor; its spacing is written in the view's corner."""
        for item in self._ground:
            self.removeItem(item)
        (x0, y0, z0), (x1, y1, _) = bounds
        self.ground_spacing = spacing = grid_spacing(max(x1 - x0, y1 - y0))
        colour = tuple(int(255 * c) for c in theme.current().grid)
        grid = gl.GLGridItem(size=QVector3D(x1 - x0, y1 - y0, 1.0), color=colour)
        grid.setSpacing(spacing, spacing, 1.0)
        grid.translate(0.5 * (x0 + x1), 0.5 * (y0 + y1), z0)
        self._ground = [grid]
        self.addItem(grid)
        self.scale_label.setText(f"ground grid {spacing:g} m · z up")
        self.scale_label.adjustSize()

    def show_formation(self, name: str | None) -> None:
        """Draw formation ``name``'s points (the first formation when None)."""
        formations = self.document.scene.formations
        f = self.document.formation(name) if name else None
        f = f or formations[0]
        self.shown_formation = f.name
        self._formation.setData(pos=f.positions, color=theme.current().formation)

    def _box_item(self, bounds: np.ndarray) -> gl.GLMeshItem:
        mesh = gl.MeshData.cylinder(rows=1, cols=4, radius=[0.5 * np.sqrt(2)] * 2, length=1.0)
        v = mesh.vertexes()
        rotated = np.c_[(v[:, 0] - v[:, 1]) / np.sqrt(2), (v[:, 0] + v[:, 1]) / np.sqrt(2), v[:, 2]]
        size = bounds[1] - bounds[0]
        mesh.setVertexes((np.array([0.5, 0.5, 0.0]) + rotated) * size + bounds[0])
        return gl.GLMeshItem(meshdata=mesh, color=theme.current().keep_out, shader="shaded", glOptions="translucent")

    # --- plan --------------------------------------------------------------------------------
    def refresh_plan(self) -> None:
        """Sample every drone's curve (or the selected drones' only) and draw it."""
        plan = self.document.plan
        if plan is None:
            self._segments, self._segment_drone = np.zeros((0, 3), dtype=np.float32), np.zeros(0, dtype=int)
            self._curves.setData(pos=self._segments)
            self._drones.setData(pos=np.zeros((0, 3)))
            return
        traj = plan.trajectory
        self._colours = theme.drone_colours(traj.n_drones)
        shown = np.array(self.document.selected, dtype=int) if self.selected_curves_only and self.document.selected \
            else np.arange(traj.n_drones)
        times = sample_times(traj, CURVE_SAMPLES)
        points = np.swapaxes(traj.evaluate(times)[:, shown], 0, 1)  # (shown, T, 3)
        t = points.shape[1]
        self._segments = np.stack([points[:, :-1], points[:, 1:]], axis=2).reshape(-1, 3).astype(np.float32)
        self._segment_drone = np.repeat(shown, 2 * (t - 1))
        self._curves.antialias = len(self._segments) <= ANTIALIAS_VERTICES
        self._colour_curves()
        self.refresh_time()

    def _colour_curves(self) -> None:
        """Curves in their drones' colours; while drones are selected the others are dimmed, so
        the selected curves read in the colours the motion plots and their legend use."""
        colours = self._colours[self._segment_drone].copy()
        colours[:, 3] = 0.8
        if self.document.selected:
            others = ~np.isin(self._segment_drone, self.document.selected)
            colours[others] = theme.current().dimmed
        self._curves.setData(pos=self._segments, color=colours.astype(np.float32))

    def refresh_time(self, *_args) -> None:
        """Drones at the document's time (selected ones larger, the others dimmed while there is a
        selection) and the selected drones' clearance ellipsoids."""
        plan = self.document.plan
        for item in self._ellipsoids:
            self.removeItem(item)
        self._ellipsoids = []
        if plan is None:
            return
        look = theme.current()
        traj = plan.trajectory
        positions = traj.evaluate(np.array([self.document.time]))[0]
        chosen = list(self.document.selected)
        colours = self._colours.copy()
        sizes = np.full(traj.n_drones, 9.0)
        if chosen:
            colours[np.setdiff1d(np.arange(traj.n_drones), chosen)] = look.dimmed
            sizes[chosen] = 15.0
        self._drones.setData(pos=positions, color=colours, size=sizes)
        semi = plan.scene.fleet.semi_axes
        for k in chosen[:8]:
            item = gl.GLMeshItem(meshdata=self._sphere, smooth=True, shader="balloon", color=look.ellipsoid,
                                 glOptions="translucent")
            item.scale(*semi[k])
            item.translate(*positions[k])
            self.addItem(item)
            self._ellipsoids.append(item)

    def show_selected_curves_only(self, on: bool) -> None:
        """Draw every drone's curve, or (when ``on`` and drones are selected) only theirs."""
        self.selected_curves_only = bool(on)
        self.refresh_plan()

    def _selection_changed(self) -> None:
        if self.selected_curves_only:
            self.refresh_plan()
            return
        if self.document.plan is not None:
            self._colour_curves()
        self.refresh_time()

    # --- picking -----------------------------------------------------------------------------
    def screen_positions(self, points: np.ndarray) -> np.ndarray:
        """Widget pixel positions ``(M, 2)`` (x right, y down) of world points ``(M, 3)`` metres
        through the view's projection and camera matrices; NaN for points behind the camera."""
        w, h = max(self.width(), 1), max(self.height(), 1)
        matrix = self.projectionMatrix((0, 0, w, h), (0, 0, w, h)) * self.viewMatrix()
        m = np.array(matrix.data(), dtype=np.float64).reshape(4, 4).T  # Qt stores column-major
        clip = np.c_[np.atleast_2d(points), np.ones(len(np.atleast_2d(points)))] @ m.T
        with np.errstate(divide="ignore", invalid="ignore"):
            ndc = clip[:, :2] / clip[:, 3:4]
        out = np.c_[(ndc[:, 0] + 1.0) * 0.5 * w, (1.0 - ndc[:, 1]) * 0.5 * h]
        out[clip[:, 3] <= 0] = np.nan
        return out

    def drone_at(self, x: float, y: float) -> int | None:
        """The drone whose marker (at the current time) is nearest pixel ``(x, y)``, within
        :data:`PICK_PIXELS`; None without a plan or when no marker is that close."""
        plan = self.document.plan
        if plan is None:
            return None
        pixels = self.screen_positions(plan.trajectory.evaluate(np.array([self.document.time]))[0])
        distance = np.linalg.norm(pixels - [x, y], axis=1)
        distance[np.isnan(distance)] = np.inf
        best = int(np.argmin(distance))
        return best if distance[best] <= PICK_PIXELS else None

    def mousePressEvent(self, event):  # noqa: N802 - Qt's name
        self._press = event.position()
        super().mousePressEvent(event)

    def mouseReleaseEvent(self, event):  # noqa: N802 - Qt's name
        """A click (no drag) on a drone selects it; with Ctrl it toggles it in the selection; on
        empty space it clears the selection."""
        super().mouseReleaseEvent(event)
        press = self._press
        if press is None or event.button() != Qt.MouseButton.LeftButton:
            return
        moved = event.position() - press
        if abs(moved.x()) + abs(moved.y()) > CLICK_SLOP:
            return
        drone = self.drone_at(event.position().x(), event.position().y())
        chosen = set(self.document.selected)
        if event.modifiers() & Qt.KeyboardModifier.ControlModifier:
            if drone is not None:
                chosen ^= {drone}
        else:
            chosen = set() if drone is None else {drone}
        self.document.select(tuple(sorted(chosen)))

    # --- camera ------------------------------------------------------------------------------
    def frame_points(self, points: np.ndarray, margin: float = 1.5) -> None:
        """Point the camera at ``points`` ``(M, 3)`` and back off until the sphere around them,
        ``margin`` × their radius, fits the view's narrower field of view (pyqtgraph's ``fov`` is
        the horizontal one; the vertical half-angle is atan(tan(fov / 2) · height / width))."""
        points = np.atleast_2d(points)
        centre = points.mean(axis=0)
        radius = max(float(np.linalg.norm(points - centre, axis=1).max()), 1.0)
        aspect = max(self.height(), 1) / max(self.width(), 1)
        half = np.arctan(np.tan(np.radians(self.opts["fov"]) / 2) * min(aspect, 1.0))
        self.setCameraPosition(pos=QVector3D(*centre), distance=margin * radius / np.sin(half))

    def showEvent(self, event):  # noqa: N802 - Qt's name
        """Frame the site once the view has its real size (the window lays out its docks when shown)."""
        super().showEvent(event)
        if not self._shown_once:
            self._shown_once = True
            QTimer.singleShot(0, self.frame_all)

    def frame_all(self) -> None:
        self.frame_points(self.document.scene.site.flight_volume.bounds, margin=0.9)
