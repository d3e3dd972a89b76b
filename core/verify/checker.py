"""The independent plan checker. It reads trajectories and requirements only; it imports nothing
from the planning stages, so a planner bug cannot hide itself here.

Every check is continuous-time: margins are sampled, and a sample proves a whole interval safe
only through a Lipschitz bound taken from the Bézier convex-hull property of the next derivative
(see :mod:`core.verify.certify`).
"""

from __future__ import annotations

from dataclasses import dataclass

import numpy as np

from ..progress import CancelToken, ProgressCallback, no_progress
from ..scene.checks import box_distance_ratio
from ..trajectory import MOTION_QUANTITIES, FleetTrajectory
from .certify import SAFE, UNPROVEN, Certificate, certify
from .report import Violation
from .spec import VerificationSpec

#: Pairs within ratio ``1 + SEPARATION_INFLATION`` of each other at a coarse sample are re-checked.
SEPARATION_INFLATION = 0.25
#: Each piece is split into this many windows, each with its own convex-hull speed bound.
WINDOWS_PER_PIECE = 8
_TIME_CHUNK = 64
_DENSE_SAMPLES = 513
_UNPROVEN_NOTE = " (not provable within sampling tolerance)"
PEAK_SAMPLES_PER_PIECE = 64


@dataclass
class Rows:
    """Intervals to certify: row ``r`` concerns drone ``a[r]`` (and ``b[r]`` for pairs) on
    ``[t_lo[r], t_hi[r]]`` within piece ``seg[r]``, with margin rate bound ``lipschitz[r]``."""

    a: np.ndarray
    t_lo: np.ndarray
    t_hi: np.ndarray
    seg: np.ndarray
    lipschitz: np.ndarray
    b: np.ndarray | None = None


def certify_rows(kind: str, rows: Rows, margin, traj: FleetTrajectory, ids, measured_of, required_of, describe,
                  cancel) -> tuple[list[Violation], Certificate]:
    """Certify ``rows``; one violation per drone (or pair) and piece where it fails.

    measured_of / required_of map worst margins ``(K,)`` and row indices ``(K,)`` to figures;
    describe(measured, required) gives the violation's text.
    """
    cert = certify(margin, rows.lipschitz, rows.t_lo, rows.t_hi, cancel=cancel)
    bad = np.nonzero(cert.status != SAFE)[0]
    b = rows.b if rows.b is not None else np.zeros_like(rows.a)
    order = bad[np.lexsort((cert.worst_margin[bad], rows.seg[bad], b[bad], rows.a[bad]))]
    key = np.c_[rows.a[order], b[order], rows.seg[order]]
    worst = order[np.r_[True, np.any(key[1:] != key[:-1], axis=1)]] if len(order) else order
    worst_margin, worst_time = _densest_minimum(margin, rows, worst)
    positions = traj.evaluate_rows(rows.a[worst], worst_time) if len(worst) else np.empty((0, 3))
    measured = measured_of(worst_margin, worst)
    required = required_of(worst)
    out = []
    for k, r in enumerate(worst):
        drones = (rows.a[r],) if rows.b is None else (rows.a[r], rows.b[r])
        proven = cert.status[r] != UNPROVEN
        out.append(Violation(
            kind=kind, drones=tuple(ids[d] for d in drones), time=float(worst_time[k]),
            position=tuple(float(c) for c in positions[k]), measured=float(measured[k]), required=float(required[k]),
            detail=describe(measured[k], required[k], r) + ("" if proven else _UNPROVEN_NOTE),
            proven=bool(proven),
        ))
    return out, cert


def certify_unit_ratio_rows(kind: str, rows: Rows, margin, traj: FleetTrajectory, ids, describe, cancel
                            ) -> list[Violation]:
    """:func:`certify_rows` for margins ``ratio − 1`` (a distance ratio that must stay ≥ 1);
    ``describe(measured ratio)`` gives the violation's text."""
    found, _ = certify_rows(kind, rows, margin, traj, ids, measured_of=lambda worst, r: worst + 1.0,
                            required_of=lambda r: np.ones(len(r)), describe=lambda m, req, r: describe(m),
                            cancel=cancel)
    return found


def _densest_minimum(margin, rows: Rows, picked: np.ndarray) -> tuple[np.ndarray, np.ndarray]:
    """Smallest margin ``(K,)`` and its time ``(K,)`` on a dense grid over each picked row's interval
    (for reporting how bad a violation is; the verdict itself comes from the certificate)."""
    tau = np.linspace(0.0, 1.0, _DENSE_SAMPLES)
    t = rows.t_lo[picked, None] + (rows.t_hi - rows.t_lo)[picked, None] * tau
    values = margin(np.repeat(picked, _DENSE_SAMPLES), t.ravel()).reshape(len(picked), _DENSE_SAMPLES)
    best = values.argmin(axis=1) if len(picked) else np.empty(0, dtype=np.intp)
    return values[np.arange(len(picked)), best], t[np.arange(len(picked)), best]


def check_separation(traj: FleetTrajectory, spec: VerificationSpec, *, progress: ProgressCallback = no_progress,
                     cancel: CancelToken | None = None) -> tuple[list[Violation], np.ndarray, dict, dict]:
    """Pairwise ellipsoid separation over the whole flight.

    Returns violations, per-drone smallest separation ratio ``(N,)``, the fleet's smallest ratio
    over time ``{"t", "min_ratio"}`` and sampling facts for the report.
    """
    model = spec.clearance
    n, n_seg = traj.n_drones, traj.n_segments
    # Speed bounds per window (piece s, part m): the convex hull of each sub-interval's velocity.
    velocity = traj.window_points(1, WINDOWS_PER_PIECE)
    scaled_speed = np.linalg.norm(velocity / model.pair_envelope, axis=-1).max(axis=-1)  # (N, S, M), 1/s
    speed = np.linalg.norm(velocity, axis=-1).max(axis=-1)  # (N, S, M), m/s
    per_drone = np.full(n, np.inf)
    timeline_t, timeline_min = [], []
    rows_i, rows_j, rows_lo, rows_hi, rows_win = [], [], [], [], []
    largest_cell, samples = 0.0, 0
    windows = [(s, m) for s in range(n_seg) for m in range(WINDOWS_PER_PIECE)]
    for w, (s, m) in enumerate(windows):
        h = traj.durations[s] / WINDOWS_PER_PIECE
        rate = 2.0 * scaled_speed[:, s, m].max()  # bound on d(ratio)/dt for any pair, per second
        cells = 1 if rate == 0 else int(np.ceil(rate * h / (2 * SEPARATION_INFLATION)))
        width = h / cells
        delta = rate * width / 2
        largest_cell = max(largest_cell, width)
        centres = traj.breaks[s] + m * h + width * (np.arange(cells) + 0.5)
        for lo in range(0, cells, _TIME_CHUNK):
            if cancel is not None:
                cancel.check()
            chunk = centres[lo:lo + _TIME_CHUNK]
            for t, pos in zip(chunk, traj.evaluate(chunk), strict=True):
                pairs, _, nearest = model.neighbourhood(pos, 1.0 + delta)
                lowest = nearest if model.homogeneous else _smallest_ratios(model, pos, pairs, nearest, 1.0 + delta)
                np.minimum(per_drone, lowest, out=per_drone)
                timeline_t.append(t)
                timeline_min.append(lowest.min())
                rows_i.append(pairs[:, 0])
                rows_j.append(pairs[:, 1])
                rows_lo.append(np.full(len(pairs), t - width / 2))
                rows_hi.append(np.full(len(pairs), t + width / 2))
                rows_win.append(np.full(len(pairs), w))
            samples += len(chunk)
        progress("verification", 0.7 * (w + 1) / len(windows), f"separation: piece {s + 1}/{n_seg}")
    i, j, t_lo, t_hi, win = (np.concatenate(x) if x else np.empty(0) for x in
                             (rows_i, rows_j, rows_lo, rows_hi, rows_win))
    i, j, win = i.astype(np.intp), j.astype(np.intp), win.astype(np.intp)
    seg, part = win // WINDOWS_PER_PIECE, win % WINDOWS_PER_PIECE
    radii = model.radii(i, j)
    rows = Rows(i, t_lo, t_hi, seg, (speed[i, seg, part] + speed[j, seg, part]) / radii.min(axis=1), b=j)

    shift = model.offsets[i] - model.offsets[j]  # clearance centres: position + downwash offset

    def margin(r, t):
        gap = traj.evaluate_rows(i[r], t) - traj.evaluate_rows(j[r], t) + shift[r]
        return np.linalg.norm(gap / radii[r], axis=-1) - 1.0

    violations, cert = certify_rows(
        "separation", rows, margin, traj, spec.drone_ids,
        measured_of=lambda worst, r: worst + 1.0, required_of=lambda r: np.ones(len(r)),
        describe=lambda m, req, r: (f"separation ratio {m:.3f} < 1 (pair clearance {radii[r, 0]:.2f} m "
                                    f"sideways, {radii[r, 2]:.2f} m vertically)"),
        cancel=cancel)
    np.minimum.at(per_drone, i, cert.worst_margin + 1.0)
    np.minimum.at(per_drone, j, cert.worst_margin + 1.0)
    facts = {
        "separation_samples": samples,
        "separation_largest_interval_s": largest_cell,
        "separation_candidate_intervals": int(len(i)),
        "separation_evaluations": int(cert.evaluations),
    }
    return violations, per_drone, {"t": timeline_t, "min_ratio": timeline_min}, facts


def _smallest_ratios(model, positions: np.ndarray, pairs: np.ndarray, nearest: np.ndarray, cap: float) -> np.ndarray:
    """Per drone ``(N,)`` a lower bound on its smallest separation ratio at ``positions`` ``(N, 3)``
    that is exact where it is below ``cap``: the KD-tree bound ``nearest`` is exact for one drone
    kind only, so for mixed fleets each candidate pair (``pairs`` ``(M, 2)``, every pair whose bound
    is below ``cap``) is measured here between clearance centres, with the pair's own half-axes."""
    i, j = pairs[:, 0], pairs[:, 1]
    exact = np.linalg.norm((positions[i] + model.offsets[i] - positions[j] - model.offsets[j]) / model.radii(i, j),
                           axis=-1)
    smallest = np.full(len(positions), cap)
    np.minimum.at(smallest, i, exact)
    np.minimum.at(smallest, j, exact)
    return np.maximum(nearest, smallest)


_LIMIT_KINDS = (
    # kind, limit column, axes of the limited quantity, derivative order, label, unit
    ("speed_xy", 0, slice(0, 2), 1, "horizontal speed", "m/s"),
    ("speed_z", 1, slice(2, 3), 1, "vertical speed", "m/s"),
    ("acceleration", 2, slice(0, 3), 2, "acceleration", "m/s²"),
)


def check_limits(traj: FleetTrajectory, spec: VerificationSpec, *,
                 cancel: CancelToken | None = None) -> tuple[list[Violation], dict[str, np.ndarray]]:
    """Speed and acceleration limits over continuous time; returns violations and per-drone
    largest sampled values ``{kind: (N,)}`` where the convex hull alone did not prove the limit."""
    n, n_seg = traj.n_drones, traj.n_segments
    drone, seg = np.divmod(np.arange(n * n_seg), n_seg)
    violations, peaks = [], {}
    for kind, column, axes, order, label, unit in _LIMIT_KINDS:
        allowed = spec.limits[drone, column] * (1.0 + spec.tolerance)
        todo = np.nonzero(traj.hull_bound(order, axes).ravel() > allowed)[0]  # others: hull proves it
        d, sg = drone[todo], seg[todo]
        rows = Rows(d, traj.breaks[sg], traj.breaks[sg + 1], sg, traj.hull_bound(order + 1, axes).ravel()[todo])

        def margin(r, t, d=d, axes=axes, order=order, allowed=allowed[todo]):
            return allowed[r] - np.linalg.norm(traj.evaluate_rows(d[r], t, order)[:, axes], axis=-1)

        found, cert = certify_rows(
            kind, rows, margin, traj, spec.drone_ids,
            measured_of=lambda worst, r, a=allowed[todo]: a[r] - worst,
            required_of=lambda r, d=d, column=column: spec.limits[d[r], column],
            describe=lambda m, req, r, label=label, unit=unit: f"{label} {m:.3f} {unit} > limit {req:.3f} {unit}",
            cancel=cancel)
        violations += found
        peak = np.zeros(n)
        np.maximum.at(peak, d, allowed[todo] - cert.worst_margin)
        peaks[kind] = peak
    return violations, peaks


def check_geofence(traj: FleetTrajectory, spec: VerificationSpec, *,
                   cancel: CancelToken | None = None) -> list[Violation]:
    """Drone centres inside the flight volume; clearance ellipsoids clear of every keep-out box.

    Pieces whose control points (plus clearance) already satisfy the rule are proven by the
    convex hull and skipped.
    """
    n, n_seg = traj.n_drones, traj.n_segments
    drone, seg = np.divmod(np.arange(n * n_seg), n_seg)
    points = traj.control_points.reshape(n * n_seg, -1, 3)
    low, high = points.min(axis=1), points.max(axis=1)
    speed = traj.hull_bound(1).ravel()
    volume = spec.flight_volume

    def rows_where(needs_check: np.ndarray, rate: np.ndarray) -> Rows:
        todo = np.nonzero(needs_check)[0]
        return Rows(drone[todo], traj.breaks[seg[todo]], traj.breaks[seg[todo] + 1], seg[todo], rate[todo])

    rows = rows_where(np.any((low < volume[0]) | (high > volume[1]), axis=1), speed)

    def inside(r, t, d=rows.a):
        p = traj.evaluate_rows(d[r], t)
        return np.minimum(p - volume[0], volume[1] - p).min(axis=1)

    violations, _ = certify_rows(
        "flight_volume", rows, inside, traj, spec.drone_ids,
        measured_of=lambda worst, r: -worst, required_of=lambda r: np.zeros(len(r)),
        describe=lambda m, req, r: f"{m:.3f} m outside the flight volume", cancel=cancel)
    axes = spec.semi_axes[drone]
    for name, box in spec.keep_out:
        rows = rows_where(np.all((high + axes > box[0]) & (low - axes < box[1]), axis=1), speed / axes.min(axis=1))

        def clear(r, t, d=rows.a, box=box):
            return box_distance_ratio(traj.evaluate_rows(d[r], t), box, spec.semi_axes[d[r]]) - 1.0

        violations += certify_unit_ratio_rows(
            "keep_out", rows, clear, traj, spec.drone_ids,
            lambda m, name=name: f"clearance ellipsoid enters keep-out box {name!r} (distance ratio {m:.3f} < 1)",
            cancel)
    return violations


def sampled_peaks(traj: FleetTrajectory) -> dict[str, np.ndarray]:
    """Per-drone peaks ``(N,)`` on a grid of :data:`PEAK_SAMPLES_PER_PIECE` samples per piece."""
    tau = (np.arange(PEAK_SAMPLES_PER_PIECE) + 0.5) / PEAK_SAMPLES_PER_PIECE
    grid = np.r_[(traj.breaks[:-1, None] + traj.durations[:, None] * tau[None, :]).ravel(), traj.breaks]
    out = {}
    for name, order, axes in MOTION_QUANTITIES:
        peak = np.zeros(traj.n_drones)
        for lo in range(0, len(grid), _TIME_CHUNK):
            values = np.linalg.norm(traj.evaluate(grid[lo:lo + _TIME_CHUNK], order)[..., axes], axis=-1)
            np.maximum(peak, values.max(axis=0), out=peak)
        out[name] = peak
    return out
