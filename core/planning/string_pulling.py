"""String pulling of a discrete plan: each drone's zig-zag over roadmap vertices replaced, where it
can be, by a straight segment flown in the same steps.

A roadmap path bends at every vertex it visits, and the smoothing corridors are built around those
steps, so a path that zig-zags between samples stays slow however well it is smoothed. For one
drone at a time, a run of steps ``a … b`` is replaced by the straight segment from its position at
step ``a`` to its position at step ``b``, the intermediate step ends placed at the same fractions
of the way as along the old path (a wait stays a wait, and no step gets longer, so no step needs
more time). The run is accepted when

* the segment keeps at least :data:`MARGIN_SHARE` of the smallest obstacle margin the old steps
  had (capped at :data:`MARGIN_CAP`), so the corridor tubes around it keep some room, and
* each new step keeps, to every other drone's step at the same time, at least the separation the
  old step had (capped at :data:`PAIR_CAP`, never below the clearance), measured between swept
  segments (the search's own conflict rule: whatever the timing inside the step).

The result still goes through the independent discrete check before anything is flown.
"""

from __future__ import annotations

import numpy as np

from ..clearance import ClearanceModel
from ..geometry import segment_segment_closest
from ..obstacles import FleetFields

#: Obstacle margin (units of the drone's own clearance radii) beyond which a straighter segment need not keep more.
MARGIN_CAP = 1.0
#: Share of the old steps' (capped) obstacle margin a straighter segment must keep. Cutting the
#: corner of a path that hugs an obstacle narrows the tube there but shortens the flight: at 1.0
#: the bridge sample flew 12.2 / 14.3 / 15.1 s, at 0.25 12.2 / 12.2 / 13.5 s (DEVELOPERS.md).
MARGIN_SHARE = 0.25
#: Separation ratio beyond which a straighter step need not keep as much room to a neighbour as the
#: old one had (below it, no pair may come closer than before: tight pairs make slow corridors).
PAIR_CAP = 1.2
#: Passes over the fleet (a drone straightened in one pass may free room for another in the next).
PASSES = 2


def pull_strings(positions: np.ndarray, clearance: ClearanceModel, fields: FleetFields | None,
                 passes: int = PASSES) -> np.ndarray:
    """``positions`` ``(N, K + 1, 3)`` (m, drone positions at the step ends) with runs of steps
    straightened as the module docstring says; the ends of every drone stay where they were.
    ``fields`` gives each drone's own clearance field (None: no obstacles)."""
    out = np.array(positions, dtype=np.float64, copy=True)
    n, ends = out.shape[:2]
    if ends < 3:
        return out
    margins = _step_margins(out, fields)
    boxes = _RangeBoxes(out)
    for _ in range(passes):
        changed = False
        for i in range(n):
            a = 0
            while a < ends - 2:
                b = _farthest_run(out, margins, boxes, clearance, fields, i, a)
                if b > a + 1 and _straighten(out, i, a, b):
                    margins[i, a:b] = _margins(fields, i, out[i, a:b], out[i, a + 1:b + 1])
                    boxes.update(i, out[i])
                    changed = True
                a = max(b, a + 1)
        if not changed:
            break
    out[:, [0, -1]] = positions[:, [0, -1]]  # bit for bit: starts and goals are formation points
    return out


class _RangeBoxes:
    """Per drone, the bounding box of its positions over any range of step ends in one lookup: a
    sparse table whose level ``l`` holds the boxes of ``2^l`` consecutive step ends (two
    overlapping entries cover any range)."""

    def __init__(self, positions: np.ndarray):
        self.low, self.high = [positions.copy()], [positions.copy()]
        span = 1
        while 2 * span <= positions.shape[1]:
            low, high = self.low[-1], self.high[-1]
            self.low.append(np.minimum(low[:, :-span], low[:, span:]))
            self.high.append(np.maximum(high[:, :-span], high[:, span:]))
            span *= 2

    def update(self, i: int, path: np.ndarray) -> None:
        """Drone ``i`` now flies ``path`` ``(K + 1, 3)``."""
        self.low[0][i], self.high[0][i] = path, path
        span = 1
        for level in range(1, len(self.low)):
            low, high = self.low[level - 1][i], self.high[level - 1][i]
            self.low[level][i] = np.minimum(low[:-span], low[span:])
            self.high[level][i] = np.maximum(high[:-span], high[span:])
            span *= 2

    def over(self, a: int, b: int) -> tuple[np.ndarray, np.ndarray]:
        """Lower and upper corners ``(N, 3)`` of every drone's box over step ends ``a … b``."""
        level = (b - a + 1).bit_length() - 1
        other = b - (1 << level) + 1
        return (np.minimum(self.low[level][:, a], self.low[level][:, other]),
                np.maximum(self.high[level][:, a], self.high[level][:, other]))


def _farthest_run(positions: np.ndarray, margins: np.ndarray, boxes: _RangeBoxes, clearance: ClearanceModel,
                  fields: FleetFields | None, i: int, a: int) -> int:
    """A step ``b`` > ``a`` such that drone ``i``'s run ``a … b`` can be straightened (``a + 1``
    where none can): galloping then bisection over ``b``, a few window checks per run."""
    last = positions.shape[1] - 1

    def straightens(b: int) -> bool:
        needed = max(MARGIN_SHARE * min(float(margins[i, a:b].min()), MARGIN_CAP), 0.0)  # never into an obstacle
        return bool(_margins(fields, i, positions[i, a][None], positions[i, b][None])[0] >= needed) and \
            _run_clear(positions, boxes, clearance, i, a, b)

    good, stride = a + 1, 1
    bad = a + 2
    while bad <= last and straightens(bad):
        good, stride = bad, 2 * stride
        bad = good + stride
    bad = min(bad, last + 1)
    while bad - good > 1:
        middle = (good + bad) // 2
        good, bad = (middle, bad) if straightens(middle) else (good, middle)
    return good


def _run_clear(positions: np.ndarray, boxes: _RangeBoxes, clearance: ClearanceModel, i: int, a: int, b: int) -> bool:
    """Whether drone ``i`` flying straight from step ``a`` to ``b`` keeps, with every other drone
    at every step, a separation ratio of at least the smaller of the old one and :data:`PAIR_CAP`
    (and at least 1). Drones whose boxes over the run, and steps whose boxes, stay :data:`PAIR_CAP`
    pair envelopes (plus the spread of clearance-centre shifts) away from the old path's (the
    step's old and new segments') box cannot come closer than that and are not measured. Pairs are
    measured between clearance centres (:meth:`ClearanceModel.centres`)."""
    old = positions[i, a:b + 1]
    new = _straight(positions[i], a, b)  # on the chord of two old points: inside the old box
    reach = PAIR_CAP * clearance.pair_envelope + [0.0, 0.0, float(np.ptp(clearance.kind_shift))]
    low, high = old.min(axis=0) - reach, old.max(axis=0) + reach
    others_low, others_high = boxes.over(a, b)
    others = np.nonzero(np.all((others_low <= high) & (others_high >= low), axis=1))[0]
    others = others[others != i]
    if not len(others):
        return True
    window = positions[others, a:b + 1]
    # Per step, the box of the old and the new segment, widened by the reach.
    step_low = np.minimum(np.minimum(old[:-1], old[1:]), np.minimum(new[:-1], new[1:])) - reach
    step_high = np.maximum(np.maximum(old[:-1], old[1:]), np.maximum(new[:-1], new[1:])) + reach
    near = np.all((np.minimum(window[:, :-1], window[:, 1:]) <= step_high)
                  & (np.maximum(window[:, :-1], window[:, 1:]) >= step_low), axis=2)  # (M, b - a)
    m, k = np.nonzero(near)
    if not len(m):
        return True
    j = others[m]
    r = clearance.radii(np.full(len(j), i), j)
    shift = clearance.offsets[j] - clearance.offsets[i]  # the other's centre, in drone i's frame
    q0, q1 = (window[m, k] + shift) / r, (window[m, k + 1] + shift) / r
    before = _gaps(old[k] / r, old[k + 1] / r, q0, q1)
    after = _gaps(new[k] / r, new[k + 1] / r, q0, q1)
    return bool(np.all(after >= np.maximum(np.minimum(before, PAIR_CAP), 1.0)))


def _gaps(p0: np.ndarray, p1: np.ndarray, q0: np.ndarray, q1: np.ndarray) -> np.ndarray:
    on_p, on_q = segment_segment_closest(p0, p1, q0, q1)
    return np.linalg.norm(on_q - on_p, axis=1)


def _straight(path: np.ndarray, a: int, b: int) -> np.ndarray:
    """Positions ``(b - a + 1, 3)`` along the chord from ``path[a]`` to ``path[b]`` at the fractions
    of the old path's length reached at each step end."""
    walked = np.r_[0.0, np.cumsum(np.linalg.norm(np.diff(path[a:b + 1], axis=0), axis=1))]
    # Divided by the last cumulative sum itself, the end of the walk (and every wait after it) is
    # exactly 1 (a separately summed total can differ from it in the last bit).
    fraction = walked / walked[-1] if walked[-1] > 0 else np.zeros(b - a + 1)
    out = path[a] + fraction[:, None] * (path[b] - path[a])
    out[fraction >= 1.0] = path[b]  # exactly: a wait at the end stays a wait, the goal a formation point
    return out


def _straighten(positions: np.ndarray, i: int, a: int, b: int) -> bool:
    """Replace drone ``i``'s steps ``a … b`` by the chord; False where they already lie on it."""
    new = _straight(positions[i], a, b)
    if np.allclose(new, positions[i, a:b + 1], atol=1e-9):
        return False
    positions[i, a:b + 1] = new
    return True


def _step_margins(positions: np.ndarray, fields: FleetFields | None) -> np.ndarray:
    """Obstacle margins ``(N, K)`` of every step, each drone in its own field."""
    n, ends = positions.shape[:2]
    drones = np.repeat(np.arange(n), ends - 1)
    return _margins(fields, drones, positions[:, :-1].reshape(-1, 3), positions[:, 1:].reshape(-1, 3)
                    ).reshape(n, ends - 1)


def _margins(fields: FleetFields | None, drones: np.ndarray | int, a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Segment margins ``(M,)`` of ``a``–``b`` ``(M, 3)`` flown by ``drones`` (one index or ``(M,)``)."""
    if fields is None:
        return np.full(len(a), np.inf)
    return fields.segment_margins(np.broadcast_to(drones, (len(a),)), a, b)
