"""The designer window: panels on the left, the 3D site and the layout views in the middle,
motion plots and findings below, the time bar and planning controls at the bottom."""

from __future__ import annotations

import os
from pathlib import Path

from PySide6.QtCore import Qt
from PySide6.QtGui import QAction, QActionGroup, QKeySequence
from PySide6.QtWidgets import (
    QApplication,
    QDockWidget,
    QFileDialog,
    QLabel,
    QMainWindow,
    QMessageBox,
    QProgressBar,
    QPushButton,
    QTabWidget,
    QVBoxLayout,
    QWidget,
)

from core import SAFETY_CAUTION
from core.errors import SkyloomError
from core.export.target import fresh_folder

from . import theme
from .document import Document
from .drone_list import DroneList
from .export_dialog import ExportDialog
from .findings_table import FindingsTable
from .fleet_panel import FleetPanel
from .formation_panel import FormationPanel
from .layout_view import LayoutView
from .motion_plots import MotionPlots
from .plan_runner import PlanRunner
from .plan_summary_view import PlanSummaryView
from .planner_panel import PlannerPanel
from .site_panel import SitePanel
from .site_view import SiteView
from .time_bar import TimeBar
from .timeline_panel import TimelinePanel

SCENE_FILTER = "Skyloom scenes (*.json)"
#: Settings key of the chosen look ("light" or "dark").
THEME_KEY = "theme"


class MainWindow(QMainWindow):
    """Owns the views; the :class:`Document` owns the data."""

    def __init__(self, document: Document):
        super().__init__()
        self.document = document
        # The remembered look first: the views draw in it as they are built (not once more after).
        look = theme.THEMES.get(str(document.settings.value(THEME_KEY, theme.DARK.name)), theme.DARK)
        theme.apply_to_application(QApplication.instance(), look)
        self.runner = PlanRunner(document, self)
        self.site = SiteView(document)
        self.layout_view = LayoutView(document)
        self.centre = QTabWidget()
        self.centre.addTab(self.site, "Site (3D)")
        self.centre.addTab(self.layout_view, "Formation layout")
        self.time_bar = TimeBar(document)
        middle = QWidget()
        column = QVBoxLayout(middle)
        column.setContentsMargins(0, 0, 0, 0)
        column.addWidget(self.centre, 1)
        column.addWidget(self.time_bar)
        self.setCentralWidget(middle)
        self.formations = FormationPanel(document)
        self.timeline = TimelinePanel(document)
        self.fleet = FleetPanel(document)
        self.planner = PlannerPanel(document)
        self.plots = MotionPlots(document)
        self.findings = FindingsTable(document)
        self.summary = PlanSummaryView(document)
        left = QTabWidget()
        self.drones = DroneList(document)
        self.site_panel = SitePanel(document)
        for widget, name in ((self.formations, "Formations"), (self.timeline, "Timeline"), (self.site_panel, "Site"),
                             (self.fleet, "Fleet"), (self.drones, "Drones"), (self.planner, "Planner")):
            left.addTab(widget, name)
        self._dock(left, "Scene", Qt.DockWidgetArea.LeftDockWidgetArea)
        bottom = QTabWidget()
        bottom.addTab(self.plots, "Motion")
        bottom.addTab(self.findings, "Findings")
        bottom.addTab(self.summary, "Plan summary")
        inspect = self._dock(bottom, "Inspect", Qt.DockWidgetArea.BottomDockWidgetArea)
        self.plan_button, self.cancel_button = QPushButton("Plan", objectName="primary"), QPushButton("Cancel")
        self.cancel_button.setEnabled(False)
        self.progress = QProgressBar(maximum=1000)
        self.progress.setMaximumWidth(320)
        self.stage = QLabel("ready")
        toolbar = self.addToolBar("Planning")
        toolbar.setObjectName("Planning")
        toolbar.setMovable(False)
        for w in (self.plan_button, self.cancel_button, self.progress, self.stage):
            toolbar.addWidget(w)
        self.statusBar().showMessage("Plans must be checked in simulation and flown by qualified operators "
                                     "under the local aviation rules.")
        self._menus()
        self.plan_button.clicked.connect(self.start_plan)
        self.cancel_button.clicked.connect(self.runner.cancel)
        self.runner.progress.connect(self._progress)
        self.runner.done.connect(self._plan_done)
        self.runner.failed.connect(self._show_error)
        self.findings.focus_requested.connect(self._focus_drones)
        document.message.connect(self._show_error)
        document.plan_stale_changed.connect(self._update_title)
        document.path_changed.connect(self._update_title)
        document.undo_stack.cleanChanged.connect(self._update_title)
        document.formation_chosen.connect(self.site.show_formation)
        self._update_title()
        self.theme_actions[look.name].setChecked(True)
        self.resize(1500, 950)
        self.resizeDocks([inspect], [420], Qt.Orientation.Vertical)

    def _dock(self, widget: QWidget, title: str, area) -> QDockWidget:
        dock = QDockWidget(title, self)
        dock.setObjectName(title)
        dock.setWidget(widget)
        features = QDockWidget.DockWidgetFeature
        dock.setFeatures(features.DockWidgetMovable | features.DockWidgetFloatable)
        self.addDockWidget(area, dock)
        return dock

    def _menus(self) -> None:
        file_menu = self.menuBar().addMenu("&File")
        self._action(file_menu, "&New scene", self.new_scene, QKeySequence.StandardKey.New)
        self._action(file_menu, "&Open…", self.open_dialog, QKeySequence.StandardKey.Open)
        self.recent_menu = file_menu.addMenu("Open &recent")
        self.recent_menu.aboutToShow.connect(self._fill_recent)
        self._action(file_menu, "&Save", self.save, QKeySequence.StandardKey.Save)
        self._action(file_menu, "Save &as…", self.save_as, QKeySequence.StandardKey.SaveAs)
        file_menu.addSeparator()
        self._action(file_menu, "&Export plan…", self.export, "Ctrl+E")
        file_menu.addSeparator()
        self._action(file_menu, "&Quit", self.close, QKeySequence.StandardKey.Quit)
        edit = self.menuBar().addMenu("&Edit")
        undo = self.document.undo_stack.createUndoAction(self, "&Undo")
        undo.setShortcut(QKeySequence.StandardKey.Undo)
        redo = self.document.undo_stack.createRedoAction(self, "&Redo")
        redo.setShortcut(QKeySequence.StandardKey.Redo)
        edit.addActions([undo, redo])
        self._action(edit, "&Delete selected points", self.layout_view.delete_selected, QKeySequence.StandardKey.Delete)
        plan_menu = self.menuBar().addMenu("&Plan")
        self._action(plan_menu, "&Plan the timeline", self.start_plan, "F5")
        self._action(plan_menu, "&Cancel planning", self.runner.cancel, "Esc")
        view = self.menuBar().addMenu("&View")
        self._action(view, "Frame the &site", self.site.frame_all, "Home")
        only = self._action(view, "&Curves of the selected drones only", self.site.show_selected_curves_only)
        only.setCheckable(True)
        view.addSeparator()
        looks = QActionGroup(self)
        self.theme_actions = {}
        for name, text in (("light", "&Light look"), ("dark", "&Dark look")):
            action = self._action(view, text, lambda _checked=False, name=name: self.set_theme(name))
            action.setCheckable(True)
            looks.addAction(action)
            self.theme_actions[name] = action
        help_menu = self.menuBar().addMenu("&Help")
        self._action(help_menu, "&Safety", lambda: QMessageBox.information(self, "Safety", SAFETY_CAUTION))

    def _action(self, menu, text, slot, shortcut=None) -> QAction:
        action = QAction(text, self)
        if shortcut is not None:
            action.setShortcut(QKeySequence(shortcut))
        action.triggered.connect(slot)
        menu.addAction(action)
        return action

    def set_theme(self, name: str) -> None:
        """Use the light or dark look in the panels, the 3D view, the layout and the plots (and
        remember it); an unknown name falls back to the dark look."""
        look = theme.THEMES.get(name, theme.DARK)
        theme.apply_to_application(QApplication.instance(), look)
        self.document.settings.setValue(THEME_KEY, look.name)
        self.theme_actions[look.name].setChecked(True)
        for view in (self.site, self.layout_view, self.plots):
            view.apply_theme()

    # --- files -------------------------------------------------------------------------------
    def open_path(self, path: Path) -> bool:
        try:
            self.document.open(Path(path))
        except SkyloomError as exc:
            self._show_error(str(exc))
            return False
        self.site.frame_all()
        self.layout_view.frame()
        return True

    def open_dialog(self) -> None:
        if not self.may_discard_edits("opening another scene"):
            return
        path, _ = QFileDialog.getOpenFileName(self, "Open scene", str(self.document.base_dir), SCENE_FILTER)
        if path:
            self.open_path(Path(path))

    def new_scene(self) -> None:
        """Replace the open scene by the starter scene (after asking about unsaved edits)."""
        if not self.may_discard_edits("starting a new scene"):
            return
        self.document.new()
        self.site.frame_all()
        self.layout_view.frame()
        self.statusBar().showMessage("new scene: eight drones from the ground to a hover ring; edit it and "
                                     "save it under a name", 8000)

    def may_discard_edits(self, doing: str) -> bool:
        """True when the scene has no unsaved edits, or the user saved them or chose to discard
        them before ``doing`` (e.g. "closing the designer"); False when they cancelled."""
        if not self.document.unsaved:
            return True
        buttons = QMessageBox.StandardButton
        answer = QMessageBox.question(
            self, "Unsaved changes", f"The scene has edits that are not saved. Save them before {doing}?",
            buttons.Save | buttons.Discard | buttons.Cancel, buttons.Save)
        if answer == buttons.Save:
            self.save()
            return not self.document.unsaved  # a cancelled "Save as" keeps the edits and the scene
        return answer == buttons.Discard

    def save(self) -> None:
        if self.document.path is None:
            self.save_as()
            return
        self._write(self.document.path)

    def save_as(self) -> None:
        path, _ = QFileDialog.getSaveFileName(self, "Save scene", str(self.document.base_dir), SCENE_FILTER)
        if path:
            self._write(Path(path))

    def _write(self, path: Path) -> None:
        try:
            self.document.save(path)
        except (OSError, SkyloomError) as exc:
            self._show_error(f"could not save {path}: {exc}")
            return
        self.statusBar().showMessage(f"saved {path}", 5000)

    def _fill_recent(self) -> None:
        self.recent_menu.clear()
        for path in self.document.recent_files():
            self.recent_menu.addAction(path, lambda p=path: self.may_discard_edits("opening another scene")
                                       and self.open_path(Path(p)))

    def export(self) -> None:
        if self.document.plan is None:
            self._show_error("Plan the scene before exporting.")
            return
        if not self.document.plan_is_current:
            self._show_error("The scene was edited after this plan was made, so the plan is not verified for the "
                             "scene as it is now. Plan again (F5) before exporting, or undo the edits.")
            return
        stem = self.document.path.stem if self.document.path else self.document.scene.name
        protect = [self.document.path] if self.document.path else []
        dialog = ExportDialog(self.document.plan, fresh_folder(self.document.base_dir.resolve(), stem), protect, self)
        if dialog.exec():
            try:
                folder, notes = dialog.write()
            except SkyloomError as exc:
                self._show_error(f"export refused or failed, nothing was replaced: {exc}")
                return
            if notes:
                self._show_error("\n".join(["export written, with notes:", *notes]))
            self.statusBar().showMessage(f"wrote {folder}", 8000)

    # --- planning ----------------------------------------------------------------------------
    def start_plan(self) -> None:
        if self.runner.start():
            self.plan_button.setEnabled(False)
            self.cancel_button.setEnabled(True)
            self.progress.setValue(0)
            self.stage.setText("starting")

    def _progress(self, stage: str, fraction: float, message: str) -> None:
        self.progress.setValue(int(1000 * max(0.0, min(1.0, fraction))))
        self.stage.setText(f"{stage}: {message}"[:120])

    def _plan_done(self, text: str) -> None:
        self.plan_button.setEnabled(True)
        self.cancel_button.setEnabled(False)
        self.stage.setText(text)

    def _focus_drones(self, drones: tuple) -> None:
        plan = self.document.plan
        if plan is None or not drones:
            return
        points = plan.trajectory.evaluate([self.document.time])[0][list(drones)]
        self.centre.setCurrentWidget(self.site)
        self.site.frame_points(points, margin=2.0)

    def _show_error(self, text: str) -> None:
        # Files beside the scene are named by file name alone: a full path hides the reason.
        text = text.replace(str(self.document.base_dir.resolve()) + os.sep, "")
        first, *rest = text.split("\n")
        box = QMessageBox(QMessageBox.Icon.Warning, "Skyloom", first[:200], parent=self)
        if rest:
            box.setInformativeText("\n".join(rest[:7]))
            box.setDetailedText(text)
        box.setModal(False)
        box.show()
        self.last_error = text

    def _update_title(self, *_args) -> None:
        name = self.document.path.name if self.document.path else self.document.scene.name
        dirty = " *" if self.document.unsaved else ""
        stale = "" if self.document.plan is None or self.document.plan_is_current else " — plan out of date"
        self.setWindowTitle(f"Skyloom designer — {name}{dirty}{stale}")

    def closeEvent(self, event):  # noqa: N802 - Qt's name
        if not self.may_discard_edits("closing the designer"):
            event.ignore()
            return
        if self.runner.running:
            self.runner.cancel()
            self.runner.wait()
        super().closeEvent(event)
