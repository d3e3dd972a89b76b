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
    """``goal_of[i]``: goal point index for drone ``i`` ``(N,)``; ``cost``: sum of squared scaled
    distances; ``method``: how it was found; ``gap_bound``: proven bound on ``cost - optimum``."""

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


def assign(mode: str, starts: np.ndarray, goals: np.ndarray, scale: np.ndarray,
           start_groups=None, goal_groups=None, *, progress: ProgressCallback = no_progress,
           cancel: CancelToken | None = None) -> Assignment:
    """Goal index per drone for a transition.

    starts : (N, 3) current drone positions (metres), drone order
    goals : (N, 3) target formation points
    scale : (3,) metres per unit of the clearance metric (distances are divided by it)
    start_groups / goal_groups : (N,) group labels of each drone's current point / each goal point
    """
    n = len(starts)
    if mode == "labeled":
        return Assignment(np.arange(n), float((((starts - goals) / scale) ** 2).sum()), "labeled", 0.0)
    xs, gs = starts / scale, goals / scale
    if mode == "unlabeled":
        return min_sum_of_squares(xs, gs, progress=progress, cancel=cancel)
    if mode != "grouped":
        raise ValueError(f"unknown assignment mode {mode!r}")
    start_groups, goal_groups = np.asarray(start_groups), np.asarray(goal_groups)
    goal_of = np.empty(n, dtype=np.intp)
    cost, gap = 0.0, 0.0
    methods = set()
    for label in np.unique(start_groups):
        drones = np.nonzero(start_groups == label)[0]
        points = np.nonzero(goal_groups == label)[0]
        sub = min_sum_of_squares(xs[drones], gs[points], progress=progress, cancel=cancel)
        goal_of[drones] = points[sub.goal_of]
        cost += sub.cost
        gap += sub.gap_bound
        methods.add(sub.method)
    return Assignment(goal_of, cost, "grouped " + "/".join(sorted(methods)), gap)
