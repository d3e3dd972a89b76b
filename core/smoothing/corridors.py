"""Safe corridors: per drone and time step, half-spaces its curve piece must stay in.

* **Pair planes** — for every pair of drones that could come close during a step, a max-margin
  separating plane between their swept segments (later: their pieces' control polygons), measured
  between clearance centres (:meth:`core.clearance.ClearanceModel.centres`: a drone's position plus
  its downwash offset) in coordinates divided by the pair's own clearance radii, shifted by half
  the clearance to each side. If both drones keep their pieces on their sides, their clearance
  centres stay ≥ 1 apart in those coordinates: the pair's region is never entered during the step,
  whatever the two drones' shapes (a plane separates the two convex hulls, and each curve piece
  lies in its control points' hull).
* **Tubes** — an oriented box around each roadmap step, in coordinates divided by the drone's own
  clearance ellipsoid, no farther than the step's certified obstacle margin in that drone's own
  field (so clear of keep-out boxes and meshes) and than :data:`REACH`. The reach also bounds how
  far a piece strays, so pairs of steps farther apart than twice the reach plus the clearance need
  no plane.
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np
from scipy.spatial import cKDTree

from ..clearance import ClearanceModel
from ..geometry import segment_segment_closest
from ..obstacles import FleetFields

#: Farthest a smoothed piece may stray from its roadmap step, in the drone's own clearance radii.
REACH = 3.0
#: Extra separation kept by each drone beyond its half of the clearance (scaled units), so solver
#: round-off cannot touch the clearance itself; less when the plan has less to spare.
PLANE_SLACK = 1e-2
#: Frank–Wolfe iterations for the closest points of two control polygons (vectorised over pairs).
HULL_ITERATIONS = 60


@dataclass(frozen=True, eq=False)
class PairPlanes:
    """Separating planes of ``P`` (drone i, drone j, step k) triples.

    pairs : (P, 3) int; radii : (P, 3) pair clearance half-axes (m); normals : (P, 3) unit, in
    coordinates divided by ``radii``, pointing from i to j; middle : (P,) plane offset there;
    slack : (P,) extra margin each side keeps; offsets : (N, 3) each drone's clearance centre
    relative to its position (m). With ``c = x + offset`` the clearance centre, drone i keeps
    ``ν·(c/r) ≤ middle − ½ − slack``, drone j keeps ``ν·(c/r) ≥ middle + ½ + slack``.
    """

    pairs: np.ndarray
    radii: np.ndarray
    normals: np.ndarray
    middle: np.ndarray
    slack: np.ndarray
    offsets: np.ndarray


def pair_reach(clearance: ClearanceModel, envelope: np.ndarray) -> float:
    """Scaled step distance beyond which a pair needs no plane: ``1 + 2 REACH max(envelope / r)``
    with ``r ≥ 2 × the smallest half-axes`` a lower bound on every pair radius."""
    smallest_pair = 2.0 * clearance.semi_axes.min(axis=0)
    return 1.0 + 2.0 * REACH * float(np.max(envelope / smallest_pair))


def initial_planes(starts: np.ndarray, ends: np.ndarray, clearance: ClearanceModel) -> PairPlanes:
    """Max-margin planes between the swept step segments ``starts[:, k]`` → ``ends[:, k]``
    ``(N, K, 3)`` of every pair within :func:`pair_reach` (the perpendicular bisector of their
    clearance centres' closest points). Raises ``ValueError`` if two segments come closer than the clearance."""
    reach = pair_reach(clearance, clearance.envelope)
    starts, ends = clearance.centres(starts), clearance.centres(ends)
    found = []
    for k in range(starts.shape[1]):
        a, b = starts[:, k] / clearance.pair_envelope, ends[:, k] / clearance.pair_envelope
        longest = float(np.linalg.norm(b - a, axis=1).max())
        pairs = cKDTree(0.5 * (a + b)).query_pairs(reach + longest, output_type="ndarray").reshape(-1, 2)
        found.append(np.c_[pairs, np.full(len(pairs), k)])
    pairs = np.concatenate(found) if found else np.zeros((0, 3), dtype=int)
    i, j, k = pairs.T
    radii = clearance.radii(i, j)
    on_i, on_j = segment_segment_closest(starts[i, k] / radii, ends[i, k] / radii,
                                         starts[j, k] / radii, ends[j, k] / radii)
    gap = np.linalg.norm(on_j - on_i, axis=1)
    keep = gap < reach
    if np.any(gap[keep] < 1.0):
        raise ValueError("two roadmap steps come closer than the clearance; the discrete plan is not conflict-free")
    pairs, radii, gap, on_i, on_j = pairs[keep], radii[keep], gap[keep], on_i[keep], on_j[keep]
    normals = (on_j - on_i) / gap[:, None]
    middle = 0.5 * np.einsum("pd,pd->p", normals, on_i + on_j)
    return PairPlanes(pairs, radii, normals, middle, _slack(gap), clearance.offsets)


def refined_planes(planes: PairPlanes, pieces: np.ndarray) -> PairPlanes:
    """Planes re-centred on the control polygons ``pieces`` ``(N, K, n + 1, 3)`` of the last
    solution (their clearance centres): the better of the old normal and the Frank–Wolfe
    closest-point direction. A pair whose polygons are (by solver round-off) less than the
    clearance apart keeps its old plane."""
    i, j, k = planes.pairs.T
    offsets = planes.offsets
    p = (pieces[i, k] + offsets[i][:, None, :]) / planes.radii[:, None, :]
    q = (pieces[j, k] + offsets[j][:, None, :]) / planes.radii[:, None, :]
    candidates = [planes.normals, _closest_direction(p, q)]
    gaps, lows, highs = [], [], []
    for nu in candidates:
        low = np.einsum("pid,pd->pi", p, nu).max(axis=1)
        high = np.einsum("pid,pd->pi", q, nu).min(axis=1)
        gaps.append(high - low)
        lows.append(low)
        highs.append(high)
    best = np.argmax(np.stack(gaps), axis=0)
    rows = np.arange(len(best))
    gap = np.stack(gaps)[best, rows]
    normals = np.stack(candidates)[best, rows]
    middle = 0.5 * (np.stack(lows)[best, rows] + np.stack(highs)[best, rows])
    keep_old = gap < 1.0
    return PairPlanes(planes.pairs, planes.radii, np.where(keep_old[:, None], planes.normals, normals),
                      np.where(keep_old, planes.middle, middle), np.where(keep_old, planes.slack, _slack(gap)),
                      offsets)


def _slack(gap: np.ndarray) -> np.ndarray:
    return np.clip(0.5 * (gap - 1.0), 0.0, PLANE_SLACK)


def _closest_direction(p: np.ndarray, q: np.ndarray) -> np.ndarray:
    """Unit direction ``(P, 3)`` of the minimum-norm point of ``conv(q) − conv(p)`` (point sets
    ``(P, m, 3)``), by Frank–Wolfe with exact line search (Frank & Wolfe 1956; for this use see
    Gilbert, Johnson & Keerthi 1988). Any direction is a valid separator; this one maximises the gap."""
    z = q.mean(axis=1) - p.mean(axis=1)
    for _ in range(HULL_ITERATIONS):
        s = q[np.arange(len(q)), np.einsum("pid,pd->pi", q, z).argmin(axis=1)] \
            - p[np.arange(len(p)), np.einsum("pid,pd->pi", p, z).argmax(axis=1)]
        step = z - s
        denom = np.einsum("pd,pd->p", step, step)
        gamma = np.clip(np.einsum("pd,pd->p", z, step) / np.where(denom > 0, denom, 1.0), 0.0, 1.0)
        z = z - gamma[:, None] * step
    norm = np.linalg.norm(z, axis=1, keepdims=True)
    return z / np.where(norm > 0, norm, 1.0)


@dataclass(frozen=True, eq=False)
class Tubes:
    """Per drone and step six half-spaces ``normals · x ≤ offsets`` (unit world normals ``(N, K, 6, 3)``,
    offsets ``(N, K, 6)`` m) bounding an oriented box around the roadmap step, whose eight corners
    are ``corners`` ``(N, K, 8, 3)`` m."""

    normals: np.ndarray
    offsets: np.ndarray
    corners: np.ndarray

    def inside(self, low: np.ndarray, high: np.ndarray) -> np.ndarray:
        """``(N, K)`` whether each box lies inside the axis-aligned box ``low`` … ``high`` ``(3,)`` m
        (a convex box lies inside it exactly when its corners do)."""
        return np.all((self.corners >= low) & (self.corners <= high), axis=(2, 3))


def step_tubes(starts: np.ndarray, ends: np.ndarray, semi_axes: np.ndarray, fields: FleetFields | None) -> Tubes:
    """Boxes around the steps ``(N, K, 3)``: axis along the step, half-width ``e = m / √3`` on every
    side (also past the ends), ``m`` = min(certified obstacle margin of the step in the drone's own
    field, :data:`REACH`) in units of the drone's own half-axes ``semi_axes`` ``(N, 3)`` m. Every
    box point lies within ``√3 e = m`` of the step, hence is free for that drone."""
    n, k = starts.shape[:2]
    a, b = starts.reshape(-1, 3), ends.reshape(-1, 3)
    envelope = np.repeat(np.asarray(semi_axes, dtype=np.float64), k, axis=0)  # (M, 3): each row's drone
    margin = np.full(len(a), REACH) if fields is None else \
        np.minimum(fields.segment_margins(np.repeat(np.arange(n), k), a, b), REACH)
    half = np.maximum(margin, 0.0) / np.sqrt(3.0)
    half = half - np.minimum(PLANE_SLACK, 0.5 * half)
    ya, yb = a / envelope, b / envelope
    u, v, w = _frames(yb - ya)
    normals = np.stack([u, -u, v, -v, w, -w], axis=1)  # (M, 6, 3) in scaled coordinates
    anchor = np.stack([yb, ya, ya, ya, ya, ya], axis=1)
    offsets = np.einsum("mfd,mfd->mf", normals, anchor) + half[:, None]
    world = normals / envelope[:, None, :]
    norm = np.linalg.norm(world, axis=2)
    # Corners ya + α u + β v + γ w: α ∈ {−e, length + e}, β, γ ∈ {−e, e}.
    far = np.linalg.norm(yb - ya, axis=1) + half
    pick = np.array([(a, b, c) for a in (0, 1) for b in (0, 1) for c in (0, 1)])  # (8, 3): which end per axis
    ends = np.stack([np.stack([-half, far], axis=1), np.stack([-half, half], axis=1),
                     np.stack([-half, half], axis=1)], axis=1)  # (M, 3 axes, 2 ends)
    coefficients = ends[:, np.arange(3), pick]  # (M, 8, 3)
    corners = (ya[:, None] + np.einsum("mcf,mfd->mcd", coefficients, np.stack([u, v, w], axis=1))) \
        * envelope[:, None, :]
    return Tubes((world / norm[..., None]).reshape(n, k, 6, 3), (offsets / norm).reshape(n, k, 6),
                 corners.reshape(n, k, 8, 3))


def _frames(d: np.ndarray) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Orthonormal frames ``(M, 3)`` × 3 with ``u`` along ``d`` (x for zero-length ``d``)."""
    length = np.linalg.norm(d, axis=1, keepdims=True)
    u = np.where(length > 1e-12, d / np.where(length > 1e-12, length, 1.0), [1.0, 0.0, 0.0])
    helper = np.eye(3)[np.argmin(np.abs(u), axis=1)]
    v = np.cross(u, helper)
    v /= np.linalg.norm(v, axis=1, keepdims=True)
    return u, v, np.cross(u, v)


def drone_rows(drone: int, tubes: Tubes, planes: PairPlanes) -> tuple[np.ndarray, np.ndarray, np.ndarray, np.ndarray]:
    """One drone's corridor rows: unit world normals ``(R, 3)``, offsets ``(R,)`` m, step ``(R,)``
    and partner drone ``(R,)`` (-1 for tube rows). A plane row on the clearance centre ``x + o``
    becomes ``(ν/r)·x ≤ bound − (ν/r)·o`` on the drone's position ``x``."""
    k_count = tubes.normals.shape[1]
    normals = [tubes.normals[drone].reshape(-1, 3)]
    offsets = [tubes.offsets[drone].ravel()]
    steps = [np.repeat(np.arange(k_count), 6)]
    partners = [np.full(6 * k_count, -1)]
    for mine, other, sign, shift in ((0, 1, 1.0, -0.5), (1, 0, -1.0, 0.5)):
        rows = np.nonzero(planes.pairs[:, mine] == drone)[0]
        world = sign * planes.normals[rows] / planes.radii[rows]
        bound = sign * (planes.middle[rows] + shift) - planes.slack[rows] - world @ planes.offsets[drone]
        norm = np.linalg.norm(world, axis=1)
        normals.append(world / norm[:, None])
        offsets.append(bound / norm)
        steps.append(planes.pairs[rows, 2])
        partners.append(planes.pairs[rows, other])
    return np.concatenate(normals), np.concatenate(offsets), np.concatenate(steps), np.concatenate(partners)
