"""Smoothing inside the pipeline: verified plans, executors, fallbacks, fixed durations, CLI options."""

from concurrent.futures import Executor, ThreadPoolExecutor

import numpy as np
import pytest

from conftest import scene_dict
from core.clearance import ClearanceModel
from core.cli import main
from core.errors import PlanningError
from core.executors import InlineExecutor
from core.pipeline import plan, with_settings
from core.planning import TransitionMethod
from core.scene import scene_from_dict
from core.smoothing import qp
from core.smoothing.smoother import SmoothingOptions, smooth_transition
from core.verify import VerificationSpec, spec_from_scene

# Four drones crossing through the middle of a square: straight lines collide, so the roadmap
# plan is smoothed.
CROSS = {"a": np.array([[-4.0, 0, 3], [4.0, 0, 3], [0, -4.0, 3], [0, 4.0, 3]]),
         "b": np.array([[4.0, 0, 3], [-4.0, 0, 3], [0, 4.0, 3], [0, -4.0, 3]])}
VOLUME = ((-8, -8, 0), (8, 8, 8))


def _cross_scene(**transition):
    return scene_from_dict(scene_dict(CROSS, [{"to": "b", "assignment": "labeled", **transition}], volume=VOLUME))


@pytest.fixture(scope="module")
def cross_result():
    return plan(_cross_scene(), executor=InlineExecutor())


def test_crossing_is_smoothed_verified_and_faster_than_stop_and_go(cross_result):
    t = cross_result.transitions[0]
    assert cross_result.verified and t.method is TransitionMethod.SMOOTHED
    history = [h for h in t.smoothing.rounds if h.accepted]
    assert history and all(h.verified for h in history)
    qp_objectives = [h.qp_objective for h in history]
    assert qp_objectives == sorted(qp_objectives, reverse=True)  # each round is feasible for the next
    assert t.duration < t.stop_and_go.duration_s
    assert history[-1].snap_integral < t.stop_and_go.snap_integral
    # no stops inside the transition: speed is well above zero at every interior join
    traj = cross_result.trajectory
    speeds = np.linalg.norm(traj.evaluate(traj.breaks[1:-1], 1), axis=-1)  # (joins, N)
    assert np.all(speeds.max(axis=1) > 0.05)


class CountingExecutor(Executor):
    """A minimal third-party executor: runs calls in order and counts them."""

    def __init__(self):
        self.calls = 0

    def submit(self, fn, /, *args, **kwargs):
        self.calls += 1
        return InlineExecutor().submit(fn, *args, **kwargs)


def test_any_executor_gives_the_same_plan(cross_result):
    counting = CountingExecutor()
    with ThreadPoolExecutor(2) as threads:
        by_threads = plan(_cross_scene(), executor=threads)
    by_counter = plan(_cross_scene(), executor=counting)
    by_processes = plan(_cross_scene(), workers=2)
    assert counting.calls >= 4
    for other in (by_threads, by_counter, by_processes):
        assert other.verified
        assert np.allclose(other.trajectory.control_points, cross_result.trajectory.control_points, atol=1e-9)


def test_solver_failure_names_the_drone_and_keeps_stop_and_go(monkeypatch):
    monkeypatch.setitem(qp.SOLVER_OPTIONS, "max_iter", 5)
    result = plan(_cross_scene(), executor=InlineExecutor())
    t = result.transitions[0]
    assert result.verified and t.method is TransitionMethod.STOP_AND_GO
    assert "QP failed for drone d" in t.smoothing.note and "maximum iterations" in t.smoothing.note
    assert "kept the stop-and-go plan" in t.smoothing.note


def test_an_iterate_that_fails_verification_is_never_kept():
    scene = _cross_scene()
    spec = spec_from_scene(scene)
    # Drones 3 m apart flying side by side (clear for the planner), judged with 10× the clearance.
    strict = VerificationSpec(spec.drone_ids, spec.semi_axes * 10.0, spec.limits, spec.flight_volume)
    line = np.c_[[-4.5, -1.5, 1.5, 4.5], np.zeros(4), np.full(4, 3.0)]
    positions = np.stack([line, line + [0, 2.5, 0.5], line + [0, 5.0, 0]], axis=1)
    outcome = smooth_transition("test", positions, ClearanceModel(spec.semi_axes), spec.semi_axes[0], None,
                                spec.limits * 0.95, strict, SmoothingOptions(9, 3, {"snap": 1.0}), InlineExecutor())
    assert outcome.pieces is None and "failed verification" in outcome.note
    assert outcome.history and not outcome.history[0].accepted


def test_fixed_duration_is_met_or_the_minimum_is_named(cross_result):
    fastest = cross_result.transitions[0].duration
    slow = plan(_cross_scene(duration=round(1.5 * fastest, 2)), executor=InlineExecutor())
    assert slow.verified and slow.trajectory.duration == pytest.approx(round(1.5 * fastest, 2))
    with pytest.raises(PlanningError, match=r"too short; the roadmap plan around the obstacles needs at least"):
        plan(_cross_scene(duration=round(0.5 * fastest, 2)), executor=InlineExecutor())


def test_degree_too_low_for_the_objective_falls_back_with_a_reason():
    scene = _cross_scene()
    result = plan(scene, settings=with_settings(scene, degree=5, profile="min_jerk"), executor=InlineExecutor())
    assert result.verified and "needs planner.degree ≥ 7" in result.transitions[0].smoothing.note
    jerk = plan(scene, settings=with_settings(scene, degree=5, profile="min_jerk", objective="jerk"),
                executor=InlineExecutor())
    assert jerk.verified and jerk.transitions[0].method is TransitionMethod.SMOOTHED


def test_cli_smoothing_options(tmp_path, capsys):
    import json
    path = tmp_path / "cross.json"
    path.write_text(json.dumps(scene_dict(CROSS, [{"to": "b", "assignment": "labeled"}], volume=VOLUME)))
    assert main(["plan", str(path), "--out", str(tmp_path / "o1"), "--no-smoothing", "--quiet"]) == 0
    assert "stop at every waypoint" in capsys.readouterr().out
    assert main(["plan", str(path), "--out", str(tmp_path / "o2"), "--iterations", "2", "--objective",
                 "acceleration=1,snap=0.01", "--workers", "1", "--quiet"]) == 0
    out = capsys.readouterr().out
    assert "smoothed in safe corridors" in out and "smoothing round 2" in out
    assert "smoothing round 1" in (tmp_path / "o2" / "report.txt").read_text()
    assert main(["plan", str(path), "--out", str(tmp_path / "o3"), "--objective", "speed=1", "--quiet"]) == 2
    assert "planner option objective" in capsys.readouterr().err
