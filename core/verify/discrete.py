"""Independent check of a discrete synchronized plan: no two drones' steps can touch.

Each drone's step is the segment between its positions at two consecutive steps (a point when it
waits). Two steps conflict when the segments come closer than the pair's clearance ellipsoid
(between clearance centres, coordinates scaled by the pair radii from
:class:`core.clearance.ClearanceModel`), whatever the timing inside the step. The segment
distance here is computed by enumeration — the four endpoint distances and the interior
stationary point — not by the planner's clamping routine.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.spatial import cKDTree

from ..clearance import ClearanceModel


@dataclass(frozen=True)
class StepConflict:
    """Drones ``a`` < ``b`` (indices) at step ``step``; ``ratio``: segment distance / pair clearance (< 1)."""

    a: int
    b: int
    step: int
    ratio: float


def check_discrete_plan(positions: np.ndarray, model: ClearanceModel) -> list[StepConflict]:
    """Conflicts of a plan ``positions`` ``(N, K + 1, 3)`` (metres) under the fleet's clearance ``model``."""
    bound = model.pair_envelope
    positions = model.centres(positions)  # pairs are measured between clearance centres
    out = []
    for k in range(positions.shape[1] - 1):
        p0, p1 = positions[:, k], positions[:, k + 1]
        mid, half = (p0 + p1) / 2 / bound, np.linalg.norm((p1 - p0) / bound, axis=1) / 2
        pairs = cKDTree(mid).query_pairs(1.0 + 2 * half.max(), output_type="ndarray")
        if len(pairs) == 0:
            continue
        a, b = pairs[:, 0], pairs[:, 1]
        r = model.radii(a, b)
        ratio = _segment_distance(p0[a] / r, p1[a] / r, p0[b] / r, p1[b] / r)
        out += [StepConflict(int(i), int(j), k, float(q)) for i, j, q in zip(a, b, ratio, strict=True) if q < 1.0]
    return sorted(out, key=lambda c: (c.step, c.a, c.b))


def _segment_distance(a0, a1, b0, b1) -> np.ndarray:
    """Distance ``(M,)`` between segments: minimum over the endpoint-to-segment distances and, when
    the closest points of the two lines lie inside both segments, the line–line distance."""
    candidates = [_to_segment(a0, b0, b1), _to_segment(a1, b0, b1), _to_segment(b0, a0, a1), _to_segment(b1, a0, a1)]
    u, v, w = a1 - a0, b1 - b0, a0 - b0
    uu, uv, vv = (u * u).sum(1), (u * v).sum(1), (v * v).sum(1)
    uw, vw = (u * w).sum(1), (v * w).sum(1)
    det = uu * vv - uv * uv
    ok = det > 1e-12 * np.maximum(uu * vv, 1e-300)
    safe = np.where(ok, det, 1.0)
    s, t = (uv * vw - vv * uw) / safe, (uu * vw - uv * uw) / safe
    interior = ok & (s > 0) & (s < 1) & (t > 0) & (t < 1)
    gap = np.linalg.norm(w + s[:, None] * u - t[:, None] * v, axis=1)
    candidates.append(np.where(interior, gap, np.inf))
    return np.min(candidates, axis=0)


def _to_segment(p, a, b) -> np.ndarray:
    d = b - a
    t = np.clip(((p - a) * d).sum(1) / np.maximum((d * d).sum(1), 1e-300), 0.0, 1.0)
    return np.linalg.norm(p - a - t[:, None] * d, axis=1)
