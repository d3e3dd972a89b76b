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
from core.smoothing import qp, smoother
from core.smoothing.smoother import RETIMING_CONTINUE, SmoothingOptions, smooth_transition
from core.trajectory import FleetTrajectory
from core.verify import VerificationSpec, spec_from_scene, verify

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
    for before, after in zip(history, history[1:], strict=False):
        if after.retimed:  # a round at new step durations is kept only when it shortens the flight
            assert after.duration_s < before.duration_s
        else:  # at the same durations each round's start is feasible for the next
            assert after.qp_objective <= before.qp_objective
    assert any(h.retimed for h in history)
    # a round follows a kept re-timed round only when that one shortened the flight by ≥ 5 %
    last = t.smoothing.rounds[-1].iteration
    for before, after in zip(history, history[1:], strict=False):
        if after.retimed and after.iteration < last:
            assert 1.0 - after.duration_s / before.duration_s >= RETIMING_CONTINUE
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


def test_osqp_at_its_iteration_cap_is_retried_with_clarabel(monkeypatch):
    """The hand-over between the two solvers: OSQP first (as the smoother once ordered them) at an
    iteration cap it cannot meet, so Clarabel solves every QP of every round."""
    monkeypatch.setitem(qp.SOLVER_OPTIONS, "max_iter", 5)
    monkeypatch.setattr(smoother, "SOLVER_ORDER", ("OSQP", "Clarabel"))
    result = plan(_cross_scene(), executor=InlineExecutor())
    t = result.transitions[0]
    assert result.verified and t.method is TransitionMethod.SMOOTHED and t.smoothing.note is None
    rounds = [h for h in t.smoothing.rounds if h.duration_s is not None]
    assert rounds and all(len(h.second_solver) == 4 for h in rounds)  # OSQP first, Clarabel solved


def _failing_for(drones):
    """``solve_drone`` as if every solver failed for the drones in ``drones``."""
    real = smoother.solve_drone

    def solve(problem):
        if problem.drone in drones:
            return qp.DroneSolution(problem.drone, False, "maximum iterations reached; Clarabel: NumericalError",
                                    None, float("nan"), 5, 0.0, (1, "rest at start"))
        return real(problem)
    return solve


def test_a_drone_whose_qp_fails_keeps_its_earlier_curve_and_the_rest_are_smoothed(monkeypatch):
    """Mixing curves is safe by the corridor argument in ``smoother._mixed``; the verifier is the judge."""
    monkeypatch.setattr(smoother, "solve_drone", _failing_for({1}))
    scene = _cross_scene()
    # Climb to one altitude each, cross there, descend (the layers are 1.5 m apart: clear).
    layer = np.array([[0.0, 0, 0], [0, 0, 1.5], [0, 0, 3.0], [0, 0, 4.5]])
    positions = np.stack([CROSS["a"], CROSS["a"] + layer, CROSS["b"] + layer, CROSS["b"]], axis=1)
    spec = spec_from_scene(scene)
    options = SmoothingOptions(9, 3, {"snap": 1.0})
    clearance = scene.fleet.clearance
    outcome = smooth_transition("test", positions, clearance, None,
                                scene.fleet.limits * 0.95, spec, options, InlineExecutor())
    first = outcome.history[0]
    assert outcome.pieces is not None and first.accepted and first.verified and first.fell_back == ("d1",)
    assert "QP failed for drone d1 at step 2 (rest at start)" in outcome.note
    assert "kept their curves of the round before" in outcome.note
    # Drone d1 keeps its stop-and-go curve (at rest at every step's end), the others do not stop.
    traj = FleetTrajectory(np.r_[0.0, np.cumsum(outcome.durations)], outcome.pieces, spec.drone_ids)
    assert verify(traj, spec).ok
    speeds = np.linalg.norm(traj.evaluate(traj.breaks[1:-1], 1), axis=-1)  # (joins, N)
    assert np.allclose(speeds[:, 1], 0.0, atol=1e-9) and speeds[1, [0, 2, 3]].min() > 0.05


def test_a_mix_slower_than_stop_and_go_is_not_kept(monkeypatch):
    """Every drone moves in every step of the crossing, so a drone held to its stop-and-go curve
    makes the shared steps at least as long as stopping everywhere: the plan says so and stays."""
    monkeypatch.setattr(smoother, "solve_drone", _failing_for({1}))
    t = plan(_cross_scene(), executor=InlineExecutor()).transitions[0]
    assert t.method is TransitionMethod.STOP_AND_GO and t.smoothing.rounds[0].fell_back == ("d1",)
    assert "longer than stopping at every waypoint" in t.smoothing.note


def test_when_every_qp_fails_the_plan_stays_stop_and_go_and_says_why(monkeypatch):
    monkeypatch.setattr(smoother, "solve_drone", _failing_for({0, 1, 2, 3}))
    result = plan(_cross_scene(), executor=InlineExecutor())
    t = result.transitions[0]
    assert result.verified and t.method is TransitionMethod.STOP_AND_GO
    assert "QP failed for drone d0" in t.smoothing.note and "maximum iterations" in t.smoothing.note
    assert "kept the stop-and-go plan" in t.smoothing.note


def test_take_off_and_landing_on_the_floor_of_the_flight_volume_are_smoothed_and_verified():
    """Pads at z = 0, the volume's floor, and a keep-out box between them and the goals (the
    stop-and-go and the smoothed curves start exactly on the boundary)."""
    pads = np.array([[-6.0, -3.0, 0.0], [-6.0, 0.0, 0.0], [-6.0, 3.0, 0.0]])
    goals = np.array([[5.0, -2.0, 4.0], [5.0, 0.0, 5.0], [5.0, 2.0, 4.0]])
    scene = scene_from_dict(scene_dict({"pads": pads, "up": goals, "down": pads},
                                       [{"to": "up", "assignment": "labeled"}, {"to": "down", "assignment": "labeled"}],
                                       volume=((-9, -6, 0), (9, 6, 8)),
                                       keep_out=[((-1.5, -5.5, 0.0), (0.0, 5.5, 6.0))]))
    result = plan(scene, executor=InlineExecutor())
    assert result.verified
    for t in result.transitions:
        assert t.method is TransitionMethod.SMOOTHED, t.smoothing.note
    assert result.trajectory.control_points[..., 2].min() >= 0.0


def test_an_iterate_that_fails_verification_is_never_kept():
    scene = _cross_scene()
    spec = spec_from_scene(scene)
    # Drones 3 m apart flying side by side (clear for the planner), judged with 10× the clearance.
    strict = VerificationSpec(spec.drone_ids, spec.semi_axes * 10.0, spec.limits, spec.flight_volume)
    line = np.c_[[-4.5, -1.5, 1.5, 4.5], np.zeros(4), np.full(4, 3.0)]
    positions = np.stack([line, line + [0, 2.5, 0.5], line + [0, 5.0, 0]], axis=1)
    outcome = smooth_transition("test", positions, ClearanceModel(spec.semi_axes), None,
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
