"""The separation property of synchronized straight-line motion (Turpin, Michael & Kumar, "CAPT:
Concurrent assignment and planning of trajectories for multiple robots", IJRR 33(1):98–112, 2014):
starts and goals pairwise ≥ 2√2·R apart, a minimum-sum-of-squares assignment and one shared time
profile keep every pair ≥ 2R apart. Applied in coordinates scaled by the ellipsoid radii."""

import numpy as np
from hypothesis import given, settings
from hypothesis import strategies as st

from core.assignment import assign
from core.clearance import ClearanceModel
from core.straight_line import straight_leg_points
from core.timing import MIN_SNAP
from core.trajectory import FleetTrajectory
from core.verify import VerificationSpec, verify

AXES = np.array([0.3, 0.3, 0.8])  # per-drone half-axes; pair radii are twice these


def _spaced_points(rng, n, box):
    """Rejection-sample n points whose pairwise scaled distance is ≥ √2 (pair radii units)."""
    pair = 2 * AXES
    pts = []
    while len(pts) < n:
        p = rng.uniform(0, box, 3)
        if all(np.linalg.norm((p - q) / pair) >= np.sqrt(2) for q in pts):
            pts.append(p)
    return np.array(pts)


@settings(max_examples=25, deadline=None)
@given(seed=st.integers(0, 2**32 - 1), n=st.integers(2, 14))
def test_synchronized_straight_lines_keep_the_spacing(seed, n):
    rng = np.random.default_rng(seed)
    box = np.array([6.0, 6.0, 10.0])
    starts, goals = _spaced_points(rng, n, box), _spaced_points(rng, n, box) + rng.uniform(-3, 3, 3)
    pair_envelope = ClearanceModel(np.repeat(AXES[None], n, axis=0)).pair_envelope
    goal_of = assign("unlabeled", starts, goals, pair_envelope).goal_of
    legs = straight_leg_points(starts, goals[goal_of], MIN_SNAP, 7)
    traj = FleetTrajectory(np.array([0.0, 10.0]), legs[:, None], tuple(f"d{i}" for i in range(n)))
    # Independent dense check of the published bound: ratio >= 1 at every sample.
    p = traj.evaluate(np.linspace(0, 10, 401))
    rel = (p[:, :, None] - p[:, None, :]) / (2 * AXES)
    ratio = np.linalg.norm(rel, axis=-1) + np.eye(n) * 1e9
    assert ratio.min() >= 1 - 1e-9
    spec = VerificationSpec(traj.drone_ids, np.repeat(AXES[None], n, axis=0), np.tile([100.0, 100.0, 100.0], (n, 1)),
                            np.array([[-100.0] * 3, [100.0] * 3]))
    assert verify(traj, spec).ok
