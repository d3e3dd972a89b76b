"""The designer's looks, motion plots, plan summary tables and formation-layout overlays, driven
like a user (pytest-qt), and one screenshot per main screen in both looks at 1280×720."""

import os
from pathlib import Path

import numpy as np
import pytest
from PySide6.QtCore import QPointF, Qt
from PySide6.QtGui import QGuiApplication

from conftest import SAMPLES, click_view, needs_opengl, plan_in_window
from core.scene import load_scene


def _relative_luminance(rgb) -> float:
    """WCAG 2.1 relative luminance of an sRGB colour in [0, 1] (W3C, Web Content Accessibility
    Guidelines 2.1, 2018, definition "relative luminance")."""
    c = np.asarray(rgb[:3], dtype=float)
    linear = np.where(c <= 0.04045, c / 12.92, ((c + 0.055) / 1.055) ** 2.4)
    return float(linear @ [0.2126, 0.7152, 0.0722])


def _contrast(a, b) -> float:
    """WCAG 2.1 contrast ratio (L1 + 0.05) / (L2 + 0.05); 4.5 is its level-AA minimum for body text."""
    la, lb = sorted((_relative_luminance(a), _relative_luminance(b)), reverse=True)
    return (la + 0.05) / (lb + 0.05)


def _hex(colour: str):
    return tuple(int(colour[k:k + 2], 16) / 255 for k in (1, 3, 5))


def test_wcag_contrast_formula_against_its_published_extremes():
    """Black on white is 21:1 and a colour on itself 1:1 (WCAG 2.1, 2018, "contrast ratio")."""
    assert _contrast((0, 0, 0), (1, 1, 1)) == pytest.approx(21.0)
    assert _contrast((0.3, 0.5, 0.7), (0.3, 0.5, 0.7)) == pytest.approx(1.0)


@pytest.mark.parametrize("name", ["light", "dark"])
def test_both_looks_have_legible_text_and_lines(name):
    """Panel text and plot text reach WCAG's 4.5:1 for body text on their backgrounds; limits,
    drones and groups stay apart from the canvas (3:1, WCAG's minimum for graphics)."""
    from app import theme
    look = theme.THEMES[name]
    for text, ground in ((look.text, look.window), (look.text, look.panel), (look.accent_text, look.accent)):
        assert _contrast(_hex(text), _hex(ground)) >= 4.5, (text, ground)
    assert _contrast(look.canvas_text, look.canvas) >= 4.5
    for colour in (look.limit, look.volume, look.too_close, look.cursor):
        assert _contrast(colour, look.canvas) >= 3.0, colour
    for colour in np.r_[theme.drone_colours(40, look), theme.group_colours(12, look)]:
        assert _contrast(colour, look.canvas) >= 3.0, colour  # WCAG 2.1 criterion 1.4.11, non-text contrast


@needs_opengl
def test_the_look_is_chosen_in_the_view_menu_remembered_and_used_everywhere(qtbot, make_window):
    from app import theme
    window = make_window("lab_eight.json")
    plan_in_window(qtbot, window)
    window.theme_actions["light"].trigger()
    assert theme.current() is theme.LIGHT and window.document.settings.value("theme") == "light"
    canvas = theme.LIGHT.qcolor(theme.LIGHT.canvas)
    assert window.layout_view.top.backgroundBrush().color() == canvas
    assert window.plots.layout_widget.backgroundBrush().color() == canvas
    assert np.allclose(np.array(window.site.opts["bgcolor"])[:3], np.array(theme.LIGHT.canvas[:3]), atol=0.01)
    assert QGuiApplication.palette().window().color().name() == theme.LIGHT.window
    window.theme_actions["dark"].trigger()
    assert QGuiApplication.palette().window().color().name() == theme.DARK.window
    assert window.layout_view.top.backgroundBrush().color() == theme.DARK.qcolor(theme.DARK.canvas)


@needs_opengl
def test_motion_plots_one_quantity_with_legend_in_the_3d_colours(qtbot, make_window):
    from app import theme
    window = make_window("lab_eight.json")
    plan_in_window(qtbot, window)
    doc, plots = window.document, window.plots
    doc.select((2, 5))
    colours = theme.drone_colours(doc.plan.trajectory.n_drones)
    pens = [item.opts["pen"].color() for item in plots.motion.listDataItems()]
    assert len(pens) == 4  # speed: horizontal and vertical per selected drone
    for d, pen in zip((2, 2, 5, 5), pens, strict=True):
        assert np.allclose([pen.redF(), pen.greenF(), pen.blueF()], colours[d][:3], atol=0.01)
    ids = doc.scene.fleet.ids
    assert ids[2] in plots.legend.text() and ids[5] in plots.legend.text()
    plots.buttons.button(3).click()  # snap
    assert plots.motion.getAxis("left").labelText == "snap" and len(plots.motion.listDataItems()) == 2
    # the selected drones keep their colour in 3D; the others are dimmed
    drawn = window.site._drones.color
    assert np.allclose(drawn[2], colours[2]) and np.allclose(drawn[0], theme.current().dimmed)


@needs_opengl
def test_plots_and_layout_are_legible_at_1280_by_720(qtbot, make_window):
    window = make_window("viaduct_survey.json")  # two drone types
    window.resize(1280, 720)
    plan_in_window(qtbot, window)
    qtbot.wait(100)
    assert window.width() == 1280 and window.minimumSizeHint().width() <= 1280  # nothing forces it wider
    for plot in window.plots.plots:
        assert plot.vb.height() >= 90 and plot.vb.width() >= 250, (plot.vb.width(), plot.vb.height())
    window.centre.setCurrentWidget(window.layout_view)
    qtbot.wait(100)
    for plot in (window.layout_view.top, window.layout_view.side):
        assert plot.width() >= 250 and plot.height() >= 200, (plot.width(), plot.height())
    left = window.fleet.parentWidget().parentWidget()
    left.setCurrentWidget(window.fleet)
    qtbot.wait(100)
    table = window.fleet.table  # every field of every type in view, none behind a scroll bar
    assert not table.horizontalScrollBar().isVisible() and not table.verticalScrollBar().isVisible()


@needs_opengl
def test_plan_summary_tables_sort_copy_and_select(qtbot, make_window):
    window = make_window("lab_eight.json")
    plan_in_window(qtbot, window)
    doc, summary = window.document, window.summary
    plan = doc.plan
    assert summary.transitions.rowCount() == len(plan.transitions)
    for r, t in enumerate(plan.transitions):
        assert float(summary.transitions.item(r, 2).text()) == pytest.approx(t.duration, abs=5e-4)
    table = summary.drones
    assert table.rowCount() == plan.trajectory.n_drones
    table.sortItems(2, Qt.SortOrder.AscendingOrder)  # smallest separation ratio first
    ratios = [float(table.item(r, 2).text()) for r in range(table.rowCount())]
    assert ratios == sorted(ratios)
    assert ratios[0] == pytest.approx(min(d.min_separation_ratio for d in plan.report.drones), abs=5e-4)
    table.selectRow(0)
    assert doc.selected == (doc.scene.fleet.ids.index(table.item(0, 0).text()),)
    copied = table.copy_text().splitlines()
    assert copied[0].split("\t")[0] == "drone" and copied[1].split("\t")[0] == table.item(0, 0).text()
    assert summary.verdict.text().startswith("Verification PASSED") and summary.banner.isHidden()


def test_layout_markers_scale_with_zoom_within_bounds_and_groups_are_coloured(qtbot, document, layout):
    """The lab sample's pads: markers are the widest occupant's clearance (2 × radius_xy) in pixels
    at the zoom, clamped; points of one group share a colour, other groups differ."""
    from app.layout_view import MARKER_PIXELS
    view = layout
    start = document.formation(document.scene.timeline.start)
    view.document.choose_formation(start.name)
    plot = view.top
    radius = float(document.scene.fleet.semi_axes[:, 0].max())
    expected = 2 * radius / plot.box.viewPixelSize()[0]
    sizes = plot.scatter.data["size"].copy()
    assert np.allclose(sizes, np.clip(expected, *MARKER_PIXELS), rtol=0.02)
    plot.box.scaleBy((0.25, 0.25))  # zoom in 4×
    qtbot.wait(50)
    assert plot.scatter.data["size"].max() >= min(sizes.max() * 3.5, MARKER_PIXELS[1])
    brushes = [b.color().name() for b in plot.scatter.data["brush"]]
    groups = start.groups
    assert groups is not None and len(set(groups)) > 1
    for g in set(groups):
        assert len({brushes[k] for k, x in enumerate(groups) if x == g}) == 1
    assert len(set(brushes)) == len(set(groups))


def test_layout_hover_names_the_point_its_group_and_its_drone(qtbot, document, layout):
    view = layout
    start = document.formation(document.scene.timeline.start)
    k = 3
    x, y, _ = start.positions[k]
    pixel = view.top.mapFromScene(view.top.box.mapViewToScene(QPointF(x, y)))
    for _ in range(2):
        qtbot.mouseMove(view.top.viewport(), pixel)
        qtbot.wait(30)
    label = view.top.hover_label
    assert label.isVisible()
    assert label.textItem.toPlainText() == f"point {k} · group {start.groups[k]} · drone {document.scene.fleet.ids[k]}"


def test_shift_click_adds_a_point_on_top_of_another_and_it_joins_the_selected_group(qtbot, document, layout):
    view = layout
    f = document.formation(document.scene.timeline.start)
    x, y, z = f.positions[1]
    click_view(qtbot, view.top, x, y)
    assert view.selected == {1} and document.selected == (1,)  # point 1 of the start = drone 1
    click_view(qtbot, view.top, x, y, Qt.KeyboardModifier.ShiftModifier)
    g = document.formation(f.name)
    assert len(g.points) == len(f.points) + 1
    assert np.allclose(g.positions[-1], [view.snapped(x), view.snapped(y), view.altitude.value()])
    assert g.groups[-1] == f.groups[1]


@needs_opengl
def test_layout_selection_follows_the_drones_through_the_plan(qtbot, make_window):
    """In a formation the plan flies to, drone d's point is where its trajectory ends that
    transition (checked against the trajectory itself); selecting drones outlines their points and
    picking a point selects its drone."""
    window = make_window("lab_eight.json")
    plan_in_window(qtbot, window)
    doc, view = window.document, window.layout_view
    t = doc.plan.transitions[0]
    target = doc.formation(t.problem.target)
    doc.choose_formation(target.name)
    on = view.drones_on_points()
    at_breaks = doc.plan.trajectory.evaluate(doc.plan.trajectory.breaks)  # (S + 1, N, 3)
    for k in range(len(target.points)):  # drone on[k] stands on point k at some piece boundary
        assert np.linalg.norm(at_breaks[:, on[k]] - target.positions[k], axis=1).min() < 1e-6
    doc.select((int(on[0]), int(on[2])))
    assert view.selected == {0, 2}
    view.selected = set()
    x, y = target.positions[4][:2]
    view._clicked(view.top, x, y, Qt.KeyboardModifier.NoModifier)
    picked = view.top.pick(x, y)
    assert picked is not None and doc.selected == (int(on[picked]),)


@needs_opengl
def test_a_screenshot_of_every_main_screen_in_both_looks(qtbot, make_window, tmp_path):
    """The 3D site, the layout, motion plots, findings, plan summary and each scene tab at 1280×720,
    light and dark: every grab is drawn (many colours) and the screens differ from one another.
    SKYLOOM_SCREENSHOT_DIR keeps them for a person to look at."""
    window = make_window("viaduct_survey.json")
    window.resize(1280, 720)
    plan_in_window(qtbot, window)
    doc = window.document
    doc.set_time(0.45 * doc.plan.trajectory.duration)
    doc.select((0, 1))
    folder = Path(os.environ.get("SKYLOOM_SCREENSHOT_DIR", tmp_path))
    folder.mkdir(parents=True, exist_ok=True)
    left = window.formations.parentWidget().parentWidget()
    bottom = window.plots.parentWidget().parentWidget()
    screens = {"site": (window.site, window.plots), "layout": (window.layout_view, window.findings),
               "summary": (window.site, window.summary)}
    screens |= {f"tab_{left.tabText(k).lower()}": (window.site, window.plots, left.widget(k))
                for k in range(left.count())}
    seen = {}
    for look in ("light", "dark"):
        window.set_theme(look)
        for name, (centre, inspect, *panel) in screens.items():
            window.centre.setCurrentWidget(centre)
            bottom.setCurrentWidget(inspect)
            if panel:
                left.setCurrentWidget(panel[0])
            qtbot.wait(80)
            image = window.grab().toImage()
            assert image.save(str(folder / f"designer_{look}_{name}.png"))
            pixels = np.frombuffer(image.constBits(), dtype=np.uint8)[: image.sizeInBytes()]
            colours = np.unique(pixels.reshape(-1, 4)[::7], axis=0)
            assert len(colours) > 40, (look, name)
            seen[look, name] = pixels[::97].copy()
    for look in ("light", "dark"):
        assert not np.array_equal(seen[look, "site"], seen[look, "layout"])
        assert not np.array_equal(seen[look, "site"], seen[look, "summary"])
    assert not np.array_equal(seen["light", "site"], seen["dark", "site"])
    assert load_scene(SAMPLES / "viaduct_survey.json") == doc.scene  # looking changed nothing


def test_points_off_the_working_altitude_are_faded_in_the_top_view(qtbot, document, layout):
    """The lab sample's cube (two layers, 1.2 m apart, drones' vertical clearance well below that):
    at the lower layer's altitude its points are opaque and the upper layer's faded, and the other
    way round; the side view's plane does not change the top view."""
    from app.layout_view import OFF_PLANE_ALPHA
    cube = document.formation("cube")
    document.choose_formation("cube")
    z = cube.positions[:, 2]
    low, high = z.min(), z.max()
    for altitude, opaque in ((low, z == low), (high, z == high)):
        layout.altitude.setValue(altitude)
        alpha = np.array([b.color().alphaF() for b in layout.top.scatter.data["brush"]])
        full = layout.point_colours(np.zeros(len(z), dtype=bool))[:, 3]  # the group colours' own opacity
        assert np.allclose(alpha[opaque], full[opaque], atol=0.01)
        assert np.allclose(alpha[~opaque], full[~opaque] * OFF_PLANE_ALPHA, atol=0.01)


def test_start_times_before_planning_count_fixed_durations_and_name_the_fastest():
    from app.timeline_panel import start_times
    from core.scene import Timeline, Transition
    timeline = Timeline(start="a", start_hold=2.0, transitions=(
        Transition(to="b", duration=10.0, hold=1.0), Transition(to="c", hold=3.0), Transition(to="a", duration=5.0)))
    assert start_times(timeline) == ["2.0 s", "13.0 s", "16.0 s + fastest × 1"]
    assert start_times(timeline, flown=[10.0, 7.5, 5.0]) == ["2.0 s", "13.0 s", "23.5 s"]


@needs_opengl
def test_timeline_start_times_come_from_the_plan_and_match_the_flight(qtbot, make_window):
    """Once planned, each transition's "starts at" is where the trajectory leaves the previous
    formation: at that instant every drone stands on a point of it (checked on the trajectory)."""
    window = make_window("lab_eight.json")
    plan_in_window(qtbot, window)
    doc, table = window.document, window.timeline.table
    names = [doc.scene.timeline.start] + [t.to for t in doc.scene.timeline.transitions]
    for row in range(table.rowCount()):
        text = table.item(row, 4).text()
        assert "fastest" not in text
        at = doc.plan.trajectory.evaluate(np.array([float(text.removesuffix(" s"))]))[0]
        points = doc.formation(names[row]).positions
        gaps = np.linalg.norm(at[:, None] - points[None], axis=-1).min(axis=1)
        assert gaps.max() < 1e-3  # the text is rounded to 0.1 s; the drones start from rest


@needs_opengl
def test_mesh_faces_turned_to_the_camera_show_their_full_colour(qtbot, make_window):
    """The bridge sample seen from straight above: the deck's top face looks at the camera, so it is
    drawn in the look's obstacle colour itself (the plotting library's stock shading left such
    faces at 20 %); both looks."""
    from app import theme
    window = make_window("bridge_inspection.json")
    view = window.site
    window.centre.setCurrentWidget(view)
    for look in ("light", "dark"):
        window.set_theme(look)
        view.setCameraPosition(elevation=90, azimuth=0)
        qtbot.wait(50)
        image = view.grabFramebuffer()
        rows = np.frombuffer(image.constBits(), dtype=np.uint8).reshape(image.height(), image.bytesPerLine())
        rgba = rows[:, : 4 * image.width()].reshape(image.height(), image.width(), 4)
        h, w = image.height() // 2, image.width() // 2
        patch = rgba[h - 3:h + 4, w - 20:w + 21, 2::-1].reshape(-1, 3)  # BGRA in memory
        expected = np.array(theme.current().rgb255(theme.current().obstacle))
        assert np.abs(np.median(patch, axis=0) - expected).max() <= 8, (look, np.median(patch, axis=0), expected)
