"""The independent verifier catches injected violations and passes hand-checked safe cases."""

import numpy as np
import pytest

from core.straight_line import hold_points, straight_leg_points
from core.timing import MIN_SNAP
from core.trajectory import FleetTrajectory
from core.verify import VerificationSpec, verify

AXES = np.array([0.2, 0.2, 0.5])


def _spec(n, limits=(3.0, 2.0, 3.0), volume=((-10, -10, 0), (10, 10, 10)), keep_out=()):
    return VerificationSpec(tuple(f"d{i}" for i in range(n)), np.repeat(AXES[None], n, axis=0),
                            np.tile(limits, (n, 1)), np.array(volume, dtype=float),
                            tuple((f"box{k}", np.array(b, dtype=float)) for k, b in enumerate(keep_out)))


def _legs(starts, goals, duration):
    pts = straight_leg_points(np.asarray(starts, float), np.asarray(goals, float), MIN_SNAP, 7)
    return FleetTrajectory(np.array([0.0, duration]), pts[:, None], tuple(f"d{i}" for i in range(len(starts))))


def test_hand_checked_safe_hover():
    # Two drones hover 1.0 m apart sideways; pair radius sideways is 0.4 m → ratio 2.5 exactly.
    pos = np.array([[0.0, 0, 2], [1.0, 0, 2]])
    traj = FleetTrajectory(np.array([0.0, 5.0]), hold_points(pos, 7)[:, None], ("d0", "d1"))
    report = verify(traj, _spec(2))
    assert report.ok
    assert report.min_separation_ratio == pytest.approx(2.5)


def test_vertical_stack_inside_downwash_ellipsoid_is_caught():
    # 0.9 m above each other: clear of the 0.4 m sideways radius but inside the 1.0 m vertical one.
    pos = np.array([[0.0, 0, 2], [0.0, 0, 2.9]])
    traj = FleetTrajectory(np.array([0.0, 5.0]), hold_points(pos, 7)[:, None], ("d0", "d1"))
    report = verify(traj, _spec(2))
    assert not report.ok
    [v] = report.violations
    assert v.kind == "separation" and v.drones == ("d0", "d1") and v.measured == pytest.approx(0.9)


def test_crossing_pair_is_caught_with_time_and_place():
    # Head-on swap along x: they meet at x = 0 at mid-time t = 2 s.
    traj = _legs([[-3, 0, 2], [3, 0, 2]], [[3, 0, 2], [-3, 0, 2]], 4.0)
    report = verify(traj, _spec(2))
    [v] = [v for v in report.violations if v.kind == "separation"]
    assert v.drones == ("d0", "d1")
    assert v.time == pytest.approx(2.0, abs=0.05)
    assert abs(v.position[0]) < 0.1
    assert v.measured < 0.2  # the worst sampled ratio near the meeting point


def test_fast_crossing_between_coarse_samples_is_still_caught():
    # Perpendicular paths that overlap for only ~0.1 s of a 30 s leg (at 6 m/s peak speed near mid-time).
    traj = _legs([[-40, 0, 5], [0.0, -40, 5]], [[40, 0, 5], [0.0, 40, 5]], 30.0)
    report = verify(traj, _spec(2, limits=(10.0, 10.0, 10.0), volume=((-50, -50, 0), (50, 50, 10))))
    assert any(v.kind == "separation" for v in report.violations)


def test_speed_spike_is_caught():
    # 10 m in 2 s with min-snap: peak 35/16·5 = 10.9 m/s against a 3 m/s limit.
    traj = _legs([[0, 0, 2]], [[10, 0, 2]], 2.0)
    report = verify(traj, _spec(1, limits=(3.0, 2.0, 100.0)))
    [v] = [v for v in report.violations if v.kind == "speed_xy"]
    assert v.measured == pytest.approx(35 / 16 * 5, rel=1e-3)
    assert v.required == 3.0
    assert v.time == pytest.approx(1.0, abs=0.02)


def test_just_below_a_limit_passes_and_just_above_fails():
    # Peak speed 35/16·D/T: make it 0.99 and 1.02 of the 3 m/s limit (tolerance is 1 %).
    for factor, ok in ((0.99, True), (1.02, False)):
        T = 35 / 16 * 10 / (3.0 * factor)
        report = verify(_legs([[0, 0, 2]], [[10, 0, 2]], T), _spec(1, limits=(3.0, 2.0, 100.0)))
        assert report.ok is ok


def test_point_outside_the_flight_volume_is_caught():
    traj = _legs([[0, 0, 2]], [[0, 0, 12]], 20.0)  # volume top is z = 10
    report = verify(traj, _spec(1))
    [v] = report.violations
    assert v.kind == "flight_volume"
    assert v.measured == pytest.approx(2.0, abs=1e-6)


def test_keep_out_box_is_caught_through_the_clearance_ellipsoid():
    # Passing 0.15 m beside a box: the centre is outside, the 0.2 m clearance is not.
    traj = _legs([[-5, 0.0, 2]], [[5, 0.0, 2]], 20.0)
    report = verify(traj, _spec(1, keep_out=[((-1, 0.15, 0), (1, 2, 4))]))
    [v] = report.violations
    assert v.kind == "keep_out" and v.measured == pytest.approx(0.75)
    far = verify(traj, _spec(1, keep_out=[((-1, 0.25, 0), (1, 2, 4))]))
    assert far.ok
