"""Assignment against exhaustive search and scipy.optimize.linear_sum_assignment (reference
library; Crouse, "On implementing 2D rectangular assignment algorithms", IEEE TAES 52(4), 2016)."""

import itertools

import numpy as np
import pytest
from scipy.optimize import linear_sum_assignment

from core import assignment
from core.assignment import assign, min_sum_of_squares


def _cost(x, g, goal_of):
    return ((x - g[goal_of]) ** 2).sum()


@pytest.mark.parametrize("n", [2, 3, 5, 7])
def test_unlabeled_matches_brute_force_permutations(n):
    rng = np.random.default_rng(n)
    for _ in range(5):
        x, g = rng.uniform(-5, 5, (n, 3)), rng.uniform(-5, 5, (n, 3))
        best = min(_cost(x, g, np.array(p)) for p in itertools.permutations(range(n)))
        got = min_sum_of_squares(x, g)
        assert got.cost == pytest.approx(best, rel=1e-12)
        assert sorted(got.goal_of) == list(range(n))


@pytest.mark.parametrize("seed", range(3))
def test_auction_path_matches_scipy_on_random_instances(seed, monkeypatch):
    monkeypatch.setattr(assignment, "EXACT_LIMIT", 10)  # force the auction
    rng = np.random.default_rng(seed)
    n = 300
    x, g = rng.uniform(0, 50, (n, 3)), rng.uniform(0, 50, (n, 3)) + [10, 0, 30]
    got = min_sum_of_squares(x, g)
    rows, cols = linear_sum_assignment(((x[:, None] - g[None]) ** 2).sum(-1))
    optimum = _cost(x, g, cols[np.argsort(rows)])
    assert got.method == "auction+swap-repair"
    assert optimum <= got.cost <= optimum + got.gap_bound + 1e-9 * optimum
    assert sorted(got.goal_of) == list(range(n))


def test_auction_result_has_no_improving_pair_swap(monkeypatch):
    # The separation proof of Turpin, Michael & Kumar (IJRR 2014) needs (x_i-x_j)·(g_i-g_j) >= 0.
    monkeypatch.setattr(assignment, "EXACT_LIMIT", 10)
    rng = np.random.default_rng(7)
    x, g = rng.uniform(0, 30, (200, 3)), rng.uniform(0, 30, (200, 3))
    got = min_sum_of_squares(x, g)
    y = g[got.goal_of]
    dots = np.einsum("ijk,ijk->ij", x[:, None] - x[None], y[:, None] - y[None])
    assert dots.min() >= -1e-9


def test_labeled_is_identity_and_grouped_stays_in_groups():
    rng = np.random.default_rng(11)
    x, g = rng.uniform(0, 10, (6, 3)), rng.uniform(0, 10, (6, 3))
    scale = np.ones(3)
    assert list(assign("labeled", x, g, scale).goal_of) == list(range(6))
    start_groups = np.array(list("aabbab"))
    goal_groups = np.array(list("bbaaab"))
    got = assign("grouped", x, g, scale, start_groups, goal_groups)
    assert np.all(goal_groups[got.goal_of] == start_groups)
    # Within each group the choice is optimal (brute force over the group's points).
    for label in "ab":
        drones = np.nonzero(start_groups == label)[0]
        points = np.nonzero(goal_groups == label)[0]
        best = min(_cost(x[drones], g[list(p)], np.arange(len(p))) for p in itertools.permutations(points))
        assert _cost(x[drones], g, got.goal_of[drones]) == pytest.approx(best)


def test_unlabeled_uses_the_scaled_clearance_metric():
    # Hand-checked: unscaled, identity costs 4 + 4.25 < swap 6.25 + 4; with vertical distances
    # divided by 10 the swap costs 0.0625 + 0.04, far below identity's 4 + 4.0025.
    x = np.array([[0.0, 0, 0], [2.0, 0, 2.0]])
    g = np.array([[2.0, 0, 0], [0.0, 0, 2.5]])
    assert list(assign("unlabeled", x, g, np.array([1.0, 1.0, 1.0])).goal_of) == [0, 1]
    assert list(assign("unlabeled", x, g, np.array([1.0, 1.0, 10.0])).goal_of) == [1, 0]
