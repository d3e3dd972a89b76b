"""A focal list (Pearl & Kim 1982, as used by ECBS): among open entries whose admission value is
within ``w`` × the smallest open ``f``, pop the one with the smallest secondary key.

Both levels of ECBS use it: the low level admits by ``f`` itself, the high level by a node's cost
while ``f`` is its lower bound. It assumes the smallest open ``f`` never decreases (true for a
consistent heuristic at the low level and for lower bounds at the high level).
"""

from __future__ import annotations

import heapq
import itertools
from typing import Any


class FocalQueue:
    def __init__(self, w: float):
        if w < 1.0:
            raise ValueError("suboptimality factor must be ≥ 1")
        self.w = w
        self._open: list = []      # (f, id)
        self._pending: list = []   # (admission, id): not yet within the focal bound
        self._focal: list = []     # (secondary, id)
        self._entries: dict[int, tuple[float, Any, Any]] = {}
        self._ids = itertools.count()

    def __len__(self) -> int:
        return len(self._entries)

    def push(self, item: Any, f: float, secondary: Any, admission: float | None = None) -> None:
        i = next(self._ids)
        self._entries[i] = (f, secondary, item)
        heapq.heappush(self._open, (f, i))
        heapq.heappush(self._pending, (f if admission is None else admission, i))

    @property
    def f_min(self) -> float:
        while self._open and self._open[0][1] not in self._entries:
            heapq.heappop(self._open)
        return self._open[0][0] if self._open else float("inf")

    def pop(self) -> tuple[Any, float]:
        """The focal entry with the smallest secondary key, and its ``f``. Raises IndexError when empty."""
        bound = self.w * self.f_min * (1 + 1e-12) + 1e-12
        while self._pending and self._pending[0][0] <= bound:
            _, i = heapq.heappop(self._pending)
            if i in self._entries:
                heapq.heappush(self._focal, (self._entries[i][1], i))
        while self._focal:
            _, i = heapq.heappop(self._focal)
            entry = self._entries.pop(i, None)
            if entry is not None:
                return entry[2], entry[0]
        raise IndexError("focal queue is empty")
