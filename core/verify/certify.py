"""Continuous-time certification of sampled margins by bisection with a Lipschitz bound.

A margin ``m(t)`` (positive = safe) whose rate of change is at most ``L`` is proven non-negative
on ``[c - h, c + h]`` when ``m(c) - L h >= 0``. Intervals that are neither proven nor caught with
``m(c) < 0`` are halved until ``h`` falls below ``min_half``; what is still unproven then counts
as a violation (the check errs on the unsafe side only, never on the safe side).
"""

from __future__ import annotations

from collections.abc import Callable
from dataclasses import dataclass

import numpy as np

from ..progress import CancelToken

SAFE, VIOLATED, UNPROVEN = 0, 1, 2


@dataclass(frozen=True)
class Certificate:
    """Per row: ``status`` (SAFE/VIOLATED/UNPROVEN), ``worst_margin`` (smallest margin sampled),
    ``worst_time`` (s) where it was sampled; ``evaluations``: margin evaluations spent."""

    status: np.ndarray
    worst_margin: np.ndarray
    worst_time: np.ndarray
    evaluations: int


def certify(margin: Callable[[np.ndarray, np.ndarray], np.ndarray], lipschitz: np.ndarray,
            t_lo: np.ndarray, t_hi: np.ndarray, *, min_half: float = 1e-5,
            cancel: CancelToken | None = None) -> Certificate:
    """Prove ``margin(row, t) >= 0`` on each row's interval ``[t_lo, t_hi]`` (seconds).

    margin : called with row indices ``(K,)`` and times ``(K,)``, returns margins ``(K,)``
    lipschitz : ``(M,)`` bound on ``|dm/dt|`` per row
    """
    lipschitz = np.asarray(lipschitz, dtype=np.float64)
    m = len(lipschitz)
    status = np.full(m, SAFE, dtype=np.int8)
    worst = np.full(m, np.inf)
    worst_t = np.asarray(t_lo, dtype=np.float64).copy()
    rows = np.arange(m)
    centre = 0.5 * (np.asarray(t_lo) + np.asarray(t_hi))
    half = 0.5 * (np.asarray(t_hi) - np.asarray(t_lo))
    evaluations = 0
    while len(rows):
        if cancel is not None:
            cancel.check()
        value = margin(rows, centre)
        evaluations += len(rows)
        np.minimum.at(worst, rows, value)
        better = value <= worst[rows]
        worst_t[rows[better]] = centre[better]
        caught = value < 0
        status[rows[caught]] = VIOLATED
        open_ = ~caught & (value - lipschitz[rows] * half < 0) & (status[rows] == SAFE)
        tiny = open_ & (half < min_half)
        status[rows[tiny]] = UNPROVEN
        split = open_ & ~tiny
        rows, centre, half = rows[split], centre[split], half[split] / 2
        rows = np.repeat(rows, 2)
        centre = np.repeat(centre, 2) + np.tile([-1.0, 1.0], len(half)) * np.repeat(half, 2)
        half = np.repeat(half, 2)
    return Certificate(status, worst, worst_t, evaluations)
