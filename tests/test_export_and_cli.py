"""Export folders and the command line, end to end on the small sample scene."""

import base64
import csv
import json
import subprocess
import sys

import numpy as np
import pytest

from conftest import ROOT, scene_dict
from core import SAFETY_CAUTION
from core.cli import main
from core.errors import ExportError, PlanningError
from core.export import export_plan, load_export
from core.pipeline import PlanResult, plan
from core.scene import load_scene, scene_from_dict
from core.straight_line import straight_leg_points
from core.timing import PROFILES
from core.trajectory import FleetTrajectory
from core.verify import spec_from_scene, verify

LAB = ROOT / "sample_scenes" / "lab_eight.json"


@pytest.fixture(scope="module")
def lab_result():
    return plan(load_scene(LAB))


def test_lab_plan_verifies_and_meets_the_timeline(lab_result):
    assert lab_result.verified
    fixed = lab_result.transitions[1]
    assert fixed.duration == 8.0 and fixed.minimum_duration < 8.0
    # Each drone ends on a pad of its own colour (grouped) and holds labeled goals.
    scene = lab_result.scene
    end = lab_result.trajectory.evaluate(np.array([lab_result.trajectory.duration]))[0]
    pads = scene.formation("pads")
    for k, p in enumerate(end):
        match = np.nonzero(np.all(np.isclose(pads.positions, p), axis=1))[0]
        assert len(match) == 1 and pads.groups[match[0]] == pads.groups[k]


def test_export_files_agree_with_each_other(lab_result, tmp_path):
    out = export_plan(lab_result, tmp_path / "out", sample_rate_hz=20)
    manifest = json.loads((out / "plan.json").read_text())
    assert manifest["verified"] and manifest["caution"] == SAFETY_CAUTION
    for name in manifest["files"]:
        assert (out / name).is_file(), name
    # Monomial coefficients reproduce the CSV samples.
    doc = json.loads((out / "trajectories" / "N3.json").read_text())
    rows = [r for r in csv.reader(line for line in (out / "samples.csv").open() if not line.startswith("#"))]
    assert rows[0] == ["drone", "t", "x", "y", "z", "vx", "vy", "vz", "ax", "ay", "az"]
    n3 = np.array([[float(x) for x in r[1:]] for r in rows[1:] if r[0] == "N3"])
    for t, *state in n3[::7]:
        piece = next(p for p in doc["pieces"] if p["start"] <= t <= p["start"] + p["duration"] + 1e-9)
        local = t - piece["start"]
        pos = [np.polyval(piece["monomial"][a][::-1], local) for a in "xyz"]
        vel = [np.polyval(np.polyder(piece["monomial"][a][::-1]), local) for a in "xyz"]
        np.testing.assert_allclose(pos, state[:3], atol=2e-6)
        np.testing.assert_allclose(vel, state[3:6], atol=2e-6)
    # The glTF buffer holds each drone's path (Khronos glTF 2.0: accessor → bufferView → buffer).
    gltf = json.loads((out / "paths.gltf").read_text())
    assert gltf["asset"]["version"] == "2.0"
    blob = base64.b64decode(gltf["buffers"][0]["uri"].split(",", 1)[1])
    acc = gltf["accessors"][2]
    view = gltf["bufferViews"][acc["bufferView"]]
    pts = np.frombuffer(blob, np.float32, acc["count"] * 3, view["byteOffset"]).reshape(-1, 3)
    np.testing.assert_allclose(pts[0], lab_result.trajectory.evaluate(np.array([0.0]))[0, 2], atol=1e-5)
    assert gltf["meshes"][2]["primitives"][0]["mode"] == 3  # LINE_STRIP


def test_reloaded_export_verifies_again(lab_result, tmp_path):
    out = export_plan(lab_result, tmp_path / "out")
    loaded = load_export(out)
    np.testing.assert_allclose(loaded.trajectory.control_points, lab_result.trajectory.control_points)
    assert main(["check", str(out), "--quiet"]) == 0


def _straight_swap(tmp_path=None):
    """Two drones swapping places on straight lines (they collide half-way): a plan that must fail."""
    swap = {"a": np.array([[-3.0, 0, 2], [3.0, 0, 2]]), "b": np.array([[3.0, 0, 2], [-3.0, 0, 2]])}
    scene = scene_from_dict(scene_dict(swap, [{"to": "b", "assignment": "labeled"}]))
    legs = straight_leg_points(swap["a"], swap["b"], PROFILES["min_snap"], 7)
    traj = FleetTrajectory(np.array([0.0, 10.0]), legs[:, None], scene.fleet.ids, ("a → b",))
    return PlanResult(scene, scene.planner, traj, [], verify(traj, spec_from_scene(scene)))


def test_labeled_swap_is_routed_around_on_the_roadmap():
    swap = {"a": np.array([[-3.0, 0, 2], [3.0, 0, 2]]), "b": np.array([[3.0, 0, 2], [-3.0, 0, 2]])}
    result = plan(scene_from_dict(scene_dict(swap, [{"to": "b", "assignment": "labeled"}])))
    assert result.verified and result.transitions[0].method.used_roadmap


def test_failed_plan_is_refused_unless_overridden_and_then_marked(tmp_path):
    result = _straight_swap()
    assert not result.verified
    with pytest.raises(ExportError, match="failed verification"):
        export_plan(result, tmp_path / "out")
    assert not (tmp_path / "out").exists()
    out = export_plan(result, tmp_path / "out", allow_unverified=True)
    for name in ("plan.json", "report.json", "report.txt", "samples.csv", "paths.gltf", "trajectories/d0.json"):
        assert "UNVERIFIED" in (out / name).read_text(), name


def test_export_failure_keeps_the_previous_export(lab_result, tmp_path, monkeypatch):
    out = export_plan(lab_result, tmp_path / "out")
    before = (out / "plan.json").read_text()
    import core.export.folder as folder

    monkeypatch.setattr(folder, "write_samples_csv", lambda *a: (_ for _ in ()).throw(OSError(28, "disk full")))
    with pytest.raises(ExportError, match="disk full.*nothing was replaced"):
        export_plan(lab_result, tmp_path / "out")
    assert (out / "plan.json").read_text() == before
    assert sorted(p.name for p in tmp_path.iterdir()) == ["out"]


def test_too_short_fixed_duration_names_the_minimum():
    f = {"a": np.array([[0.0, 0, 0], [2.0, 0, 0]]), "b": np.array([[0.0, 0, 9], [2.0, 0, 9]])}
    scene = scene_from_dict(scene_dict(f, [{"to": "b", "duration": 2.0}], speed_z=2.0))
    # Cruise law at 95 % of v_z = 2 m/s, a = 2 m/s²: T = L/v + (4/3) v/a = 9/1.9 + 4/3 = 6.07 s
    # (closed form derived in core.timing.cruise_timing, checked in test_timing.py).
    with pytest.raises(PlanningError, match=r"duration 2 s is too short; the limits \(at 95%\) need at least 6\.07 s"):
        plan(scene)


def test_cli_plan_info_and_errors(tmp_path, capsys):
    assert main(["plan", str(LAB), "--out", str(tmp_path / "out"), "--quiet"]) == 0
    text = capsys.readouterr().out
    assert "Verification PASSED" in text and "Safety:" in text
    assert main(["info", str(LAB)]) == 0
    bad = tmp_path / "bad.json"
    bad.write_text("{}")
    assert main(["plan", str(bad), "--out", str(tmp_path / "nothing")]) == 2
    err = capsys.readouterr().err
    assert "bad.json: name" in err and "Traceback" not in err
    assert not (tmp_path / "nothing").exists()


def test_cli_check_exit_code_and_message_for_a_failing_export(tmp_path, capsys):
    out = export_plan(_straight_swap(), tmp_path / "out", allow_unverified=True)
    assert main(["check", str(out), "--quiet"]) == 1
    text = capsys.readouterr().out
    assert "separation" in text and "d0 & d1" in text


def test_console_command_runs_as_installed():
    done = subprocess.run([sys.executable, "-m", "core.cli", "--help"], capture_output=True, text=True, check=True)
    assert "plan" in done.stdout and "check" in done.stdout and "Safety" in done.stdout


def test_core_never_imports_qt():
    code = ("import sys, importlib, pkgutil, core\n"
            "class Block:\n"
            "    def find_spec(self, name, path=None, target=None):\n"
            "        if name.split('.')[0] in ('PySide6', 'PyQt5', 'PyQt6', 'pyqtgraph', 'shiboken6'):\n"
            "            raise ImportError('Qt is not allowed in core: ' + name)\n"
            "sys.meta_path.insert(0, Block())\n"
            "for m in pkgutil.walk_packages(core.__path__, 'core.'):\n"
            "    importlib.import_module(m.name)\n")
    subprocess.run([sys.executable, "-c", code], check=True, cwd=ROOT)


def test_check_and_export_load_no_planning_module(lab_result, tmp_path):
    """`skyloom check` re-verifies a folder with the verifier alone: no planner, no QP solver."""
    out = export_plan(lab_result, tmp_path / "out")
    code = ("import sys\n"
            "from core.cli import main\n"
            f"assert main(['check', {str(out)!r}, '--quiet']) == 0\n"
            "import core.export\n"
            "planning = ('core.pipeline', 'core.planning', 'core.smoothing', 'core.search', 'core.roadmap',\n"
            "            'core.obstacles', 'core.assignment', 'core.auction', 'core.straight_line', 'osqp', 'cvxpy')\n"
            "loaded = sorted(m for m in sys.modules if m.startswith(planning))\n"
            "assert not loaded, loaded\n")
    done = subprocess.run([sys.executable, "-c", code], cwd=ROOT, capture_output=True, text=True)
    assert done.returncode == 0, done.stderr


def test_cancelled_plan_stops_with_cancelled():
    from core.errors import Cancelled
    from core.progress import CancelToken

    token = CancelToken()
    token.cancel()
    with pytest.raises(Cancelled):
        plan(load_scene(LAB), cancel=token)


def test_progress_reaches_every_stage():
    seen = []
    plan(load_scene(LAB), progress=lambda stage, fraction, message: seen.append((stage, fraction)))
    assert {"assignment", "verification"} <= {s for s, _ in seen}
    assert all(0.0 <= f <= 1.0 for _, f in seen) and seen[-1] == ("verification", 1.0)


def test_terminal_progress_draws_a_bar_on_a_terminal():
    import io

    from core.terminal_progress import TerminalProgress

    class Tty(io.StringIO):
        def isatty(self):
            return True

    stream = Tty()
    bar = TerminalProgress(stream, width=10, min_interval_s=0.0)
    bar("verification", 0.5, "separation")
    bar.close()
    assert "[#####-----]  50% separation" in stream.getvalue()




def test_parquet_samples_match_the_csv_and_are_audited(lab_result, tmp_path, capsys):
    """samples.parquet holds the CSV's rows as columns (read back with pyarrow); check audits it too."""
    pq = pytest.importorskip("pyarrow.parquet")
    csv_out = export_plan(lab_result, tmp_path / "csv")
    pq_out = export_plan(lab_result, tmp_path / "parquet", samples="parquet")
    table = pq.read_table(pq_out / "samples.parquet")
    assert table.column_names == ["drone", "t", "x", "y", "z", "vx", "vy", "vz", "ax", "ay", "az"]
    lines = (csv_out / "samples.csv").read_text().splitlines()
    rows = [r.split(",") for r in lines if not r.startswith(("#", "drone"))]
    assert table.column("drone").to_pylist() == [r[0] for r in rows]
    np.testing.assert_allclose(np.column_stack([table.column(k).to_numpy() for k in range(1, 11)]),
                               np.array([[float(x) for x in r[1:]] for r in rows]), atol=5e-7)
    assert main(["check", str(pq_out), "--quiet"]) == 0
    capsys.readouterr()
    values = table.column("z").to_numpy().copy()
    values[5] += 0.01
    pq.write_table(table.set_column(4, "z", [values]).replace_schema_metadata(table.schema.metadata),
                   pq_out / "samples.parquet")
    assert main(["check", str(pq_out), "--quiet"]) == 1
    text = capsys.readouterr().out
    assert "samples.parquet (drone N1): at t = 0.500 s, position z" in text
