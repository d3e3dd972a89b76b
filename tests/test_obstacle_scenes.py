"""Obstacle scenes end to end: sample plans verified, the verifier's mesh check, bad input, cache."""

import shutil
from dataclasses import replace

import numpy as np
import pytest
import trimesh

from conftest import ROOT, scene_dict
from core.cli import main
from core.errors import PlanningError, SceneError
from core.executors import InlineExecutor
from core.export import export_plan
from core.pipeline import plan
from core.planning import TransitionMethod
from core.scene import load_scene, scene_from_dict
from core.straight_line import straight_leg_points
from core.timing import PROFILES
from core.trajectory import FleetTrajectory
from core.verify import spec_from_scene, verify
from core.verify.discrete import check_discrete_plan

SAMPLES = ROOT / "sample_scenes"


@pytest.fixture(scope="module")
def bridge_result():
    return plan(load_scene(SAMPLES / "bridge_inspection.json"), base_dir=SAMPLES)


def test_bridge_plan_goes_round_the_bridge_and_verifies(bridge_result):
    assert bridge_result.verified
    assert any(v.kind == "obstacle" for v in bridge_result.report.violations) is False
    assert all(t.method is TransitionMethod.SMOOTHED for t in bridge_result.transitions)
    assert not any(v.kind == "obstacle" for v in bridge_result.report.violations)
    assert bridge_result.roadmap.vertices > 500 and bridge_result.roadmap.conflicts > 0
    # Independent discrete check on the waypoints the trajectory stops at (ends of its pieces).
    traj = bridge_result.trajectory
    stops = traj.evaluate(traj.breaks)  # (K + 1, N, 3)
    assert check_discrete_plan(np.swapaxes(stops, 0, 1), bridge_result.scene.fleet.clearance) == []


def test_bridge_export_carries_its_mesh_and_re_verifies(bridge_result, tmp_path):
    out = export_plan(bridge_result, tmp_path / "out")
    assert (out / "meshes" / "0_footbridge.stl").is_file()
    assert main(["check", str(out), "--quiet"]) == 0


def test_verifier_catches_a_straight_line_through_the_bridge_deck():
    """A drone flying straight through the deck must fail, with the exact trimesh distance."""
    scene = load_scene(SAMPLES / "bridge_inspection.json")
    start = scene.formation("launch line").positions + [0.0, 0.0, 5.5]  # at deck height (6–7 m), south side
    goal = start + [0.0, 16.0, 0.0]                                       # straight across to the north
    legs = straight_leg_points(start, goal, PROFILES["min_snap"], 7)
    traj = FleetTrajectory(np.array([0.0, 30.0]), legs[:, None], scene.fleet.ids, ("through",))
    report = verify(traj, spec_from_scene(scene, SAMPLES))
    hits = [v for v in report.violations if v.kind == "obstacle"]
    assert len({v.drones for v in hits}) == 6 and "footbridge" in hits[0].detail
    # Cross-check one reported position with trimesh directly: the ellipsoid really touches the deck.
    axes = scene.fleet.semi_axes[0]
    mesh = trimesh.load_mesh(SAMPLES / "meshes" / "footbridge.stl")
    scaled = trimesh.Trimesh(mesh.vertices / axes, mesh.faces)
    p = np.array(hits[0].position)[None] / axes
    assert trimesh.proximity.closest_point(scaled, p)[1][0] < 1.0 or scaled.contains(p)[0]


@pytest.mark.slow
def test_courtyard_swap_of_32_drones_verifies():
    result = plan(load_scene(SAMPLES / "courtyard_swap.json"), base_dir=SAMPLES)
    assert result.verified and result.trajectory.n_drones == 32
    t = result.transitions[0]
    assert t.method is TransitionMethod.SMOOTHED
    assert t.duration < t.stop_and_go.duration_s


def _wall_scene(tmp_path, goal_y, wall_extents=(20.0, 1.0, 10.0)):
    wall = trimesh.creation.box(extents=wall_extents, transform=trimesh.transformations.translation_matrix(
        (0.0, 0.0, 4.0)))
    wall.export(tmp_path / "wall.stl")
    f = {"a": np.array([[-2.0, -4.0, 2.0], [2.0, -4.0, 2.0]]),
         "b": np.array([[-2.0, goal_y, 2.0], [2.0, goal_y, 2.0]])}
    data = scene_dict(f, [{"to": "b", "assignment": "labeled"}])
    data["site"] = {"flight_volume": {"lower": [-8.0, -8.0, 0.0], "upper": [8.0, 8.0, 8.0]},
                    "meshes": [{"name": "wall", "file": "wall.stl"}]}
    return scene_from_dict(data, base_dir=tmp_path)


def test_goal_inside_an_obstacle_names_the_point_and_mesh(tmp_path):
    """Found when the scene is loaded (the designer lists it before planning)."""
    inside = r"formations\[1\] \('b'\)\.points\[0\]: \(-2\.00, 0\.00, 2\.00\) is inside mesh 'wall'"
    with pytest.raises(SceneError, match=inside):
        _wall_scene(tmp_path, goal_y=0.0)


def test_unreachable_goal_names_the_drone(tmp_path):
    scene = _wall_scene(tmp_path, goal_y=4.0)  # the wall spans the whole volume: the far side is cut off
    with pytest.raises(PlanningError, match=r"unreachable goal: .*drone d0 → formations\[1\] \('b'\)\.points\[0\]"):
        plan(scene, base_dir=tmp_path)


def test_wall_with_room_above_is_planned_over(tmp_path):
    scene = _wall_scene(tmp_path, goal_y=4.0, wall_extents=(20.0, 1.0, 4.0))  # top at 4 m, volume to 8 m
    result = plan(scene, base_dir=tmp_path)
    assert result.verified and result.transitions[0].method.used_roadmap


def test_formation_point_outside_the_volume_is_named():
    f = {"a": np.array([[0.0, 0, 2], [2.0, 0, 2]]), "b": np.array([[0.0, 0, 2], [2.0, 0, 99.0]])}
    outside = r"formations\[1\] \('b'\)\.points\[1\]: \(2, 0, 99\) is outside the flight volume"
    with pytest.raises(SceneError, match=outside):
        scene_from_dict(scene_dict(f, [{"to": "b"}]))


def test_unreadable_mesh_is_a_clear_error(tmp_path):
    scene = _wall_scene(tmp_path, goal_y=4.0)
    (tmp_path / "wall.stl").write_bytes(b"\x00garbage" * 7)
    unreadable = r"site\.meshes\[0\]\.file: mesh 'wall' \(wall\.stl\): (not a readable STL mesh|contains no triangles)"
    with pytest.raises(SceneError, match=unreadable):
        plan(scene, base_dir=tmp_path)


def test_roadmap_is_cached_and_reused_for_a_changed_timeline(tmp_path):
    scene = _wall_scene(tmp_path, goal_y=4.0, wall_extents=(20.0, 1.0, 4.0))
    first = plan(scene, base_dir=tmp_path)
    assert first.roadmap.cached is False
    data = scene_dict({"a": scene.formation("a").positions, "b": scene.formation("b").positions},
                      [{"to": "b", "assignment": "labeled", "hold": 3.0}])
    data["site"] = {"flight_volume": {"lower": [-8.0, -8.0, 0.0], "upper": [8.0, 8.0, 8.0]},
                    "meshes": [{"name": "wall", "file": "wall.stl"}]}
    second = plan(scene_from_dict(data, base_dir=tmp_path), base_dir=tmp_path)
    assert second.roadmap.cached is True and second.verified
    # A damaged cache entry is rebuilt, not trusted.
    from core.paths import cache_dir
    for entry in (cache_dir() / "roadmaps").iterdir():
        entry.write_bytes(b"not a roadmap")
    assert plan(scene, base_dir=tmp_path).roadmap.cached is False


def test_cli_plans_the_bridge_and_prints_search_figures(tmp_path, capsys):
    shutil.copytree(SAMPLES, tmp_path / "s")
    assert main(["plan", str(tmp_path / "s" / "bridge_inspection.json"), "--out", str(tmp_path / "out"),
                 "--quiet"]) == 0
    text = capsys.readouterr().out
    assert "nodes expanded" in text and "roadmap:" in text and "Verification PASSED" in text


def test_open_mesh_warning_reaches_the_report(tmp_path):
    wall = trimesh.creation.box(extents=(20.0, 1.0, 4.0), transform=trimesh.transformations.translation_matrix(
        (0.0, 0.0, 4.0)))
    open_wall = trimesh.Trimesh(wall.vertices, wall.faces[:-1], process=False)  # one triangle missing
    assert not open_wall.is_watertight
    open_wall.export(tmp_path / "wall.stl")
    f = {"a": np.array([[-2.0, -4.0, 2.0], [2.0, -4.0, 2.0]]), "b": np.array([[-2.0, 4.0, 2.0], [2.0, 4.0, 2.0]])}
    data = scene_dict(f, [{"to": "b", "assignment": "labeled"}])
    data["site"] = {"flight_volume": {"lower": [-8.0, -8.0, 0.0], "upper": [8.0, 8.0, 8.0]},
                    "meshes": [{"name": "wall", "file": "wall.stl"}]}
    result = plan(scene_from_dict(data, base_dir=tmp_path), base_dir=tmp_path, executor=InlineExecutor())
    assert result.verified
    out = export_plan(result, tmp_path / "out")
    report = (out / "report.txt").read_text()
    assert "warning: mesh 'wall'" in report and "watertight" in report


def test_replanning_reuses_the_context_and_every_untouched_transition(bridge_result):
    """Slowing the last transition down re-plans only that one; the others are taken over as they were."""
    scene = bridge_result.scene
    last = len(scene.timeline.transitions) - 1
    slower = replace(scene.timeline.transitions[last], duration=bridge_result.transitions[last].duration + 10.0)
    edited = replace(scene, timeline=replace(scene.timeline, transitions=(*scene.timeline.transitions[:last], slower)))
    again = plan(edited, base_dir=SAMPLES, previous=bridge_result, workers=1)
    assert again.verified and again.reused == tuple(range(last))
    assert "obstacle field" not in again.stage_seconds  # the field was not rebuilt
    assert again.transitions[last].duration == slower.duration
    for k in range(last):
        assert again.transitions[k] is bridge_result.transitions[k]


def test_a_dask_cluster_gives_the_same_plan_as_the_inline_executor(bridge_result):
    """The bridge's three roadmap transitions run as tasks on an in-process Dask cluster."""
    distributed = pytest.importorskip("dask.distributed")
    with distributed.Client(processes=False, dashboard_address=None, n_workers=2, threads_per_worker=1) as client:
        on_cluster = plan(bridge_result.scene, base_dir=SAMPLES, executor=client.get_executor())
    inline = plan(bridge_result.scene, base_dir=SAMPLES, executor=InlineExecutor())
    assert on_cluster.verified and inline.verified
    np.testing.assert_allclose(on_cluster.trajectory.control_points, inline.trajectory.control_points,
                               rtol=0, atol=1e-9)
    np.testing.assert_allclose(on_cluster.trajectory.breaks, inline.trajectory.breaks, rtol=0, atol=1e-9)
