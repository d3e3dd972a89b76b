"""The smoothing QP written a second way, in cvxpy, for tests and benchmarks (not the hot path).

Independent of :mod:`core.smoothing.qp` except for the problem data: derivatives are cvxpy
differences of the control-point variables, and the objective is Gauss–Legendre quadrature of the
squared derivative curves (exact: the integrand is a polynomial of degree ``2 (n - r)``), not the
Bernstein Gram matrix.
"""

from __future__ import annotations

import cvxpy as cp
import numpy as np

from ..bezier import bernstein_basis
from ..objectives import TERM_ORDER
from .limits import ACCELERATION_DIRECTIONS, HORIZONTAL_DIRECTIONS, inscribed_scale
from .qp import VOLUME_SLACK, DroneProblem
from .terms import continuity_order, rest_order


def reference_problem(problem: DroneProblem, balls: bool = False) -> tuple[cp.Problem, list[cp.Variable]]:
    """The cvxpy problem and its per-piece variables ``(n + 1, 3)`` for ``problem``; ``balls``: the
    horizontal speed and acceleration limits as norm balls (as Clarabel gets them), else as the
    inscribed polytopes (as OSQP gets them)."""
    n, h = problem.degree, np.asarray(problem.durations, dtype=float)
    b = [cp.Variable((n + 1, 3)) for _ in h]

    def deriv(k: int, r: int):
        """Control points of the r-th time derivative of piece k."""
        d = b[k]
        for m in range(n, n - r, -1):
            d = m * (d[1:] - d[:-1])
        return d / h[k] ** r

    nodes, weights = np.polynomial.legendre.leggauss(n + 1)
    tau, weights = 0.5 * (nodes + 1.0), 0.5 * weights
    cost = 0
    for name, w in problem.weights.items():
        r = TERM_ORDER[name]
        if w == 0:
            continue
        basis = bernstein_basis(n - r, tau)  # (T, n - r + 1)
        for k in range(len(h)):
            values = basis @ deriv(k, r)  # (T, 3)
            cost += w * h[k] * cp.sum(cp.multiply(weights[:, None], cp.square(values)))
    cons = [b[0][0] == problem.start, b[-1][-1] == problem.goal]
    for r in range(1, rest_order(problem.weights) + 1):
        cons += [deriv(0, r)[0] == 0, deriv(len(h) - 1, r)[-1] == 0]
    for k in range(len(h) - 1):
        cons += [deriv(k, r)[-1] == deriv(k + 1, r)[0] for r in range(continuity_order(n) + 1)]
    low, high = problem.volume[0] + VOLUME_SLACK, problem.volume[1] - VOLUME_SLACK
    pinned = rest_order(problem.weights) + 1  # control points equal to the start / goal
    for k in range(len(h)):
        rows = problem.pieces == k
        if rows.any():
            cons.append(b[k] @ problem.normals[rows].T <= problem.offsets[rows][None, :])
        first = pinned if k == 0 else 0
        last = n + 1 - pinned if k == len(h) - 1 else n + 1
        cons += [b[k][first:last] >= low, b[k][first:last] <= high]
        v, a = deriv(k, 1), deriv(k, 2)
        vh, vv, acc = problem.limits
        cons.append(cp.abs(v[:, 2]) <= vv)
        if balls:
            cons += [cp.norm(v[:, :2], 2, axis=1) <= vh, cp.norm(a, 2, axis=1) <= acc]
        else:
            cons += [cp.abs(v @ HORIZONTAL_DIRECTIONS.T) <= vh * inscribed_scale(HORIZONTAL_DIRECTIONS),
                     cp.abs(a @ ACCELERATION_DIRECTIONS.T) <= acc * inscribed_scale(ACCELERATION_DIRECTIONS)]
    return cp.Problem(cp.Minimize(cost), cons), b


def solve_reference(problem: DroneProblem, solver: str = "CLARABEL", balls: bool = False,
                    **options) -> tuple[np.ndarray, float]:
    """Control points ``(K, n + 1, 3)`` and objective of ``problem`` (``balls``: see
    :func:`reference_problem`) solved by cvxpy with ``solver`` (``options`` go to the solver)."""
    prob, b = reference_problem(problem, balls)
    prob.solve(solver=solver, canon_backend=cp.SCIPY_CANON_BACKEND, **options)
    if prob.status not in ("optimal", "optimal_inaccurate"):
        raise RuntimeError(f"reference solver: {prob.status}")
    return np.stack([v.value for v in b]), float(prob.value)


