"""One clearance field per drone shape, asked per drone: a light scout's field sees a gap that the
heavy camera drone's field closes (mixed fleets fly each drone against its own shape)."""

from __future__ import annotations

import copy
import time
from collections.abc import Callable

import numpy as np

from .field import ClearanceField


class FleetFields:
    """Per-drone access to the fields of the fleet's distinct clearance shapes.

    shapes : ``(S, 3)`` distinct half-axes (metres); shape_of : ``(N,)`` each drone's row in
    ``shapes``; build : makes the field of one shape (called on first need, then kept); seconds :
    where the build time is added up (under ``"obstacle field"``).
    """

    def __init__(self, shapes: np.ndarray, shape_of: np.ndarray, build: Callable[[np.ndarray], ClearanceField],
                 seconds: dict[str, float]):
        self.shapes, self.shape_of = np.asarray(shapes, dtype=np.float64), np.asarray(shape_of)
        self._build = build
        self._fields: dict[int, ClearanceField] = {}
        self.seconds = seconds

    @classmethod
    def uniform(cls, field: ClearanceField, drones: int) -> FleetFields:
        """Every one of ``drones`` drones flies against the one built ``field`` (a fleet of one shape)."""
        fields = cls(field.semi_axes[None], np.zeros(drones, dtype=np.int64), lambda axes: field, {})
        fields._fields[0] = field
        return fields

    def sharing(self, seconds: dict[str, float]) -> FleetFields:
        """A view of the same fields (built ones and later ones alike) adding build times to ``seconds``."""
        other = copy.copy(self)
        other.seconds = seconds
        return other

    def of_shape(self, shape: int) -> ClearanceField:
        """The field of shape row ``shape``."""
        if shape not in self._fields:
            t0 = time.perf_counter()
            self._fields[shape] = self._build(self.shapes[shape])
            self.seconds["obstacle field"] = self.seconds.get("obstacle field", 0.0) + time.perf_counter() - t0
        return self._fields[shape]

    def of_drone(self, drone: int) -> ClearanceField:
        return self.of_shape(int(self.shape_of[drone]))

    def _per_shape(self, drones: np.ndarray, ask: Callable[[ClearanceField, np.ndarray], np.ndarray],
                   fill: float | bool) -> np.ndarray:
        drones = np.asarray(drones)
        out = np.full(len(drones), fill)
        for shape in np.unique(self.shape_of[drones]):
            rows = np.nonzero(self.shape_of[drones] == shape)[0]
            out[rows] = ask(self.of_shape(int(shape)), rows)
        return out

    def segment_margins(self, drones: np.ndarray, a: np.ndarray, b: np.ndarray) -> np.ndarray:
        """:meth:`ClearanceField.segment_margins` ``(M,)`` of segments ``a``–``b`` ``(M, 3)`` flown
        by ``drones`` ``(M,)``, each in its own shape's scaled units."""
        return self._per_shape(drones, lambda f, rows: f.segment_margins(a[rows], b[rows]), np.inf)

    def segments_clear(self, drones: np.ndarray, a: np.ndarray, b: np.ndarray) -> np.ndarray:
        """:meth:`ClearanceField.segments_clear` ``(M,)`` for segments flown by ``drones`` ``(M,)``."""
        return self._per_shape(drones, lambda f, rows: f.segments_clear(a[rows], b[rows]), True).astype(bool)
