"""Safe corridors: separating planes checked by independent LPs (scipy.optimize.linprog), their
margin against the exact segment distance (scipy.optimize.minimize), hull planes against cvxpy's
minimum-norm point, tubes against the obstacle field."""

import cvxpy as cp
import numpy as np
import pytest
import trimesh
from scipy.optimize import linprog, minimize

from core.clearance import ClearanceModel
from core.obstacles import ClearanceField, FleetFields
from core.scene.meshes import SiteMesh
from core.smoothing.corridors import (
    REACH,
    PairPlanes,
    drone_rows,
    initial_planes,
    refined_planes,
    step_tubes,
)


def _extreme_over_hull(points: np.ndarray, c: np.ndarray, sense: str) -> float:
    """max (or min) of ``c · x`` over the convex hull of ``points`` (m, 3), as an LP in weights λ."""
    sign = -1.0 if sense == "max" else 1.0
    res = linprog(sign * points @ c, A_eq=np.ones((1, len(points))), b_eq=[1.0], bounds=[(0, None)] * len(points))
    assert res.success
    return sign * res.fun


def _gap_at(st, seg_i, seg_j) -> float:
    return float(np.linalg.norm(seg_i[0] + st[0] * (seg_i[1] - seg_i[0]) - seg_j[0] - st[1] * (seg_j[1] - seg_j[0])))


def _random_steps(rng, n=12, k=3):
    """Steps ``(n, k, 3)`` × 2 of drones starting on a 4 m grid, each on a short random walk."""
    grid = np.stack(np.meshgrid(np.arange(4), np.arange(3), indexing="ij"), axis=-1).reshape(-1, 2)[:n] * 4.0
    starts = np.c_[grid, np.full(n, 5.0)][:, None, :]
    walk = np.cumsum(rng.normal(scale=0.6, size=(n, k, 3)), axis=1)
    positions = np.concatenate([starts, starts + walk], axis=1)
    return positions[:, :-1], positions[:, 1:]


@pytest.mark.parametrize("rule", ["sums", "shifts and a pair table"])
def test_pair_planes_separate_the_swept_segments_with_the_clearance(rule):
    """Random unequal pairs (two shapes; then also a downwash shift on the large one and a pair
    table entry): every plane separates the two clearance-centre segments with the pair's clearance,
    checked by LPs over their hulls, and is max-margin (exact distance by scipy.optimize.minimize)."""
    rng = np.random.default_rng(7)
    semi = np.tile([0.3, 0.3, 0.6], (12, 1))
    semi[::3] = [0.4, 0.4, 0.8]  # a mixed fleet
    large = np.all(semi == [0.4, 0.4, 0.8], axis=1)
    if rule == "sums":
        clearance = ClearanceModel(semi)
    else:
        clearance = ClearanceModel(semi, np.where(large, 0.5, 0.0), large.astype(int),
                                   {(0, 1): np.array([0.8, 0.8, 1.5])})
    starts, ends = _random_steps(rng)
    planes = initial_planes(starts, ends, clearance)
    assert len(planes.pairs) > 5
    for (i, j, k), r, nu, mid, slack in zip(planes.pairs, planes.radii, planes.normals, planes.middle, planes.slack,
                                            strict=True):
        seg_i = (np.stack([starts[i, k], ends[i, k]]) + clearance.offsets[i]) / r
        seg_j = (np.stack([starts[j, k], ends[j, k]]) + clearance.offsets[j]) / r
        assert _extreme_over_hull(seg_i, nu, "max") <= mid - 0.5 - slack + 1e-9
        assert _extreme_over_hull(seg_j, nu, "min") >= mid + 0.5 + slack - 1e-9
        # max-margin: the gap along ν equals the segments' distance (closest points by minimize)
        dist = minimize(_gap_at, [0.5, 0.5], args=(seg_i, seg_j), bounds=[(0, 1), (0, 1)], method="L-BFGS-B").fun
        gap = _extreme_over_hull(seg_j, nu, "min") - _extreme_over_hull(seg_i, nu, "max")
        assert gap == pytest.approx(dist, abs=1e-5)


def test_every_close_pair_gets_a_plane():
    """Pairs without a plane are farther apart than the reach: their pieces cannot meet."""
    rng = np.random.default_rng(11)
    semi = np.tile([0.3, 0.3, 0.6], (12, 1))
    clearance = ClearanceModel(semi)
    starts, ends = _random_steps(rng)
    planes = initial_planes(starts, ends, clearance)
    have = {tuple(p) for p in planes.pairs}
    tube_reach = REACH * np.max(semi[0] / (2 * semi[0]))  # deviation bound in pair-scaled units
    for k in range(starts.shape[1]):
        for i in range(12):
            for j in range(i + 1, 12):
                if (i, j, k) in have:
                    continue
                samples = np.linspace(0, 1, 101)[:, None]
                pi = (starts[i, k] + samples * (ends[i, k] - starts[i, k])) / (2 * semi[0])
                pj = (starts[j, k] + samples * (ends[j, k] - starts[j, k])) / (2 * semi[0])
                nearest = np.linalg.norm(pi[:, None] - pj[None], axis=2).min()
                assert nearest >= 1 + 2 * tube_reach - 1e-2


def test_refined_planes_separate_control_polygons_and_approach_the_hull_distance():
    rng = np.random.default_rng(5)
    m, pts = 20, 10
    p = rng.normal(size=(m, pts, 3)) * 0.4
    q = rng.normal(size=(m, pts, 3)) * 0.4 + rng.normal(size=(m, 1, 3)) * 0.2 + np.array([3.0, 0.0, 0.0])
    pieces = np.zeros((2, m, pts, 3))
    pieces[0], pieces[1] = p, q
    pairs = np.c_[np.zeros(m, int), np.ones(m, int), np.arange(m)]
    # start from a poor but valid plane: normal along x
    lows = p[..., 0].max(axis=1)
    highs = q[..., 0].min(axis=1)
    old = PairPlanes(pairs, np.ones((m, 3)), np.tile([1.0, 0, 0], (m, 1)), 0.5 * (lows + highs),
                     np.full(m, 0.0), np.zeros((2, 3)))
    new = refined_planes(old, pieces)
    for s in range(m):
        nu, mid, slack = new.normals[s], new.middle[s], new.slack[s]
        assert _extreme_over_hull(p[s], nu, "max") <= mid - 0.5 - slack + 1e-9
        assert _extreme_over_hull(q[s], nu, "min") >= mid + 0.5 + slack - 1e-9
        lam, mu = cp.Variable(pts, nonneg=True), cp.Variable(pts, nonneg=True)
        hull_gap = cp.Problem(cp.Minimize(cp.norm(q[s].T @ mu - p[s].T @ lam)),
                              [cp.sum(lam) == 1, cp.sum(mu) == 1]).solve(solver="CLARABEL")
        gap = _extreme_over_hull(q[s], nu, "min") - _extreme_over_hull(p[s], nu, "max")
        assert gap <= hull_gap + 1e-6 and gap >= 0.98 * hull_gap
        assert gap >= highs[s] - lows[s] - 1e-12  # never worse than the old plane


def test_tubes_stay_clear_of_a_mesh_and_rows_are_assembled_per_drone():
    wall = trimesh.creation.box(extents=[0.4, 6.0, 4.0])
    wall.apply_translation([2.0, 0.0, 2.0])
    semi = np.array([0.25, 0.25, 0.5])
    field = ClearanceField(semi, [SiteMesh("wall", wall, ())], np.array([[-5.0, -5.0, 0.0], [5.0, 5.0, 6.0]]))
    starts = np.array([[[0.0, -2.0, 1.0], [0.5, 0.0, 1.0]], [[-1.0, 2.0, 3.0], [-1.0, 2.0, 3.0]]])
    ends = np.array([[[0.5, 0.0, 1.0], [0.8, 2.0, 1.2]], [[-1.0, 2.0, 3.0], [-2.0, 0.0, 3.0]]])
    tubes = step_tubes(starts, ends, np.tile(semi, (2, 1)), FleetFields.uniform(field, 2))
    rng = np.random.default_rng(0)
    for i in range(2):
        for k in range(2):
            a, b = tubes.normals[i, k], tubes.offsets[i, k]
            # random points inside the box (rejection from its bounding box) are free per the field
            corners = [linprog(c, A_ub=a, b_ub=b, bounds=[(None, None)] * 3).x
                       for c in np.vstack([np.eye(3), -np.eye(3)])]
            lo, hi = np.min(corners, axis=0), np.max(corners, axis=0)
            cloud = rng.uniform(lo, hi, size=(4000, 3))
            inside = cloud[np.all(cloud @ a.T <= b, axis=1)]
            assert len(inside) > 50
            assert field.margins(inside).min() >= -1e-9
            assert np.all(a @ starts[i, k] <= b) and np.all(a @ ends[i, k] <= b)  # the step itself fits
    planes = initial_planes(starts, ends, ClearanceModel(np.tile(semi, (2, 1))))
    normals, offsets, steps, partners = drone_rows(1, tubes, planes)
    assert len(normals) == 12 + len(planes.pairs) and set(partners) <= {-1, 0}
    assert np.allclose(np.linalg.norm(normals, axis=1), 1.0)
    tube_rows = partners == -1
    assert np.allclose(offsets[tube_rows], tubes.offsets[1].ravel())
    assert np.all(steps[tube_rows] == np.repeat([0, 1], 6))


def test_tube_corners_span_the_tube_as_linear_programs_find_it():
    """Each tube's corners satisfy its six half-spaces, and in random directions the largest
    ``c · x`` over the half-spaces (an LP, scipy.optimize.linprog) is reached at a corner; so
    ``inside`` (all corners in a box) says exactly whether the tube lies in that box."""
    rng = np.random.default_rng(5)
    starts, ends = _random_steps(rng, n=4, k=2)
    envelope = np.array([0.4, 0.4, 0.9])
    tubes = step_tubes(starts, ends, np.tile(envelope, (4, 1)), None)
    for i, k in ((0, 0), (1, 1), (3, 0)):
        normals, offsets, corners = tubes.normals[i, k], tubes.offsets[i, k], tubes.corners[i, k]
        assert np.all(corners @ normals.T <= offsets + 1e-9)
        for _ in range(10):
            c = rng.normal(size=3)
            res = linprog(-c, A_ub=normals, b_ub=offsets, bounds=[(None, None)] * 3)
            assert res.success and -res.fun == pytest.approx((corners @ c).max(), abs=1e-7)
    low, high = tubes.corners.min(axis=(0, 1, 2)), tubes.corners.max(axis=(0, 1, 2))
    assert tubes.inside(low, high).all()
    shrunk = tubes.inside(low + 1e-3, high)
    lowest = np.unravel_index(np.argmin(tubes.corners[..., 0].min(axis=2)), tubes.corners.shape[:2])
    assert not shrunk[lowest]
