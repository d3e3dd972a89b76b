"""Scene files: round trips, and one clear message per kind of malformed input."""

import json
import shutil

import numpy as np
import pytest
import trimesh

from conftest import ROOT, scene_dict
from core.errors import SceneError
from core.scene import load_scene, save_scene, scene_from_dict, scene_to_dict

SAMPLES = ROOT / "sample_scenes"


def _two_formations():
    a = np.array([[0.0, 0, 0], [2.0, 0, 0], [4.0, 0, 0]])
    return {"ground": a, "sky": a + [0, 0, 5]}


def _problems(data, **kw):
    with pytest.raises(SceneError) as info:
        scene_from_dict(data, source="s.json", **kw)
    return info.value.problems


@pytest.mark.parametrize("name", ["meadow_show.json", "lab_eight.json", "bridge_inspection.json",
                                  "courtyard_swap.json"])
def test_sample_scenes_round_trip_exactly(name, tmp_path):
    shutil.copytree(SAMPLES, tmp_path, dirs_exist_ok=True)
    scene = load_scene(tmp_path / name)
    save_scene(scene, tmp_path / "again.json")
    assert load_scene(tmp_path / "again.json") == scene
    assert (tmp_path / "again.json").read_text() == (tmp_path / name).read_text()


def test_csv_formation_is_read_and_kept_as_a_reference():
    scene = load_scene(SAMPLES / "lab_eight.json")
    cube = scene.formation("cube")
    assert cube.csv == "cube.csv" and len(cube.points) == 8 and cube.groups is not None
    assert scene_to_dict(scene)["formations"][1] == {"name": "cube", "csv": "cube.csv"}


def test_unreadable_and_non_json_files(tmp_path):
    with pytest.raises(SceneError, match="cannot read"):
        load_scene(tmp_path / "missing.json")
    bad = tmp_path / "bad.json"
    bad.write_text('{"name": "x",\n  "site": }')
    with pytest.raises(SceneError, match=r"line 2, column 11.*not valid JSON"):
        load_scene(bad)


def test_unknown_field_and_wrong_type_name_the_field_path():
    data = scene_dict(_two_formations(), [{"to": "sky"}])
    data["fleet"]["types"][0]["max_speed_xyz"] = 3
    data["timeline"]["transitions"][0]["hold"] = "long"
    where = dict(_problems(data))
    assert "s.json: fleet.types[0].max_speed_xyz" in where
    assert "s.json: timeline.transitions[0].hold" in where


def test_negative_radius_and_downwash_rule():
    data = scene_dict(_two_formations(), [{"to": "sky"}], radius_xy=0.5, radius_z=0.4)
    [(where, why)] = _problems(data)
    assert where == "s.json: fleet.types[0].radius_z" and "downwash" in why
    data = scene_dict(_two_formations(), [{"to": "sky"}], radius_xy=-0.1)
    assert _problems(data)[0][0] == "s.json: fleet.types[0].radius_xy"


def test_formations_closer_than_the_clearance_name_the_pair():
    f = _two_formations()
    f["sky"][1] = [0.3, 0.0, 5.0]  # 0.3 m from point 0; pair radius sideways is 0.4 m
    [(where, why)] = _problems(scene_dict(f, [{"to": "sky"}]))
    assert where == "s.json: formations[1] ('sky').points[0] and points[1]"
    assert "closer than the clearance of drones that can stand there" in why and "0.300 m" in why


def test_point_outside_volume_goal_in_keep_out_and_wrong_count():
    f = _two_formations()
    f["sky"][2] = [4.0, 0.0, 60.0]
    problems = _problems(scene_dict(f, [{"to": "sky"}], keep_out=[((1.5, -1, 4), (2.5, 1, 6))]))
    text = "\n".join(f"{w}: {y}" for w, y in problems)
    assert "formations[1] ('sky').points[2]: (4, 0, 60) is outside the flight volume" in text
    assert "formations[1] ('sky').points[1]" in text and "keep-out box 'box0'" in text
    f = _two_formations()
    f["sky"] = f["sky"][:2]
    [(where, why)] = _problems(scene_dict(f, [{"to": "sky"}]))
    assert "has 2 points but the fleet has 3 drones" in why


def test_timeline_references_and_groups():
    problems = _problems(scene_dict(_two_formations(), [{"to": "moon"}]))
    assert problems == [("s.json: timeline.transitions[0].to", "unknown formation 'moon'")]
    problems = _problems(scene_dict(_two_formations(), [{"to": "sky", "assignment": "grouped"}]))
    assert "needs group labels on formation 'ground'" in problems[0][1]
    groups = {"ground": ["a", "a", "b"], "sky": ["a", "b", "b"]}
    problems = _problems(scene_dict(_two_formations(), [{"to": "sky", "assignment": "grouped"}], groups=groups))
    assert "group sizes differ" in problems[0][1]


def test_bad_formation_csv(tmp_path):
    (tmp_path / "f.csv").write_text("x,y,z\n1,2,3\n4,five,6\n")
    data = scene_dict(_two_formations(), [{"to": "sky"}])
    data["formations"][1] = {"name": "sky", "csv": "f.csv"}
    [(where, why)] = _problems(data, base_dir=tmp_path)
    assert where.endswith("f.csv: row 3") and "must be numbers" in why
    data["formations"][1] = {"name": "sky", "csv": "nope.csv"}
    [(where, why)] = _problems(data, base_dir=tmp_path)
    assert where == "s.json: formations[1].csv" and "cannot read" in why


def test_save_is_atomic_and_keeps_the_old_file_on_failure(tmp_path, monkeypatch):
    scene = load_scene(SAMPLES / "meadow_show.json")
    target = tmp_path / "scene.json"
    target.write_text("old content")
    import core.scene.io as scene_io

    def broken(_data):
        raise RuntimeError("disk full")

    monkeypatch.setattr(scene_io, "dumps_compact", broken)
    with pytest.raises(RuntimeError):
        save_scene(scene, target)
    assert target.read_text() == "old content"
    assert [p.name for p in tmp_path.iterdir()] == ["scene.json"]


def test_scene_json_is_plain_json():
    data = json.loads((SAMPLES / "meadow_show.json").read_text())
    assert data["format"] == "skyloom-scene" and data["version"] == 1


def test_missing_mesh_file_is_named(tmp_path):
    data = scene_dict(_two_formations(), [{"to": "sky"}])
    data["site"]["meshes"] = [{"name": "bridge", "file": "meshes/bridge.stl", "units": "cm"}]
    [(where, why)] = _problems(data, base_dir=tmp_path)
    assert where == "s.json: site.meshes[0].file" and "not found" in why
    (tmp_path / "meshes").mkdir()
    (tmp_path / "meshes" / "bridge.stl").write_text("solid x\nendsolid x\n")
    [(where, why)] = _problems(data, base_dir=tmp_path)  # read at load: an empty mesh is named there
    assert where == "s.json: site.meshes[0].file" and "contains no triangles" in why
    far = trimesh.transformations.translation_matrix([2000.0, 2000.0, 2000.0])  # cm: 20 m from every point
    trimesh.creation.box((10.0, 10.0, 10.0), transform=far).export(tmp_path / "meshes" / "bridge.stl")
    assert scene_from_dict(data, source="s.json", base_dir=tmp_path).site.meshes[0].units == "cm"


def test_the_starter_scene_passes_the_scene_checks_and_plans_verified():
    """The designer's New scene must be plannable as it is: the independent verifier passes it."""
    from core.pipeline import plan
    from core.scene.checks import check_scene
    from core.scene.starter import STARTER_DRONES, STARTER_NAME, starter_scene

    scene = starter_scene()
    assert scene.name == STARTER_NAME and len(scene.fleet.drones) == STARTER_DRONES
    assert check_scene(scene, "new scene", ROOT, None) == []
    result = plan(scene)
    assert result.verified and len(result.transitions) == 1


def test_feature_edges_of_a_box_are_its_twelve_edges():
    """A box has 12 edges (Euler: V − E + F = 2 with 8 vertices and 6 faces); the triangulation's
    face diagonals are not creases. Each edge is axis-aligned and as long as one extent."""
    import trimesh

    from core.scene.meshes import feature_edges
    extents = np.array([2.0, 3.0, 5.0])
    ends = feature_edges(trimesh.creation.box(extents=extents)).reshape(-1, 2, 3)
    assert len(ends) == 12
    d = np.abs(ends[:, 1] - ends[:, 0])
    assert np.all(np.count_nonzero(d > 1e-9, axis=1) == 1)
    assert sorted(np.round(d.max(axis=1), 9).tolist()) == [2.0] * 4 + [3.0] * 4 + [5.0] * 4
