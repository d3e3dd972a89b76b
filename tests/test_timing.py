"""Rest-to-rest profiles against published closed forms.

- Minimum jerk 10τ³−15τ⁴+6τ⁵: peak speed 1.875·D/T, peak acceleration 10/√3·D/T²
  (Flash & Hogan, "The coordination of arm movements", J. Neurosci. 5(7):1688–1703, 1985).
- Minimum snap 35τ⁴−84τ⁵+70τ⁶−20τ⁷: peak speed 35/16·D/T (snap objective of Mellinger & Kumar,
  "Minimum snap trajectory generation and control for quadrotors", ICRA 2011; closed form from the
  Euler–Lagrange condition, derived), peak acceleration 84√5/25·D/T² (derived: s''' = 0 at τ=½±√5/10).
"""

import numpy as np
import pytest

from core.straight_line import shared_leg_points, straight_leg_points
from core.timing import MIN_JERK, MIN_SNAP, blend_order, cruise_timing, minimum_duration, trapezoid_lower_bound
from core.trajectory import FleetTrajectory


def _leg(profile, displacement, duration, degree):
    start = np.zeros((1, 3))
    pts = straight_leg_points(start, np.asarray([displacement], dtype=float), profile, degree)
    return FleetTrajectory(np.array([0.0, duration]), pts[:, None], ("a",))


@pytest.mark.parametrize(("profile", "degree", "speed", "accel"), [
    (MIN_SNAP, 7, 35 / 16, 84 * np.sqrt(5) / 25),
    (MIN_SNAP, 9, 35 / 16, 84 * np.sqrt(5) / 25),
    (MIN_JERK, 5, 1.875, 10 / np.sqrt(3)),
])
def test_peaks_of_a_straight_leg_match_the_closed_forms(profile, degree, speed, accel):
    D, T = 12.0, 4.0
    traj = _leg(profile, (D, 0, 0), T, degree)
    t = np.linspace(0, T, 200001)
    v = np.abs(traj.evaluate(t, 1)[:, 0, 0]).max()
    a = np.abs(traj.evaluate(t, 2)[:, 0, 0]).max()
    assert v == pytest.approx(speed * D / T, rel=1e-6)
    assert a == pytest.approx(accel * D / T**2, rel=1e-6)
    assert profile.peak_speed_factor == pytest.approx(speed, rel=1e-12)
    assert profile.peak_acceleration_factor == pytest.approx(accel, rel=1e-12)


def test_min_snap_profile_is_the_published_polynomial():
    tau = np.linspace(0, 1, 11)
    expected = 35 * tau**4 - 84 * tau**5 + 70 * tau**6 - 20 * tau**7
    np.testing.assert_allclose(MIN_SNAP.polynomial(tau), expected, atol=1e-12)
    np.testing.assert_allclose(MIN_JERK.polynomial(tau), 10 * tau**3 - 15 * tau**4 + 6 * tau**5, atol=1e-12)


def test_minimum_duration_puts_the_binding_limit_exactly_at_its_bound():
    legs = np.array([[30.0, 40.0, 0.0], [0.0, 0.0, 9.0], [1.0, 0.0, 0.0]])
    limits = np.array([[5.0, 2.0, 3.0]] * 3)
    T = minimum_duration(legs, limits, MIN_SNAP)
    k_v, k_a = 35 / 16, 84 * np.sqrt(5) / 25
    assert T[0] == pytest.approx(k_v * 50 / 5)        # horizontal speed binds
    assert T[1] == pytest.approx(k_v * 9 / 2)         # vertical speed binds
    assert T[2] == pytest.approx(np.sqrt(k_a * 1 / 3))  # acceleration binds for the short leg


def test_trapezoid_lower_bound_closed_form():
    # Trapezoid: t = d/v + v/a when d >= v²/a, else triangle 2·sqrt(d/a) (textbook kinematics).
    limits = np.array([[4.0, 2.0, 2.0]])
    assert trapezoid_lower_bound(np.array([[20.0, 0, 0]]), limits) == pytest.approx(20 / 4 + 4 / 2)
    assert trapezoid_lower_bound(np.array([[2.0, 0, 0]]), limits) == pytest.approx(2 * np.sqrt(1.0))
    assert trapezoid_lower_bound(np.array([[0, 0, 10.0]]), limits) == pytest.approx(10 / 2 + 2 / 2)


# --- The cruise law -----------------------------------------------------------------------------
# Closed forms (derived in core.timing.cruise_timing): for one leg of length L along an axis with
# speed limit v and acceleration limit a, κ = 4/3,
#   L ≥ κ v²/a:  T = L/v + κ v/a, peak speed v, peak acceleration a;
#   L < κ v²/a:  T = 2 √(κ L / a), peak speed √(a L / κ), peak acceleration a.
# The first is the double-S form T = L/v + v/a + T_j of Biagiotti & Melchiorri, "Trajectory
# Planning for Automatic Machines and Robots", Springer 2008, §3.4 (from memory), with the jerk
# phase a/j replaced by our blend time T_j = (1/4)(κ v/a): a symmetric blend gains the same speed
# as a linear jerk ramp of the same length.

KAPPA = 4 / 3


def _cruise(leg, limits, degree):
    timing = cruise_timing(np.array([leg], dtype=float), np.array([limits], dtype=float), degree)
    pts = shared_leg_points(np.zeros((1, 3)), np.array([leg], dtype=float), timing)
    return timing, FleetTrajectory(np.r_[0.0, np.cumsum(timing.durations)], pts, ("a",))


@pytest.mark.parametrize("degree", [5, 7, 9, 11])
@pytest.mark.parametrize(("length", "axis"), [(40.0, 0), (1.5, 0), (7.0, 2), (0.2, 1)])
def test_cruise_law_meets_its_closed_forms(degree, length, axis):
    v_xy, v_z, a = 4.0, 2.0, 3.0
    v = v_z if axis == 2 else v_xy
    leg = np.eye(3)[axis] * length
    timing, traj = _cruise(leg, (v_xy, v_z, a), degree)
    cruises = length >= KAPPA * v * v / a
    expected_t = length / v + KAPPA * v / a if cruises else 2 * np.sqrt(KAPPA * length / a)
    assert timing.duration == pytest.approx(expected_t, rel=1e-12)
    t = np.linspace(0, timing.duration, 400001)
    speed = np.linalg.norm(traj.evaluate(t, 1)[:, 0], axis=1).max()
    accel = np.linalg.norm(traj.evaluate(t, 2)[:, 0], axis=1).max()
    assert speed == pytest.approx(v if cruises else np.sqrt(a * length / KAPPA), rel=1e-6)
    assert accel == pytest.approx(a, rel=1e-6)
    end = traj.evaluate(np.array([timing.duration]))[0, 0]
    np.testing.assert_array_equal(end, leg)  # the goal exactly


@pytest.mark.parametrize("degree", [5, 7, 9])
def test_cruise_law_is_smooth_at_every_join_and_at_rest_at_both_ends(degree):
    m = blend_order(degree)
    timing, traj = _cruise((30.0, 10.0, 4.0), (5.0, 2.0, 2.5), degree)
    assert len(timing.durations) == 7  # speed up (3), cruise, slow down (3)
    assert np.all(np.diff(timing.values.ravel()) >= -1e-15)  # s is monotone: Bézier values never fall
    for order in range(1, min(m + 2, 4) + 1):  # FleetTrajectory evaluates up to snap
        left = traj.evaluate(traj.breaks[1:-1] - 1e-12, order)
        right = traj.evaluate(traj.breaks[1:-1] + 1e-12, order)
        scale = np.abs(traj.evaluate(np.linspace(0, traj.duration, 2001), order)).max()
        np.testing.assert_allclose(left, right, atol=1e-6 * scale)
        ends = traj.evaluate(np.array([0.0, traj.duration]), order)
        np.testing.assert_allclose(ends, 0.0, atol=1e-9 * scale)


def test_cruise_law_of_a_fleet_is_bound_by_the_tightest_leg():
    legs = np.array([[30.0, 0.0, 0.0], [0.0, 0.0, 12.0], [3.0, 4.0, 0.0], [0.0, 0.0, 0.0]])
    limits = np.array([[6.0, 2.0, 3.0], [6.0, 2.0, 3.0], [6.0, 2.0, 3.0], [1.0, 1.0, 1.0]])
    timing = cruise_timing(legs, limits, 9)
    # U = min(6/30, 2/12, 6/5) = 1/6 (vertical leg); A = min(3/30, 3/12, 3/5) = 1/10 (long leg);
    # √(A/κ) = 0.274 > U, so it cruises: T = κ U / A + 1 / U.
    u, acc = 1 / 6, 1 / 10
    assert timing.duration == pytest.approx(KAPPA * u / acc + 1 / u, rel=1e-12)
    assert timing.binding == 1


@pytest.mark.parametrize("length", [0.05, 0.5, 1.0, 1.7, 2.5, 6.0, 30.0, 300.0])
def test_cruise_law_stays_within_its_bound_of_the_trapezoid(length):
    # Derived: T/T_trapezoid ≤ √κ for one leg at the full limits (worst at L = v²/a), and limits
    # scaled by a margin m multiply T by at most 1/m.
    limits, margin = np.array([[4.0, 2.0, 3.0]]), 0.95
    for direction in ([1.0, 0, 0], [0.6, 0.8, 0], [0, 0, 1.0], [0.5, 0.5, 0.7]):
        leg = np.asarray([direction]) / np.linalg.norm(direction) * length
        t = cruise_timing(leg, limits * margin, 9).duration
        assert t / trapezoid_lower_bound(leg, limits) <= np.sqrt(KAPPA) / margin + 1e-12
        assert t <= minimum_duration(leg, limits * margin, MIN_SNAP)[0] + 1e-12


@pytest.mark.parametrize("degree", [7, 9])
def test_straight_legs_end_exactly_on_their_goals_and_stay_between_the_ends(degree):
    """Landing pads on the floor of the flight volume: in floating point ``a + 1.0 (b − a)`` need
    not be ``b`` and the cruise law's last control values came out 1 + 4e-16, so a landing ended
    1e-15 m below the floor and failed verification. Control points must end on the goal bit for
    bit and keep every coordinate between start and goal (then so does the curve: Bernstein
    weights are a partition of unity — Farin, "Curves and Surfaces for CAGD", 2002, convex hull
    property)."""
    rng = np.random.default_rng(degree)
    starts = rng.uniform(-20.0, 20.0, size=(200, 3))
    goals = rng.uniform(-20.0, 20.0, size=(200, 3))
    goals[:, 2] = rng.choice([0.0, 0.1, 0.3, 7.7], size=200)
    limits = np.tile([3.0, 2.0, 2.5], (200, 1))
    for points in (shared_leg_points(starts, goals, cruise_timing(goals - starts, limits, degree)),
                   straight_leg_points(starts, goals, MIN_SNAP, degree)[:, None]):
        assert np.array_equal(points[:, -1, -1], goals) and np.array_equal(points[:, 0, 0], starts)
        low, high = np.minimum(starts, goals)[:, None, None], np.maximum(starts, goals)[:, None, None]
        assert np.all(points >= low) and np.all(points <= high)
