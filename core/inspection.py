"""Figures for inspecting a plan on screen: motion magnitudes over time, drone positions, close
approaches. Sampled (informational); the proofs are the verifier's."""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from .clearance import ClearanceModel
from .trajectory import MOTION_QUANTITIES, FleetTrajectory

#: Separation ratio below which a pair's closest approach is listed (common practice, no source:
#: a 50 % band above the clearance is where operators start to look).
APPROACH_BAND = 1.5


@dataclass(frozen=True)
class Approach:
    """The closest sampled approach of drones ``pair`` (indices): ``ratio`` at ``time`` s."""

    pair: tuple[int, int]
    time: float
    ratio: float


def sample_times(traj: FleetTrajectory, per_piece: int = 24) -> np.ndarray:
    """Times ``(T,)`` s: ``per_piece`` per piece, plus the breakpoints."""
    tau = np.arange(per_piece) / per_piece
    inner = (traj.breaks[:-1, None] + traj.durations[:, None] * tau[None, :]).ravel()
    return np.r_[inner, traj.duration]


def motion_curves(traj: FleetTrajectory, drones: np.ndarray, times: np.ndarray) -> dict[str, np.ndarray]:
    """Magnitudes ``(T, D)`` for drones ``drones`` ``(D,)`` at ``times``: horizontal and vertical
    speed (m/s), acceleration (m/s²), jerk (m/s³) and snap (m/s⁴)."""
    drones, times = np.asarray(drones, dtype=int), np.asarray(times, dtype=float)
    rows = (np.tile(drones, len(times)), np.repeat(times, len(drones)))  # only these drones: (T·D,) each
    by_order: dict[int, np.ndarray] = {}
    out = {}
    for name, order, axes in MOTION_QUANTITIES:
        if order not in by_order:
            by_order[order] = traj.evaluate_rows(*rows, order).reshape(len(times), len(drones), 3)
        out[name] = np.linalg.norm(by_order[order][..., axes], axis=-1)
    return out


def closest_approaches(traj: FleetTrajectory, clearance: ClearanceModel, band: float = APPROACH_BAND,
                       times: np.ndarray | None = None) -> list[Approach]:
    """Per pair whose sampled separation ratio falls below ``band``, its smallest sampled ratio and
    when (sorted by ratio), under the fleet's ``clearance``; ``times`` default :func:`sample_times`."""
    times = sample_times(traj) if times is None else times
    positions = traj.evaluate(times)  # (T, N, 3)
    best: dict[tuple[int, int], tuple[float, float]] = {}
    for t, p in zip(times, positions, strict=True):
        pairs, ratios = clearance.close_pairs(p, band)
        for (i, j), r in zip(map(tuple, pairs), ratios, strict=True):
            if (i, j) not in best or r < best[(i, j)][0]:
                best[(i, j)] = (float(r), float(t))
    found = [Approach((int(i), int(j)), t, r) for (i, j), (r, t) in best.items()]
    return sorted(found, key=lambda a: a.ratio)
