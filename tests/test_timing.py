"""Rest-to-rest profiles against published closed forms.

- Minimum jerk 10τ³−15τ⁴+6τ⁵: peak speed 1.875·D/T, peak acceleration 10/√3·D/T²
  (Flash & Hogan, "The coordination of arm movements", J. Neurosci. 5(7):1688–1703, 1985).
- Minimum snap 35τ⁴−84τ⁵+70τ⁶−20τ⁷: peak speed 35/16·D/T (snap objective of Mellinger & Kumar,
  "Minimum snap trajectory generation and control for quadrotors", ICRA 2011; closed form from the
  Euler–Lagrange condition, derived), peak acceleration 84√5/25·D/T² (derived: s''' = 0 at τ=½±√5/10).
"""

import numpy as np
import pytest

from core.straight_line import straight_leg_points
from core.timing import MIN_JERK, MIN_SNAP, minimum_duration, trapezoid_lower_bound
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
