"""Goal assignment for one transition: labeled, unlabeled and grouped.

Unlabeled assignments minimise the sum of squared distances measured in coordinates divided by
the fleet's pair clearance radii, the condition under which synchronized straight-line motion
stays separated (Turpin, Michael & Kumar, IJRR 33(1), 2014).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.optimize import linear_sum_assignment

from .auction import auction_maximize, repair_pair_swaps
from .progress import CancelToken, ProgressCallback, no_progress

#: Largest problem solved by the dense Hungarian method; above it the auction runs.
EXACT_LIMIT = 1500
#: Auction accuracy per drone, as a fraction of the mean squared leg length.
AUCTION_RELATIVE_EPS = 1e-7


@dataclass(frozen=True)
class Assignment:
    """``goal_of[i]``: goal point index for drone ``i`` ``(N,)``; ``cost``: the minimised sum (of
    squared scaled distances, or of roadmap path lengths); ``method``: how it was found;
    ``gap_bound``: proven bound on ``cost - optimum``. Both are nan where the multi-agent search
    exchanged goals afterwards (``method`` says so)."""

    goal_of: np.ndarray
    cost: float
    method: str
    gap_bound: float


def min_sum_of_squares(starts: np.ndarray, goals: np.ndarray, *, progress: ProgressCallback = no_progress,
                       cancel: CancelToken | None = None) -> Assignment:
    """Assignment ``starts`` ``(n, 3)`` → ``goals`` ``(n, 3)`` minimising the sum of squared distances.

    Exact (scipy's Hungarian-type solver) up to :data:`EXACT_LIMIT` points; above it an ε-scaling
    auction (within ``n·ε`` of the optimum) followed by a pairwise-swap repair.
    """
    x = starts - starts.mean(axis=0)
    g = goals - goals.mean(axis=0)  # translations do not change the optimal assignment
    n = len(x)
    if n <= EXACT_LIMIT:
        cost = ((x[:, None, :] - g[None, :, :]) ** 2).sum(axis=-1)
        rows, cols = linear_sum_assignment(cost)
        goal_of = cols[np.argsort(rows)]
        method, gap = "hungarian", 0.0
    else:
        mean_sq = float((x**2).sum(axis=1).mean() + (g**2).sum(axis=1).mean())
        eps = AUCTION_RELATIVE_EPS * max(mean_sq, 1e-12)
        goal_of = auction_maximize(2.0 * x @ g.T, eps, progress=progress, cancel=cancel)
        goal_of, _ = repair_pair_swaps(x, g, goal_of, cancel)
        method, gap = "auction+swap-repair", n * eps
    total = float(((starts - goals[goal_of]) ** 2).sum())
    return Assignment(goal_of, total, method, gap)


def assign(mode: str, starts: np.ndarray, goals: np.ndarray, pair_envelope: np.ndarray,
           start_groups=None, goal_groups=None, *, progress: ProgressCallback = no_progress,
           cancel: CancelToken | None = None) -> Assignment:
    """Goal index per drone for a transition.

    starts : (N, 3) current drone positions (metres), drone order
    goals : (N, 3) target formation points
    pair_envelope : (3,) metres per unit of the clearance metric (distances are divided by it)
    start_groups / goal_groups : (N,) group labels of each drone's current point / each goal point
    """
    n = len(starts)
    if mode == "labeled":
        return Assignment(np.arange(n), float((((starts - goals) / pair_envelope) ** 2).sum()), "labeled", 0.0)
    xs, gs = starts / pair_envelope, goals / pair_envelope
    if mode == "unlabeled":
        return min_sum_of_squares(xs, gs, progress=progress, cancel=cancel)
    if mode != "grouped":
        raise ValueError(f"unknown assignment mode {mode!r}")
    return _per_group(start_groups, goal_groups,
                      lambda d, p: min_sum_of_squares(xs[d], gs[p], progress=progress, cancel=cancel))


def _per_group(start_groups, goal_groups, solve) -> Assignment:
    """Solve each group on its own with ``solve(drone indices, point indices)`` and combine."""
    start_groups, goal_groups = np.asarray(start_groups), np.asarray(goal_groups)
    goal_of = np.empty(len(start_groups), dtype=np.intp)
    cost, gap = 0.0, 0.0
    methods = set()
    for label in np.unique(start_groups):
        drones = np.nonzero(start_groups == label)[0]
        points = np.nonzero(goal_groups == label)[0]
        sub = solve(drones, points)
        goal_of[drones] = points[sub.goal_of]
        cost += sub.cost
        gap += sub.gap_bound
        methods.add(sub.method)
    return Assignment(goal_of, cost, "grouped " + "/".join(sorted(methods)), gap)


def min_total_cost(cost: np.ndarray) -> Assignment:
    """Assignment minimising the sum of ``cost`` ``(n, n)`` (e.g. roadmap path lengths, metres;
    ``inf`` where a goal cannot be reached). Raises ValueError when no finite assignment exists."""
    finite = np.isfinite(cost)
    big = (cost[finite].max() if finite.any() else 1.0) * len(cost) + 1.0
    rows, cols = linear_sum_assignment(np.where(finite, cost, big))
    goal_of = cols[np.argsort(rows)]
    total = cost[np.arange(len(cost)), goal_of]
    if not np.isfinite(total).all():
        raise ValueError(f"drones {np.nonzero(~np.isfinite(total))[0].tolist()} cannot reach any free goal")
    return Assignment(goal_of, float(total.sum()), "hungarian on path lengths", 0.0)


def assign_by_cost(cost: np.ndarray, start_groups=None, goal_groups=None) -> Assignment:
    """Unlabeled (no groups) or grouped assignment on a cost matrix ``(N, N)``; see :func:`min_total_cost`."""
    if start_groups is None:
        return min_total_cost(cost)
    return _per_group(start_groups, goal_groups, lambda d, p: min_total_cost(cost[np.ix_(d, p)]))
