"""Linear algebra of the piecewise-Bézier smoothing QP: derivative operators, the ∫‖p⁽ʳ⁾‖² cost of
one piece, and the objective choices.

Control points of one piece are ``b`` ``(n + 1,)`` per axis on ``tau`` in [0, 1]; a piece of
duration ``h`` seconds has ``r``-th time derivative with control points ``n!/(n-r)! Δʳb / hʳ``.
"""

from __future__ import annotations

from math import factorial

import numpy as np
from scipy.special import comb

from ..objectives import TERM_ORDER

#: Highest derivative kept continuous at the joins between pieces (snap).
CONTINUITY_ORDER = 4


def difference_operator(degree: int, order: int) -> np.ndarray:
    """``(n + 1 - r, n + 1)`` matrix of the ``r``-th forward difference times ``n!/(n-r)!``: it maps
    control points to those of the ``r``-th ``tau``-derivative (divide by ``h**r`` for time)."""
    d = np.eye(degree + 1)
    for _ in range(order):
        d = np.diff(d, axis=0)
    return factorial(degree) / factorial(degree - order) * d


def bernstein_gram(degree: int) -> np.ndarray:
    """``G[i, j] = ∫₀¹ B_i^m B_j^m dτ = C(m,i) C(m,j) / ((2m + 1) C(2m, i + j))`` for ``m = degree``."""
    i = np.arange(degree + 1)
    return comb(degree, i)[:, None] * comb(degree, i)[None, :] / ((2 * degree + 1) * comb(2 * degree, i[:, None] + i))


def piece_cost_matrix(degree: int, duration: float, weights: dict[str, float]) -> np.ndarray:
    """``Q`` ``(n + 1, n + 1)`` with ``bᵀQb = Σ_r w_r ∫₀ʰ (p⁽ʳ⁾(t))² dt`` for one axis of one piece."""
    q = np.zeros((degree + 1, degree + 1))
    for name, w in weights.items():
        r = TERM_ORDER[name]
        if w == 0 or r > degree:
            continue
        d = difference_operator(degree, r)
        q += w * duration ** (1 - 2 * r) * d.T @ bernstein_gram(degree - r) @ d
    return q


def rest_order(weights: dict[str, float]) -> int:
    """Derivatives ``1 … k`` fixed at zero at rest ends: one below the highest weighted order, so a
    single unconstrained piece gives the classic closed forms (e.g. minimum snap: up to jerk)."""
    return max(TERM_ORDER[name] for name, w in weights.items() if w > 0) - 1


def continuity_order(degree: int) -> int:
    """Derivatives ``0 … k`` equal at joins: up to snap for degree ≥ 9, else up to ``(n - 1) // 2``
    (jerk at degree 7), so that stopping at every waypoint stays a feasible point of the QP."""
    return min(CONTINUITY_ORDER, (degree - 1) // 2)


def curve_costs(pieces: np.ndarray, durations: np.ndarray, weights: dict[str, float]) -> np.ndarray:
    """``Σ_r w_r ∫‖p⁽ʳ⁾‖² dt`` per curve ``(...)`` of control points ``(..., S, n + 1, 3)`` on
    ``durations`` ``(S,)`` s (each piece's cost matrix built once for all curves)."""
    degree = pieces.shape[-2] - 1
    q = np.stack([piece_cost_matrix(degree, float(h), weights) for h in durations])  # (S, n+1, n+1)
    return np.einsum("...sid,sij,...sjd->...", pieces, q, pieces)


def trajectory_cost(pieces: np.ndarray, durations: np.ndarray, weights: dict[str, float]) -> float:
    """:func:`curve_costs` summed over all curves."""
    return float(curve_costs(pieces, durations, weights).sum())
