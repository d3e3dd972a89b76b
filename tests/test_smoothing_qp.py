"""The smoothing QP against closed forms, a second formulation (cvxpy + Clarabel) and its limits.

Sources: minimum-snap objective of Mellinger & Kumar, "Minimum snap trajectory generation and
control for quadrotors", ICRA 2011 — closed form 35τ⁴ − 84τ⁵ + 70τ⁶ − 20τ⁷ from the Euler–Lagrange
condition (p⁽⁸⁾ = 0 with rest ends up to jerk; derived); minimum jerk 10τ³ − 15τ⁴ + 6τ⁵ from Flash &
Hogan, "The coordination of arm movements", J. Neurosci. 5(7), 1985. Integrals ∫snap² = 100800 D²/T⁷
and ∫jerk² = 720 D²/T⁵ are derived from those polynomials (see ../shared/REFERENCES.md).
"""

from dataclasses import replace

import numpy as np
import pytest
from numpy.polynomial import Polynomial
from scipy.integrate import quad
from scipy.optimize import linprog

from core.bezier import bernstein_basis
from core.objectives import parse_objective
from core.smoothing.limits import (
    ACCELERATION_DIRECTIONS,
    HORIZONTAL_DIRECTIONS,
    inscribed_scale,
    safe_step_durations,
    stop_at_vertices_points,
)
from core.smoothing.qp import DroneProblem, solve_drone
from core.smoothing.reference import solve_reference
from core.smoothing.terms import piece_cost_matrix

TIGHT = {"eps_abs": 1e-9, "eps_rel": 1e-9, "max_iter": 400_000}
OPEN = np.array([[-100.0] * 3, [100.0] * 3])
FAST = np.array([100.0, 100.0, 100.0])


def _problem(degree, durations, start, goal, weights, normals=None, offsets=None, pieces=None, volume=OPEN,
             limits=FAST, initial=None):
    normals = np.zeros((0, 3)) if normals is None else normals
    offsets = np.zeros(0) if offsets is None else offsets
    pieces = np.zeros(0, int) if pieces is None else pieces
    return DroneProblem(0, degree, np.asarray(durations, float), np.asarray(start, float), np.asarray(goal, float),
                        normals, offsets, pieces, np.full(len(pieces), -1), volume, limits, weights, initial)


@pytest.mark.parametrize(("degree", "weights", "poly", "integral"), [
    (7, {"snap": 1.0}, Polynomial([0, 0, 0, 0, 35, -84, 70, -20]), 100800.0),  # T⁻⁷ D²
    (5, {"jerk": 1.0}, Polynomial([0, 0, 0, 10, -15, 6]), 720.0),  # T⁻⁵ D²
])
def test_one_free_piece_is_the_closed_form(degree, weights, poly, integral):
    T, D = 2.0, np.array([3.0, -1.0, 0.5])
    s = solve_drone(_problem(degree, [T], [1.0, 2.0, 3.0], np.array([1.0, 2.0, 3.0]) + D, weights), TIGHT)
    assert s.ok
    tau = np.linspace(0, 1, 41)
    curve = bernstein_basis(degree, tau) @ s.points[0]
    expected = np.array([1.0, 2.0, 3.0]) + poly(tau)[:, None] * D
    assert np.abs(curve - expected).max() < 1e-6
    order = 4 if "snap" in weights else 3
    assert s.objective == pytest.approx(integral * (D @ D) / T ** (2 * order - 1), rel=1e-6)


def test_piece_cost_matrix_matches_quadrature():
    rng = np.random.default_rng(3)
    b, h, n = rng.normal(size=8), 1.7, 7
    weights = {"acceleration": 0.5, "jerk": 0.2, "snap": 1.0}
    coeffs = Polynomial(np.linalg.lstsq(np.vander(np.linspace(0, 1, 8), 8, increasing=True),
                                        bernstein_basis(n, np.linspace(0, 1, 8)) @ b, rcond=None)[0])

    def integrand(t):  # p(t) = coeffs(t / h)
        return sum(w * (coeffs.deriv(r)(t / h) / h**r) ** 2 for r, w in ((2, 0.5), (3, 0.2), (4, 1.0)))

    expected = quad(integrand, 0, h, epsabs=1e-12, epsrel=1e-12)[0]
    assert b @ piece_cost_matrix(n, h, weights) @ b == pytest.approx(expected, rel=1e-9)


def _random_problem(rng, pieces=3, degree=7):
    """A corridor problem around a random zig-zag with a known feasible point (stop at each corner)."""
    corners = np.cumsum(rng.normal(scale=2.0, size=(pieces + 1, 3)), axis=0)
    normals, offsets, steps = [], [], []
    for k in range(pieces):
        a, b = corners[k], corners[k + 1]
        for _ in range(4):  # random half-spaces containing the whole step with some room
            nu = rng.normal(size=3)
            nu /= np.linalg.norm(nu)
            normals.append(nu)
            offsets.append(max(nu @ a, nu @ b) + rng.uniform(0.05, 0.6))
            steps.append(k)
    limits = np.array([3.0, 2.0, 4.0])
    durations = safe_step_durations(corners[None, :-1], corners[None, 1:], limits[None], degree) * rng.uniform(1, 2)
    lo, hi = corners.min(axis=0) - 1.0, corners.max(axis=0) + 1.0
    return _problem(degree, durations, corners[0], corners[-1], {"snap": 1.0, "acceleration": 0.1},
                    np.array(normals), np.array(offsets), np.array(steps), np.stack([lo, hi]), limits,
                    stop_at_vertices_points(corners[None, :-1], corners[None, 1:], degree)[0])


@pytest.mark.parametrize("seed", range(4))
def test_sparse_osqp_and_cvxpy_clarabel_agree(seed):
    problem = _random_problem(np.random.default_rng(seed), pieces=2 + seed % 2, degree=7 + 2 * (seed % 2))
    ours = solve_drone(problem, TIGHT)
    points, objective = solve_reference(problem, "CLARABEL")
    assert ours.ok
    assert ours.objective == pytest.approx(objective, rel=1e-4, abs=1e-9)
    # Production tolerances too: feasible, and near the optimum (never clearly below it).
    fast = solve_drone(problem)
    assert fast.ok and objective * (1 - 1e-3) <= fast.objective <= objective * 1.1 + 1e-9


def test_infeasible_corridor_names_the_piece():
    problem = _problem(7, [1.0, 1.0, 1.0], [0, 0, 0], [3.0, 0, 0], {"snap": 1.0},
                       normals=np.array([[1.0, 0, 0]]), offsets=np.array([2.0]), pieces=np.array([2]))
    s = solve_drone(problem)
    assert not s.ok and "infeasible" in s.status
    assert s.culprit is not None and s.culprit[0] == 2


def test_limit_polytopes_lie_inside_the_limit_balls():
    """Every vertex direction's maximum (an independent LP per direction) stays within the ball."""
    rng = np.random.default_rng(0)
    for dirs, planar in ((HORIZONTAL_DIRECTIONS, True), (ACCELERATION_DIRECTIONS, False)):
        s = inscribed_scale(dirs)
        a_ub = np.vstack([dirs, -dirs])
        if planar:
            a_ub = a_ub[:, :2]
        best = 0.0
        for _ in range(200):
            u = rng.normal(size=2 if planar else 3)
            u /= np.linalg.norm(u)
            res = linprog(-u, A_ub=a_ub, b_ub=np.full(len(a_ub), s), bounds=[(None, None)] * len(u))
            best = max(best, np.linalg.norm(res.x))
        assert best <= 1.0 + 1e-9 and best > 0.97
    assert inscribed_scale(HORIZONTAL_DIRECTIONS) == pytest.approx(np.cos(np.pi / 8))  # regular octagon


def test_objective_text():
    assert parse_objective("snap") == {"snap": 1.0}
    assert parse_objective("acceleration=1, snap=0.01") == {"acceleration": 1.0, "snap": 0.01}
    for bad in ("bogus", "snap=-1", "speed=1", "snap=0"):
        with pytest.raises(ValueError, match="objective"):
            parse_objective(bad)


@pytest.mark.parametrize("seed", range(4))
def test_our_clarabel_path_matches_the_cvxpy_formulation_solved_by_scs(seed):
    """The Clarabel path (through its own API, norm limits as second-order cones, on our sparse
    matrices) against the independent cvxpy formulation (finite differences, Gauss–Legendre
    quadrature, norm balls) solved by SCS (O'Donoghue et al., "Conic optimization via operator
    splitting and homogeneous self-dual embedding", 2016) at tight tolerances: same optimum."""
    problem = _random_problem(np.random.default_rng(10 + seed), pieces=2 + seed % 2, degree=7 + 2 * (seed % 2))
    ours = solve_drone(replace(problem, solvers=("Clarabel",)))
    _, objective = solve_reference(problem, "SCS", balls=True, eps_abs=1e-10, eps_rel=1e-10, max_iters=1_000_000)
    assert ours.ok and ours.facts["solver"] == "Clarabel"
    assert ours.objective == pytest.approx(objective, rel=2e-4, abs=1e-9)


def test_clarabel_uses_the_whole_limit_ball_and_osqp_the_inscribed_polytope():
    """Binding acceleration limit: the cone solution reaches the ball (beyond the polytope's
    inscribed radius) and never leaves it; the polytope solution stays within the polytope; the
    larger feasible set gives the lower optimum. The cone optimum matches cvxpy + SCS."""
    start, goal = np.zeros(3), np.array([4.0, 3.0, 1.0])
    limits = np.array([10.0, 10.0, 1.5])
    problem = _problem(7, [3.0, 3.0], start, goal, {"snap": 1.0, "acceleration": 1.0}, limits=limits)
    cone = solve_drone(replace(problem, solvers=("Clarabel",)))
    poly = solve_drone(replace(problem, solvers=("OSQP",)), TIGHT)
    assert cone.ok and poly.ok

    def peak_acceleration_cp(points):
        h = np.asarray(problem.durations)[:, None, None]
        return np.linalg.norm(7 * 6 * np.diff(points, n=2, axis=1) / h**2, axis=2).max()

    s = inscribed_scale(ACCELERATION_DIRECTIONS)
    assert s * limits[2] * 1.01 < peak_acceleration_cp(cone.points) <= limits[2] * (1 + 1e-3)
    assert peak_acceleration_cp(poly.points) <= limits[2] * (1 + 1e-6)
    assert cone.objective < poly.objective
    _, objective = solve_reference(problem, "SCS", balls=True, eps_abs=1e-10, eps_rel=1e-10, max_iters=1_000_000)
    assert cone.objective == pytest.approx(objective, rel=2e-4)


def test_a_failed_first_solver_hands_the_problem_to_the_second(monkeypatch):
    problem = _random_problem(np.random.default_rng(7), pieces=3, degree=9)
    capped = solve_drone(problem, {"max_iter": 5}, retry=False)
    assert not capped.ok and "maximum iterations" in capped.status
    retried = solve_drone(problem, {"max_iter": 5})
    assert retried.ok and retried.facts["solver"] == "Clarabel"
    assert "maximum iterations" in retried.facts["retried_after"]


def test_pads_on_the_volume_floor_keep_every_control_point_inside_the_closed_volume():
    """Start and goal on the floor z = 0 of the volume: the pinned rest points equal them exactly,
    the others stay 1 mm inside, so the Bézier hull (and the curve) never leaves the volume."""
    start, goal = np.array([0.0, 0.0, 0.0]), np.array([6.0, 1.0, 0.0])
    corners = np.array([start, [2.0, 0.5, 2.0], [4.0, 0.5, 2.0], goal])
    limits = np.array([3.0, 2.0, 4.0])
    durations = safe_step_durations(corners[None, :-1], corners[None, 1:], limits[None], 9)
    volume = np.array([[-5.0, -5.0, 0.0], [10.0, 5.0, 5.0]])
    problem = _problem(9, durations, start, goal, {"snap": 1.0}, np.zeros((0, 3)), np.zeros(0),
                       np.zeros(0, dtype=int), volume, limits,
                       stop_at_vertices_points(corners[None, :-1], corners[None, 1:], 9)[0])
    for solvers in (("OSQP",), ("Clarabel",)):
        s = solve_drone(replace(problem, solvers=solvers))
        assert s.ok, s.status
        np.testing.assert_array_equal(s.points[0, :4], np.repeat(start[None], 4, axis=0))
        np.testing.assert_array_equal(s.points[-1, -4:], np.repeat(goal[None], 4, axis=0))
        assert s.points[..., 2].min() >= 0.0
