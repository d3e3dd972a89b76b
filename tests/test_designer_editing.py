"""Site and fleet editing in the designer, driven like a user (pytest-qt): every edit is one undo
step, a refused value leaves the scene as it was and names the field, and edited scenes save and
load back."""

import numpy as np
import pytest

from conftest import SAMPLES, needs_opengl, plan_in_window
from core.scene import load_scene
from core.scene.meshes import load_site_meshes


@pytest.fixture
def messages(document):
    said = []
    document.message.connect(said.append)
    return said


@pytest.fixture
def site_panel(qtbot, document):
    from app.site_panel import SitePanel
    panel = SitePanel(document)
    qtbot.addWidget(panel)
    return panel


def _type_into(table, row, column, text):
    table.item(row, column).setText(text)  # what the delegate does when a cell edit is committed


def test_flight_volume_edit_is_one_undo_step_and_an_inverted_box_is_refused(qtbot, document, site_panel, messages):
    before = document.scene
    spin = site_panel.volume_spins[1][2]  # upper z
    spin.setValue(before.site.flight_volume.upper[2] + 5.0)
    spin.editingFinished.emit()
    assert document.scene.site.flight_volume.upper[2] == before.site.flight_volume.upper[2] + 5.0
    document.undo_stack.undo()
    assert document.scene == before
    low = site_panel.volume_spins[0][0]  # lower x above upper x
    low.setValue(before.site.flight_volume.upper[0] + 1.0)
    low.editingFinished.emit()
    assert document.scene == before and messages and messages[-1].startswith("flight volume: upper")
    qtbot.waitUntil(lambda: low.value() == before.site.flight_volume.lower[0])  # the old value shows again


def test_keep_out_boxes_added_edited_and_removed_reach_the_layout(qtbot, document, site_panel, messages):
    from app.layout_view import LayoutView
    from core.scene.sections import site_section
    layout = LayoutView(document)
    qtbot.addWidget(layout)
    before = document.scene
    site_panel.add_box()
    box = document.scene.site.keep_out[-1]
    assert len(document.scene.site.keep_out) == len(before.site.keep_out) + 1
    row = len(document.scene.site.keep_out) - 1
    _type_into(site_panel.boxes, row, 6, "3.5")  # z max
    edited = document.scene.site.keep_out[-1]
    assert edited.upper[2] == 3.5 and edited.lower == box.lower
    layout.altitude.setValue(1.0)  # cuts the new box: its rectangle, as the core's section gives it
    x, y = layout.top.obstacles.getData()
    expected = site_section(document.meshes(), [b.bounds for b in document.scene.site.keep_out], 2, 1.0, (0, 1))
    assert np.allclose(np.c_[x, y], expected.reshape(-1, 2))
    _type_into(site_panel.boxes, row, 3, "9")  # z min above z max: refused
    assert document.scene.site.keep_out[-1] == edited and "z min (m)" in messages[-1]
    _type_into(site_panel.boxes, row, 1, "not a number")
    assert document.scene.site.keep_out[-1] == edited and "x min (m): 'not a number' is not a number" in messages[-1]
    site_panel.boxes.setCurrentCell(row, 0)
    site_panel.remove_box()
    assert document.scene.site.keep_out == before.site.keep_out
    for _ in range(3):
        document.undo_stack.undo()
    assert document.scene == before


def test_a_mesh_is_added_placed_saved_and_read_back(qtbot, document, site_panel, tmp_path, messages):
    """A box mesh written by trimesh, added and moved 4 m in x: the site's mesh bounds move by
    exactly that (trimesh's own bounds of the placed mesh), and the saved scene reads back equal."""
    import trimesh
    original = trimesh.creation.box(extents=(1.0, 2.0, 3.0))
    path = tmp_path / "crate.stl"
    original.export(path)
    scene_path = tmp_path / "scene.json"
    document.save(scene_path)  # the scene's folder is now tmp_path
    site_panel.add_mesh(path)
    ref = document.scene.site.meshes[-1]
    assert ref.file == "crate.stl" and ref.name == "crate"
    row = len(document.scene.site.meshes) - 1
    _type_into(site_panel.meshes, row, 5, "4")  # move x
    mesh = document.meshes()[-1].mesh
    assert np.allclose(mesh.bounds, original.bounds + [[4.0, 0, 0], [4.0, 0, 0]])
    _type_into(site_panel.meshes, row, 3, "-2")  # scale: refused with the model's reason
    assert document.scene.site.meshes[-1].scale == 1.0 and "scale: Input should be greater than 0" in messages[-1]
    document.save(scene_path)
    again = load_scene(scene_path)
    assert again == document.scene
    assert np.allclose(load_site_meshes(again.site, tmp_path, "scene.json")[-1].mesh.bounds, mesh.bounds)
    site_panel.meshes.setCurrentCell(row, 0)
    site_panel.remove_mesh()
    assert document.scene.site.meshes == ()


def test_fleet_size_types_and_assignment_of_types_are_undoable(qtbot, document, messages):
    from app.drone_list import DroneList
    from app.fleet_panel import FleetPanel
    fleet_panel, drones = FleetPanel(document), DroneList(document)
    qtbot.addWidget(fleet_panel)
    qtbot.addWidget(drones)
    before = document.scene
    n = len(before.fleet.drones)
    fleet_panel.size.setValue(n + 2)
    ids = document.scene.fleet.ids
    assert len(ids) == n + 2 and len(set(ids)) == n + 2 and ids[:n] == before.fleet.ids
    assert "another number of points" in messages[-1]  # the formations need two more points
    fleet_panel.add_type()
    types = document.scene.fleet.types
    assert len(types) == len(before.fleet.types) + 1 and types[-1].radius_z == types[0].radius_z
    document.select((n, n + 1))
    drones.type_choice.setCurrentText(types[-1].name)
    drones.set_type_button.click()
    assert [d.type for d in document.scene.fleet.drones[n:]] == [types[-1].name] * 2
    assert drones.table.item(n, 1).text() == types[-1].name
    fleet_panel.table.setCurrentCell(0, len(types) - 1)
    fleet_panel.remove_type()  # two drones are of it: refused
    assert len(document.scene.fleet.types) == len(types) and "2 drone(s) are of it" in messages[-1]
    fleet_panel.size.setValue(n)
    assert document.scene.fleet.drones == before.fleet.drones
    fleet_panel.table.setCurrentCell(0, len(types) - 1)
    fleet_panel.remove_type()
    assert document.scene.fleet.types == before.fleet.types
    for _ in range(5):
        document.undo_stack.undo()
    assert document.scene == before


def test_new_drone_ids_continue_the_fleet_pattern():
    from app.fresh_names import fresh_name, next_ids
    assert next_ids(["d08", "d09"], 2) == ["d10", "d11"]
    assert next_ids(["cam", "S1", "S3"], 2) == ["S4", "S5"]
    assert next_ids(["a", "b"], 1) == ["drone1"] and next_ids(["drone1", "b"], 1) == ["drone2"]
    assert fresh_name("box", {"box", "box_2"}) == "box_3" and fresh_name("pad", set()) == "pad"


@needs_opengl
def test_an_edited_site_plans_and_verifies(qtbot, make_window):
    """A keep-out box added in the middle of the lab sample's flight volume (as a user would):
    planned again, the plan is verified, and no drone's sampled centre comes within the clearance
    of the box (checked here with numpy on 4 000 instants, independently of the verifier)."""
    from app.site_panel import SitePanel
    window = make_window("lab_eight.json")
    panel = window.findChild(SitePanel)
    document = window.document
    lo, hi = document.scene.site.flight_volume.bounds
    points = np.vstack([f.positions for f in document.scene.formations])
    # The clear spot nearest the middle of the volume: a column there touches no formation point.
    xs, ys = np.meshgrid(np.linspace(lo[0] + 1, hi[0] - 1, 41), np.linspace(lo[1] + 1, hi[1] - 1, 41))
    spots = np.c_[xs.ravel(), ys.ravel()]
    clear = np.linalg.norm(spots[:, None] - points[None, :, :2], axis=-1).min(axis=1) > 1.5
    middle = 0.5 * (lo[:2] + hi[:2])
    centre = spots[clear][np.argmin(np.linalg.norm(spots[clear] - middle, axis=1))]
    panel.add_box()
    row = len(document.scene.site.keep_out) - 1
    new_lo = [centre[0] - 0.4, centre[1] - 0.4, lo[2]]
    new_hi = [centre[0] + 0.4, centre[1] + 0.4, lo[2] + 0.6 * (hi[2] - lo[2])]
    for axis in range(3):  # in the order that keeps every intermediate box a box (each edit is checked)
        box = document.scene.site.keep_out[row]
        edits = [(1 + axis, new_lo[axis]), (4 + axis, new_hi[axis])]
        for column, value in (edits[::-1] if new_lo[axis] >= box.upper[axis] else edits):
            panel.boxes.item(row, column).setText(f"{value:.3f}")
    assert np.allclose(document.scene.site.keep_out[row].bounds, [new_lo, new_hi], atol=1e-3)
    assert not document.problems(), document.problems()
    plan_in_window(qtbot, window)
    plan = document.plan
    assert plan is not None and plan.verified and document.plan_is_current, getattr(window, "last_error", "")
    box = document.scene.site.keep_out[-1].bounds
    t = np.linspace(0.0, plan.trajectory.duration, 4000)
    p = plan.trajectory.evaluate(t)  # (T, N, 3)
    nearest = np.clip(p, box[0], box[1])
    semi = document.scene.fleet.semi_axes  # (N, 3) clearance half-axes
    ratio = np.sqrt((((p - nearest) / semi) ** 2).sum(axis=-1))
    assert ratio.min() >= 1.0 - 1e-6


def test_a_scene_saved_mid_edit_opens_again_with_its_problems_listed(qtbot, document, site_panel, tmp_path,
                                                                    settings):
    """A keep-out box over formation points is a problem to plan, not to save: the file opens again
    in the designer (the scene equal to the one saved) and the problems are listed, while the
    command-line loader still refuses it, naming the box."""
    from app.document import Document
    from core.errors import SceneError
    site_panel.add_box()
    problems = document.problems()
    assert problems
    document.save(tmp_path / "edited.json")
    other = Document(load_scene(SAMPLES / "lab_eight.json"), SAMPLES / "lab_eight.json", settings)
    said = []
    other.message.connect(said.append)
    other.open(tmp_path / "edited.json")
    assert other.scene == document.scene != load_scene(SAMPLES / "lab_eight.json")
    assert said and f"{len(problems)} problem(s)" in said[0] and "keep-out box 'box'" in said[0]
    with pytest.raises(SceneError, match="keep-out box 'box'"):
        load_scene(tmp_path / "edited.json")


def test_save_as_into_another_folder_keeps_meshes_and_csv_points(qtbot, settings, tmp_path):
    """The bridge sample (a mesh) and the lab sample (a CSV formation) saved into a fresh folder:
    the saved files load there with the same meshes (trimesh bounds) and points, and saving again
    and undoing still name files that exist."""
    from app.document import Document
    for name in ("bridge_inspection.json", "lab_eight.json"):
        path = SAMPLES / name
        doc = Document(load_scene(path), path, settings)
        before = doc.meshes()
        doc.edit_formation(doc.scene.formations[0].name, doc.scene.formations[0].positions + [0.0, 0.0, 0.5],
                           doc.scene.formations[0].groups, "lift")
        target = tmp_path / name.replace(".json", "") / name
        target.parent.mkdir()
        doc.save(target)
        doc.save()  # again, in the new folder
        again = load_scene(target)
        assert again == doc.scene
        for f, g in zip(again.formations, load_scene(path).formations, strict=True):
            assert f.csv is None and np.allclose(f.positions - (0, 0, 0.5) if f is again.formations[0]
                                                 else f.positions, g.positions)
        meshes = load_site_meshes(again.site, target.parent, name)
        assert [m.mesh.bounds.tolist() for m in meshes] == [m.mesh.bounds.tolist() for m in before]
        doc.undo_stack.undo()
        doc.save()
        assert load_scene(target).formations[0].positions.tolist() == load_scene(path).formations[0].positions.tolist()
