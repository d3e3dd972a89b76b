"""The designer, driven like a user (pytest-qt). Views without OpenGL run on any Qt platform; the
window with the 3D view needs an X server with OpenGL (pytest-xvfb starts Xvfb with Mesa when installed)."""

import os
import time
from pathlib import Path

import numpy as np
import pytest
from PySide6.QtCore import QPointF, Qt
from scipy.spatial import cKDTree

from conftest import SAMPLES, click_view, needs_opengl, plan_in_window
from core.errors import SkyloomError
from core.scene import load_scene


def test_click_in_the_layout_adds_a_snapped_point_and_undo_removes_it(qtbot, document, layout):
    view = layout
    view.altitude.setValue(3.0)
    view.grid.setValue(0.5)
    before = document.formation(document.active_formation).positions.copy()
    click_view(qtbot, view.top, 3.1, -2.2)
    after = document.formation(document.active_formation).positions
    assert len(after) == len(before) + 1
    assert np.allclose(after[-1], [3.0, -2.0, 3.0])  # snapped to the 0.5 m grid, at the altitude
    document.undo_stack.undo()
    assert np.array_equal(document.formation(document.active_formation).positions, before)
    document.undo_stack.redo()
    assert len(document.formation(document.active_formation).positions) == len(before) + 1


def test_selecting_a_point_and_pressing_delete_removes_it(qtbot, document, layout):
    view = layout
    points = document.formation(document.active_formation).positions
    click_view(qtbot, view.top, *points[2, :2])
    assert view.selected == {2}
    qtbot.keyClick(view, Qt.Key.Key_Delete)
    remaining = document.formation(document.active_formation).positions
    assert len(remaining) == len(points) - 1 and not np.any(np.all(remaining == points[2], axis=1))
    document.undo_stack.undo()
    assert len(document.formation(document.active_formation).positions) == len(points)


def test_right_click_in_the_plots_opens_no_plotting_library_menu(qtbot, document, layout):
    from PySide6.QtWidgets import QApplication

    from app.motion_plots import MotionPlots
    plots = MotionPlots(document)
    qtbot.addWidget(plots)
    assert plots.layout_widget.isHidden() and not plots.placeholder.isHidden()  # no empty axes before a plan
    for item in [layout.top.getPlotItem(), layout.side.getPlotItem(), *plots.plots]:
        assert not item.menuEnabled() and not item.getViewBox().menuEnabled()
    qtbot.mouseClick(layout.top.viewport(), Qt.MouseButton.RightButton, pos=layout.top.viewport().rect().center())
    qtbot.wait(50)
    assert QApplication.activePopupWidget() is None


def test_points_closer_than_the_clearance_are_flagged(qtbot, document):
    from app.layout_view import LayoutView, too_close
    view = LayoutView(document)
    qtbot.addWidget(view)
    f = document.formation(document.active_formation)
    clearance = document.scene.fleet.clearance
    crowded = f.positions.copy()
    crowded[1] = crowded[0] + [0.9 * clearance.pair_envelope[0], 0.0, 0.0]
    document.edit_formation(f.name, crowded, f.groups, "crowd")
    assert too_close(crowded, clearance, None)[[0, 1]].all() and "closer than the clearance" in view.status.text()


def test_generators_make_the_expected_count_and_spacing(qtbot, document):
    from dataclasses import replace

    from app.formation_panel import FormationPanel
    panel = FormationPanel(document)
    qtbot.addWidget(panel)
    g = panel.generator
    assert g.count.value() == len(document.scene.fleet.drones)  # one point per drone by default
    fleet = document.scene.fleet
    document.edit(replace(document.scene, fleet=replace(fleet, drones=fleet.drones[:5])), "smaller fleet")
    assert g.count.value() == 5
    document.undo_stack.undo()
    assert g.count.value() == len(fleet.drones)
    g.kind.setCurrentText("sphere")
    g.sphere_radius.setValue(4.0)
    for w, v in zip(g.centre, (0.5, -1.0, 6.0), strict=True):
        w.setValue(v)
    qtbot.mouseClick(g.apply, Qt.MouseButton.LeftButton)
    pts = document.formation(document.active_formation).positions
    assert len(pts) == len(fleet.drones) and np.allclose(np.linalg.norm(pts - [0.5, -1.0, 6.0], axis=1), 4.0)
    g.kind.setCurrentText("grid")
    g.count.setValue(12)
    g.grid_spacing.setValue(2.5)
    qtbot.mouseClick(g.apply, Qt.MouseButton.LeftButton)
    pts = document.formation(document.active_formation).positions
    assert len(pts) == 12
    assert np.allclose(cKDTree(pts).query(pts, k=2)[0][:, 1], 2.5)
    g.kind.setCurrentText("ring")
    g.count.setValue(10)
    g.ring_radius.setValue(6.0)
    for w, v in zip(g.centre, (1.0, 2.0, 4.0), strict=True):
        w.setValue(v)
    qtbot.mouseClick(g.apply, Qt.MouseButton.LeftButton)
    pts = document.formation(document.active_formation).positions
    assert len(pts) == 10 and np.allclose(np.linalg.norm(pts[:, :2] - [1.0, 2.0], axis=1), 6.0)
    # chord of a regular 10-gon: 2 r sin(π / 10)
    assert np.allclose(cKDTree(pts).query(pts, k=2)[0][:, 1], 2 * 6.0 * np.sin(np.pi / 10))
    panel.load_csv(SAMPLES / "cube.csv")
    assert len(document.formation(document.active_formation).positions) == 8
    document.undo_stack.undo()
    assert len(document.formation(document.active_formation).positions) == 10


def test_timeline_fleet_and_planner_edits_are_undoable_and_saved(qtbot, document, tmp_path):
    from app.fleet_panel import FleetPanel
    from app.planner_panel import PlannerPanel
    from app.timeline_panel import TimelinePanel
    timeline, fleet, planner = TimelinePanel(document), FleetPanel(document), PlannerPanel(document)
    for w in (timeline, fleet, planner):
        qtbot.addWidget(w)
    hold = timeline.table.cellWidget(0, 3)
    hold.setValue(4.0)
    hold.editingFinished.emit()
    assert document.scene.timeline.transitions[0].hold == 4.0
    radius = fleet.table.cellWidget(1, 0)
    radius.setValue(0.42)
    radius.editingFinished.emit()
    assert document.scene.fleet.types[0].radius_z == pytest.approx(0.42)
    messages = []
    document.message.connect(messages.append)
    before = document.scene
    radius = fleet.table.cellWidget(1, 0)
    radius.setValue(0.05)  # below radius xy: refused as typed, the table shows the old value again
    radius.editingFinished.emit()
    assert document.scene is before and messages and "must exceed radius_xy" in messages[-1]
    qtbot.waitUntil(lambda: fleet.table.cellWidget(1, 0).value() == pytest.approx(0.42))
    planner.iterations.setValue(5)
    planner.iterations.editingFinished.emit()
    assert document.scene.planner.smoothing_iterations == 5
    planner.objective.setCurrentText("bogus")
    planner.objective.lineEdit().editingFinished.emit()
    assert document.scene.planner.objective == "snap"  # refused with a message, nothing lost
    planner.search.setCurrentIndex(planner.search.findData("lacam"))
    planner.search.activated.emit(planner.search.currentIndex())
    assert document.scene.planner.search == "lacam"
    document.save(tmp_path / "edited.json")
    again = load_scene(tmp_path / "edited.json")
    assert again.planner.smoothing_iterations == 5 and again.timeline.transitions[0].hold == 4.0
    assert again.planner.search == "lacam"
    assert str((tmp_path / "edited.json").resolve()) in document.recent_files()
    for _ in range(4):
        document.undo_stack.undo()
    from core.scene.io import relocated  # saved elsewhere: its CSV formation is inline from now on
    assert document.scene == relocated(load_scene(SAMPLES / "lab_eight.json"), SAMPLES, tmp_path)


def test_a_malformed_scene_is_reported_and_the_open_one_kept(qtbot, document, tmp_path):
    from core.errors import SceneError
    bad = tmp_path / "bad.json"
    bad.write_text('{"format": "skyloom-scene", "version": 1, "name": "x"')
    before = document.scene
    with pytest.raises(SceneError, match="bad.json: line 1"):
        document.open(bad)
    assert document.scene is before


# --- the whole window (OpenGL) -------------------------------------------------------------

@needs_opengl
def test_planning_fills_plots_and_findings_and_a_click_moves_the_cursor(qtbot, make_window):
    window = make_window("lab_eight.json")
    plan_in_window(qtbot, window)
    doc = window.document
    assert doc.plan is not None and doc.plan.verified, getattr(window, "last_error", "")
    assert window.plots.curve_count() >= 5 and "Verification PASSED" in window.summary.details.toPlainText()
    assert window.plots.layout_widget.isVisible() and window.plots.placeholder.isHidden()
    table = window.findings.table
    assert table.rowCount() > 0 and "PASSED" in window.findings.summary.text()
    row = table.rowCount() - 1
    rect = table.visualItemRect(table.item(row, 0))
    window.findings.show()
    qtbot.mouseClick(table.viewport(), Qt.MouseButton.LeftButton, pos=rect.center())
    finding = window.findings.rows[row]
    assert doc.time == pytest.approx(finding.time) and doc.selected == tuple(sorted(finding.drones))
    assert window.time_bar.slider.value() == round(finding.time * 100)
    assert len(window.site._ellipsoids) == 2  # the pair's clearance ellipsoids are drawn
    all_vertices = len(window.site._curves.pos)
    window.site.show_selected_curves_only(True)
    assert len(window.site._curves.pos) * doc.plan.trajectory.n_drones == all_vertices * 2


@needs_opengl
def test_screenshot_of_a_planned_scene_is_not_blank(qtbot, window, tmp_path):
    plan_in_window(qtbot, window)
    window.document.set_time(14.0)
    window.document.select((0, 1))
    qtbot.wait(200)
    shot = window.grab()
    folder = Path(os.environ.get("SKYLOOM_SCREENSHOT_DIR", tmp_path))
    folder.mkdir(parents=True, exist_ok=True)
    assert shot.save(str(folder / "designer_bridge.png"))
    frame = window.site.grabFramebuffer()
    pixels = np.frombuffer(frame.constBits(), dtype=np.uint8).reshape(frame.height(), frame.bytesPerLine())
    rgb = pixels[:, : 4 * frame.width()].reshape(frame.height(), frame.width(), 4)[..., :3]
    from app import theme
    background = np.array(theme.current().rgb255(theme.current().canvas))
    drawn = np.abs(rgb.astype(int) - background[::-1]).sum(axis=2) > 30  # BGRA in memory
    assert drawn.mean() > 0.03  # mesh, curves and volume cover a good part of the view
    assert len(np.unique(rgb.reshape(-1, 3), axis=0)) > 50


@needs_opengl
def test_cancel_stops_a_long_plan_and_keeps_the_old_one(qtbot, window):
    plan_in_window(qtbot, window)
    old = window.document.plan
    from dataclasses import replace
    scene = window.document.scene
    window.document.edit(replace(scene, planner=replace(scene.planner, roadmap_samples=150_000)), "dense roadmap")
    stages = []
    window.runner.progress.connect(lambda stage, *_: stages.append(stage))
    window.start_plan()
    qtbot.waitUntil(lambda: "roadmap" in stages, timeout=60_000)
    started = time.perf_counter()
    qtbot.mouseClick(window.cancel_button, Qt.MouseButton.LeftButton)
    qtbot.waitUntil(lambda: not window.runner.running, timeout=60_000)
    assert time.perf_counter() - started < 30
    assert window.document.plan is old and "cancelled" in window.stage.text()
    assert window.plan_button.isEnabled() and not window.cancel_button.isEnabled()


@needs_opengl
def test_export_shows_the_caution_and_writes_through_the_core_exporter(qtbot, window, tmp_path):
    from app.export_dialog import ExportDialog
    from core import SAFETY_CAUTION
    plan_in_window(qtbot, window)
    dialog = ExportDialog(window.document.plan, tmp_path / "out", [window.document.path])
    qtbot.addWidget(dialog)
    assert SAFETY_CAUTION in dialog.caution.text() and "PASSED" in dialog.status.text()
    assert not dialog.save_button.isEnabled()
    dialog.understood.setChecked(True)
    assert dialog.save_button.isEnabled()
    folder, notes = dialog.write()
    assert (folder / "plan.json").exists() and "VERIFIED" in (folder / "report.txt").read_text() and not notes
    # A folder of the user's own files is refused and left exactly as it was.
    mine = tmp_path / "mine"
    mine.mkdir()
    (mine / "notes.txt").write_text("keep me")
    dialog.folder.setText(str(mine))
    with pytest.raises(SkyloomError, match="did not write"):
        dialog.write()
    assert [p.name for p in mine.iterdir()] == ["notes.txt"] and (mine / "notes.txt").read_text() == "keep me"


@needs_opengl
def test_export_proposes_a_fresh_folder_beside_the_scene(qtbot, window, monkeypatch):
    from app import main_window
    seen = {}

    class Recorder:
        def __init__(self, plan, folder, protect, parent):
            seen.update(folder=folder, protect=protect)

        def exec(self):
            return False

    monkeypatch.setattr(main_window, "ExportDialog", Recorder)
    plan_in_window(qtbot, window)
    assert window.document.plan is not None
    scene_path = window.document.path
    window.export()
    assert seen["folder"].parent == scene_path.parent and not seen["folder"].exists()
    assert seen["protect"] == [scene_path]


def test_gui_command_reports_a_missing_scene_without_a_traceback(capsys):
    from core.cli import main
    assert main(["gui", "no/such/scene.json"]) == 2
    assert "cannot read the file" in capsys.readouterr().err


def _send_mouse(widget, kind, pixel, button, buttons):
    from PySide6.QtGui import QMouseEvent
    from PySide6.QtWidgets import QApplication
    local = QPointF(pixel)
    QApplication.sendEvent(widget, QMouseEvent(kind, local, local, QPointF(widget.mapToGlobal(pixel)), button,
                                               buttons, Qt.KeyboardModifier.NoModifier))


def test_dragging_a_point_moves_it_as_one_undo_step(qtbot, document, layout):
    from PySide6.QtCore import QEvent
    f = document.formation(document.active_formation)
    start, target = f.positions[3], f.positions[3] + [1.0, 1.8, 0.0]  # ends 0.2 m from a grid line
    plot, vp = layout.top, layout.top.viewport()
    click_view(qtbot, plot, *start[:2])  # selects it (and settles the axes)
    before = document.formation(f.name).positions.copy()
    steps_before = document.undo_stack.count()

    def pixel(p):
        return plot.mapFromScene(plot.box.mapViewToScene(QPointF(*p[:2])))

    left, none = Qt.MouseButton.LeftButton, Qt.MouseButton.NoButton
    _send_mouse(vp, QEvent.Type.MouseButtonPress, pixel(start), left, left)
    for s in np.linspace(0.1, 1.0, 8):
        qtbot.wait(30)  # pyqtgraph rate-limits move events
        _send_mouse(vp, QEvent.Type.MouseMove, pixel(start + s * (target - start)), none, left)
    _send_mouse(vp, QEvent.Type.MouseButtonRelease, pixel(target), left, none)
    moved = document.formation(f.name).positions
    assert np.allclose(moved[3], [round(t) for t in target[:2]] + [start[2]])  # snapped to the 1 m grid
    assert np.array_equal(np.delete(moved, 3, axis=0), np.delete(before, 3, axis=0))
    assert document.undo_stack.count() == steps_before + 1  # the whole drag is one step
    document.undo_stack.undo()
    assert np.array_equal(document.formation(f.name).positions, before)


@needs_opengl
def test_play_advances_the_time_cursor(qtbot, make_window):
    window = make_window("lab_eight.json")
    plan_in_window(qtbot, window)
    window.time_bar.speed.setCurrentText("10×")
    qtbot.mouseClick(window.time_bar.play_button, Qt.MouseButton.LeftButton)
    qtbot.waitUntil(lambda: window.document.time > 1.0, timeout=5000)
    qtbot.mouseClick(window.time_bar.play_button, Qt.MouseButton.LeftButton)
    assert not window.time_bar.timer.isActive()


def test_planning_errors_are_readable_messages(qtbot, document):
    from dataclasses import replace

    from app.plan_runner import PlanRunner
    runner = PlanRunner(document)
    messages = []
    runner.failed.connect(messages.append)
    f = document.formation(document.active_formation)
    document.edit_formation(f.name, f.positions[:-1], None, "drop a point")
    assert runner.start() is False
    assert "cannot be planned yet" in messages[-1] and "points" in messages[-1]
    document.undo_stack.undo()
    scene = document.scene
    short = replace(scene.timeline, transitions=(replace(scene.timeline.transitions[0], duration=0.5),)
                    + scene.timeline.transitions[1:])
    document.edit(replace(scene, timeline=short), "too short")
    assert runner.start()
    qtbot.waitUntil(lambda: not runner.running, timeout=60_000)
    assert "too short" in messages[-1] and "Traceback" not in messages[-1]
    assert document.plan is None  # nothing half-made was shown


def test_an_error_escaping_a_slot_is_logged_not_printed(qtbot, capsys, monkeypatch):
    from app import main
    shown = []
    monkeypatch.setattr(main.QMessageBox, "critical", lambda *args: shown.append(args[2]))
    try:
        raise ZeroDivisionError("deliberate")
    except ZeroDivisionError as exc:
        main.report_unexpected(type(exc), exc, exc.__traceback__)
    err = capsys.readouterr().err
    assert "Traceback" not in err and "internal error in the designer (ZeroDivisionError)" in err
    log = Path(shown[0].rsplit("\n", 1)[1])
    assert "Traceback" in log.read_text() and "deliberate" in log.read_text()


@needs_opengl
def test_an_edit_makes_the_plan_stale_everywhere_and_export_refuses_it(qtbot, make_window, monkeypatch):
    from dataclasses import replace

    from app import main_window
    opened = []

    class Recorder:
        def __init__(self, *args):
            opened.append(args)

        def exec(self):
            return False

    monkeypatch.setattr(main_window, "ExportDialog", Recorder)
    window = make_window("lab_eight.json")
    plan_in_window(qtbot, window)
    doc = window.document
    assert doc.plan_is_current and "out of date" not in window.windowTitle()
    scene = doc.scene
    doc.edit(replace(scene, planner=replace(scene.planner, smoothing_iterations=2)), "fewer rounds")
    assert not doc.plan_is_current and doc.plan is not None
    assert window.windowTitle().endswith("— plan out of date")
    assert window.summary.details.toPlainText().startswith("PLAN OUT OF DATE")
    assert window.findings.summary.text().startswith("Plan out of date")
    window.export()
    assert not opened and "edited after this plan" in window.last_error
    doc.undo_stack.undo()  # back to the planned scene: the plan is current again
    assert doc.plan_is_current and "out of date" not in window.windowTitle()
    assert "OUT OF DATE" not in window.summary.details.toPlainText()
    window.export()
    assert len(opened) == 1


@needs_opengl
def test_unsaved_edits_are_asked_about_before_new_open_and_close(qtbot, make_window, unsaved_prompt, tmp_path):
    import shutil
    from dataclasses import replace

    from PySide6.QtWidgets import QMessageBox
    for name in ("lab_eight.json", "cube.csv"):
        shutil.copy(SAMPLES / name, tmp_path / name)
    window = make_window("lab_eight.json", tmp_path)
    doc = window.document
    window.new_scene()  # nothing unsaved: no question
    assert unsaved_prompt.questions == [] and doc.path is None and doc.scene.name == "Untitled scene"
    window.open_path(tmp_path / "lab_eight.json")
    scene = doc.scene
    edited = replace(scene, planner=replace(scene.planner, smoothing_iterations=2))
    doc.edit(edited, "fewer rounds")
    buttons = QMessageBox.StandardButton
    unsaved_prompt.answer = buttons.Cancel
    window.new_scene()
    assert doc.scene is edited and doc.unsaved
    assert not window.close() and window.isVisible()  # closing cancelled: the window stays
    assert len(unsaved_prompt.questions) == 2 and "closing the designer" in unsaved_prompt.questions[-1]
    unsaved_prompt.answer = buttons.Save  # saved to its file, then replaced by the new scene
    window.new_scene()
    assert load_scene(tmp_path / "lab_eight.json").planner.smoothing_iterations == 2
    assert doc.path is None and len(doc.scene.fleet.drones) == 8 and not doc.unsaved
    doc.edit(replace(doc.scene, name="my show"), "rename")
    unsaved_prompt.answer = buttons.Discard
    assert window.close()
    assert len(unsaved_prompt.questions) == 4


@needs_opengl
def test_the_new_scene_plans_and_verifies_in_the_designer(qtbot, make_window):
    window = make_window("lab_eight.json")
    window.new_scene()
    plan_in_window(qtbot, window)
    doc = window.document
    assert doc.plan is not None and doc.plan.verified and doc.plan_is_current, getattr(window, "last_error", "")
    assert window.windowTitle() == "Skyloom designer — Untitled scene"


@needs_opengl
def test_messages_name_files_beside_the_scene_by_file_name(qtbot, make_window):
    window = make_window("lab_eight.json")
    folder = window.document.base_dir.resolve()
    window.document.message.emit(f"{folder / 'cube.csv'}: row 3: expected 3 or 4 columns")
    assert window.last_error == "cube.csv: row 3: expected 3 or 4 columns"


def test_planner_settings_explain_themselves_with_the_model_defaults(qtbot, document):
    from app.planner_panel import PlannerPanel
    from core.scene import PlannerSettings
    panel = PlannerPanel(document)
    qtbot.addWidget(panel)
    defaults = PlannerSettings()
    widgets = [panel.samples, panel.stretch, panel.search, panel.suboptimality, panel.time_limit, panel.smoothing,
               panel.iterations, panel.objective, panel.degree, panel.workers]
    assert all(len(w.toolTip()) > 40 for w in widgets)
    assert f"default {defaults.degree}" in panel.degree.toolTip()
    assert f"default {defaults.smoothing_iterations}" in panel.iterations.toolTip()
    assert f"default {defaults.suboptimality:g}" in panel.suboptimality.toolTip()
    assert f"default {defaults.spanner_stretch:g}" in panel.stretch.toolTip()
    assert f"default {defaults.search_time_limit:g} s" in panel.time_limit.toolTip()


def test_timeline_transitions_are_inserted_removed_and_reordered_as_undo_steps(qtbot, document):
    from app.timeline_panel import TimelinePanel
    panel = TimelinePanel(document)
    qtbot.addWidget(panel)
    original = document.scene.timeline.transitions
    targets = lambda: [t.to for t in document.scene.timeline.transitions]  # noqa: E731
    assert targets() == ["cube", "rings", "pads"]
    panel.table.selectRow(0)
    qtbot.mouseClick(panel.down_button, Qt.MouseButton.LeftButton)
    assert targets() == ["rings", "cube", "pads"] and panel.selected_row() == 1
    qtbot.mouseClick(panel.up_button, Qt.MouseButton.LeftButton)
    assert document.scene.timeline.transitions == original and panel.selected_row() == 0
    qtbot.mouseClick(panel.add_button, Qt.MouseButton.LeftButton)  # after "cube": a target other than cube
    assert len(targets()) == 4 and targets()[1] != "cube" and panel.selected_row() == 1
    qtbot.mouseClick(panel.remove_button, Qt.MouseButton.LeftButton)
    assert document.scene.timeline.transitions == original
    panel.table.selectRow(1)
    qtbot.mouseClick(panel.remove_button, Qt.MouseButton.LeftButton)
    assert targets() == ["cube", "pads"]
    for _ in range(5):
        document.undo_stack.undo()
    assert document.scene.timeline.transitions == original


def test_ground_grid_spacing_is_a_round_number_of_metres():
    from app.site_view import GRID_CELLS, grid_spacing
    for length, expected in ((30.0, 2.0), (100.0, 5.0), (8.0, 0.5), (1000.0, 50.0), (40.0, 2.0), (41.0, 5.0)):
        spacing = grid_spacing(length)
        assert spacing == expected and GRID_CELLS / 5 <= length / spacing <= GRID_CELLS


@needs_opengl
@pytest.mark.parametrize("size", [(1280, 720), (1500, 950)])
def test_the_site_is_framed_whole_at_common_window_sizes(qtbot, make_window, size):
    """Every corner of the flight volume projects inside the 3D view (pyqtgraph's own projection
    and view matrices), with the ground grid drawn and its spacing written."""
    from PySide6.QtGui import QVector4D

    from app.site_view import box_edges
    window = make_window("bridge_inspection.json")
    window.resize(*size)
    qtbot.wait(100)
    view = window.site
    view.frame_all()
    w, h = view.width(), view.height()
    matrix = view.projectionMatrix((0, 0, w, h), (0, 0, w, h)) * view.viewMatrix()
    corners = np.unique(box_edges(window.document.scene.site.flight_volume.bounds), axis=0)
    for corner in corners:
        p = matrix.map(QVector4D(*corner, 1.0))
        assert abs(p.x() / p.w()) <= 1.0 and abs(p.y() / p.w()) <= 1.0
    assert view.scale_label.text() == f"ground grid {view.ground_spacing:g} m · z up" and len(view._ground) == 1


def test_drone_list_filters_and_drives_the_selection_both_ways(qtbot, document):
    """The lab sample's drones (their start group from pads): the filter keeps the rows whose id,
    type or group contains the text; selecting rows selects those drones in the document, and a
    selection made elsewhere shows in the list without echoing back."""
    from app.drone_list import DroneList
    panel = DroneList(document)
    qtbot.addWidget(panel)
    fleet = document.scene.fleet
    assert panel.table.rowCount() == len(fleet.drones)
    assert [panel.table.item(r, 0).text() for r in range(panel.table.rowCount())] == list(fleet.ids)
    groups = document.formation(document.scene.timeline.start).groups
    wanted = groups[0]
    panel.filter.setText(wanted.upper())  # case ignored
    shown = [r for r in range(panel.table.rowCount()) if not panel.table.isRowHidden(r)]
    assert shown == [k for k, g in enumerate(groups) if wanted in g.casefold() or wanted in fleet.ids[k].casefold()]
    assert panel.count.text().startswith(f"{len(shown)} of {len(fleet.drones)} drones shown")
    panel.filter.clear()
    panel.table.selectRow(2)
    assert document.selected == (2,)
    changes = []
    document.selection_changed.connect(lambda: changes.append(document.selected))
    document.select((1, 4))
    selected_rows = sorted(i.row() for i in panel.table.selectionModel().selectedRows())
    assert selected_rows == [1, 4] and changes == [(1, 4)]  # shown here, not sent back
    assert "2 selected" in panel.count.text()


@needs_opengl
def test_clicking_a_drone_in_3d_selects_it_and_ctrl_click_adds_another(qtbot, make_window):
    """Markers are picked in numpy (projected with pyqtgraph's own matrices, as the framing test
    does); the drone list follows, and a click on empty space clears the selection."""
    from app.site_view import PICK_PIXELS
    window = make_window("bridge_inspection.json")  # its launch line: drones 3 m apart
    plan_in_window(qtbot, window)
    doc, view = window.document, window.site
    doc.set_time(0.5)
    window.centre.setCurrentWidget(view)
    qtbot.wait(100)
    positions = doc.plan.trajectory.evaluate(np.array([doc.time]))[0]
    pixels = view.screen_positions(positions)
    inside = np.nonzero(np.all((pixels > 5) & (pixels < [view.width() - 5, view.height() - 5]), axis=1))[0]
    gaps = np.linalg.norm(pixels[inside, None] - pixels[None, inside], axis=-1) + np.eye(len(inside)) * 1e9
    apart = [int(inside[k]) for k in range(len(inside)) if gaps[k].min() > 4]  # a click on a marker picks it
    assert len(apart) >= 2
    first, second = apart[:2]
    qtbot.mouseClick(view, Qt.MouseButton.LeftButton, pos=QPointF(*pixels[first]).toPoint())
    assert doc.selected == (first,)
    assert window.drones.table.selectionModel().isRowSelected(first)
    qtbot.mouseClick(view, Qt.MouseButton.LeftButton, Qt.KeyboardModifier.ControlModifier,
                     QPointF(*pixels[second]).toPoint())
    assert doc.selected == tuple(sorted((first, second)))
    free = np.array([3.0, 3.0])
    assert np.linalg.norm(pixels - free, axis=1).min() > PICK_PIXELS and view.drone_at(*free) is None
    qtbot.mouseClick(view, Qt.MouseButton.LeftButton, pos=QPointF(*free).toPoint())
    assert doc.selected == ()


def test_layout_draws_obstacles_where_they_meet_the_working_altitude(qtbot, settings):
    """The bridge sample from above: at mid-height of the footbridge mesh the top view shows its
    cut lines (the same segments as core.scene.sections gives), above every obstacle none."""
    from app.document import Document
    from app.layout_view import LayoutView
    from core.scene.sections import site_section
    path = SAMPLES / "bridge_inspection.json"
    document = Document(load_scene(path), path, settings)
    view = LayoutView(document)
    qtbot.addWidget(view)
    mesh = document.meshes()[0].mesh
    middle = float(mesh.bounds[:, 2].mean())
    view.altitude.setValue(middle)
    x, y = view.top.obstacles.getData()
    expected = site_section(document.meshes(), [], 2, middle, (0, 1)).reshape(-1, 2)
    assert len(x) == len(expected) > 0 and np.allclose(np.c_[x, y], expected)
    view.altitude.setValue(float(mesh.bounds[1, 2]) + 1.0)
    x, _ = view.top.obstacles.getData()
    assert x is None or len(x) == 0
