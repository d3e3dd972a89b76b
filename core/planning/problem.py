"""What one timeline transition asks for, fixed before it is planned."""

from __future__ import annotations

from dataclasses import dataclass
from typing import Literal

import numpy as np


@dataclass(frozen=True, eq=False)
class TransitionProblem:
    """Transition ``index`` of the timeline, from formation ``source`` to ``target``.

    starts : (N, 3) m, where each drone is (drone order)
    occupied : (N,) index of the ``source`` formation point each drone holds
    goal_points : (P, 3) m, the ``target`` formation's points (the goal set)
    start_groups / goal_groups : (N,) / (P,) group labels, or None
    duration : s, or ``"fastest"``; hold : s of hovering after arrival
    profile : time law of straight-line flights (``"cruise"``, ``"min_snap"``, ``"min_jerk"``)
    """

    index: int
    source: str
    target: str
    mode: Literal["labeled", "unlabeled", "grouped"]
    starts: np.ndarray
    occupied: np.ndarray
    goal_points: np.ndarray
    start_groups: np.ndarray | None
    goal_groups: np.ndarray | None
    duration: float | Literal["fastest"]
    hold: float
    profile: str = "cruise"

    @property
    def where(self) -> str:
        """How messages name this transition."""
        return f"timeline.transitions[{self.index}] ({self.source} → {self.target})"

    def same_as(self, other: TransitionProblem) -> bool:
        """Whether ``other`` asks for exactly the same flight (so its plan can be reused)."""
        def same(a, b) -> bool:
            if a is None or b is None:
                return a is None and b is None
            return np.shape(a) == np.shape(b) and bool(np.all(np.asarray(a) == np.asarray(b)))

        fields = ("index", "source", "target", "mode", "duration", "hold", "profile")
        return all(getattr(self, f) == getattr(other, f) for f in fields) and all(
                same(getattr(self, f), getattr(other, f))
                for f in ("starts", "occupied", "goal_points", "start_groups", "goal_groups"))
