"""Bézier evaluation, derivatives and power-basis conversion against scipy.interpolate (reference
library: scipy's BPoly and PPoly, Virtanen et al., "SciPy 1.0", Nature Methods 17, 2020)."""

import numpy as np
from scipy.interpolate import BPoly, PPoly

from core.bezier import elevate_degree, split_equal_parts
from core.trajectory import FleetTrajectory


def _random_trajectory(rng, n_drones=3, n_pieces=4, degree=7):
    breaks = np.r_[0.0, np.cumsum(rng.uniform(0.5, 3.0, n_pieces))]
    points = rng.normal(size=(n_drones, n_pieces, degree + 1, 3))
    return FleetTrajectory(breaks, points, tuple(f"d{i}" for i in range(n_drones)))


def _bpoly(traj, drone, axis):
    # BPoly wants c[k, piece]: Bernstein coefficient k of each piece.
    return BPoly(traj.control_points[drone, :, :, axis].T, traj.breaks)


def test_positions_and_derivatives_up_to_snap_match_scipy_bpoly():
    rng = np.random.default_rng(1)
    traj = _random_trajectory(rng)
    t = np.r_[np.linspace(0, traj.duration, 501)[:-1], traj.breaks[1:-1] + 1e-9]
    for order in range(5):
        ours = traj.evaluate(t, order)
        for drone in range(traj.n_drones):
            for axis in range(3):
                ref = _bpoly(traj, drone, axis)(t, nu=order)
                np.testing.assert_allclose(ours[:, drone, axis], ref, rtol=1e-9, atol=1e-9 * (1 + np.abs(ref).max()))


def test_evaluate_rows_agrees_with_evaluate():
    rng = np.random.default_rng(2)
    traj = _random_trajectory(rng)
    t = rng.uniform(0, traj.duration, 50)
    drones = rng.integers(0, traj.n_drones, 50)
    for order in (0, 2):
        full = traj.evaluate(t, order)[np.arange(50), drones]
        np.testing.assert_allclose(traj.evaluate_rows(drones, t, order), full, rtol=1e-12, atol=1e-12)


def test_monomial_coefficients_match_scipy_conversion():
    rng = np.random.default_rng(3)
    traj = _random_trajectory(rng)
    mono = traj.monomial_coefficients()
    for drone in range(traj.n_drones):
        for axis in range(3):
            ref = PPoly.from_bernstein_basis(_bpoly(traj, drone, axis))
            # PPoly holds the highest power first; ours holds t**0 first.
            np.testing.assert_allclose(mono[drone, :, ::-1, axis].T, ref.c, rtol=1e-8, atol=1e-8)


def test_degree_elevation_keeps_the_curve():
    rng = np.random.default_rng(4)
    points = rng.normal(size=(6, 3))
    high = elevate_degree(points, 9)
    t = np.linspace(0, 1, 101)
    low_ref = BPoly(points[:, None, :], [0, 1])(t)
    high_ref = BPoly(high[:, None, :], [0, 1])(t)
    np.testing.assert_allclose(high_ref, low_ref, atol=1e-12)


def test_hull_bound_is_an_upper_bound_on_speed():
    rng = np.random.default_rng(5)
    traj = _random_trajectory(rng)
    t = np.linspace(0, traj.duration, 4001)
    speed = np.linalg.norm(traj.evaluate(t, 1), axis=-1)
    seg, _ = traj.locate(t)
    bound = traj.hull_bound(1)[:, seg].T
    assert np.all(speed <= bound + 1e-9)


def test_split_into_equal_parts_reproduces_each_sub_interval():
    rng = np.random.default_rng(6)
    points = rng.normal(size=(8, 3))
    parts = split_equal_parts(points, 5)
    whole = BPoly(points[:, None, :], [0, 1])
    u = np.linspace(0, 1, 33)
    for m in range(5):
        sub = BPoly(parts[m][:, None, :], [0, 1])
        np.testing.assert_allclose(sub(u), whole((m + u) / 5), atol=1e-12)


def test_motion_curves_of_chosen_drones_match_scipy_bpoly_derivatives():
    """The designer's motion plots: magnitudes for a few drones out of many, against scipy's
    BPoly derivatives of each axis (horizontal speed from x and y, vertical from z)."""
    from core.inspection import motion_curves
    rng = np.random.default_rng(4)
    traj = _random_trajectory(rng, n_drones=9)
    drones = np.array([7, 2, 5])
    t = np.linspace(0.0, traj.duration, 97)
    curves = motion_curves(traj, drones, t)
    for k, d in enumerate(drones):
        axis = [[_bpoly(traj, d, a)(t, nu=order) for a in range(3)] for order in range(5)]
        np.testing.assert_allclose(curves["speed_xy"][:, k], np.hypot(axis[1][0], axis[1][1]), rtol=1e-9, atol=1e-9)
        np.testing.assert_allclose(curves["speed_z"][:, k], np.abs(axis[1][2]), rtol=1e-9, atol=1e-9)
        for name, order in (("acceleration", 2), ("jerk", 3), ("snap", 4)):
            ref = np.linalg.norm(np.array(axis[order]), axis=0)
            np.testing.assert_allclose(curves[name][:, k], ref, rtol=1e-9, atol=1e-9 * (1 + ref.max()))
