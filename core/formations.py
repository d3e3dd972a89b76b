"""Formation generators: point sets in metres, shape ``(n, 3)``, ``z`` up."""

from __future__ import annotations

import numpy as np


def grid(n: int, spacing_x: float, spacing_y: float | None = None, origin=(0.0, 0.0, 0.0),
         columns: int | None = None) -> np.ndarray:
    """``n`` points on a horizontal grid, row by row from ``origin``, ``columns`` per row
    (default: as square as possible)."""
    spacing_y = spacing_x if spacing_y is None else spacing_y
    columns = columns or int(np.ceil(np.sqrt(n)))
    k = np.arange(n)
    offsets = np.c_[(k % columns) * spacing_x, (k // columns) * spacing_y, np.zeros(n)]
    return np.asarray(origin, dtype=np.float64) + offsets


def ring(n: int, radius: float, center=(0.0, 0.0, 0.0), phase: float = 0.0) -> np.ndarray:
    """``n`` points evenly on a horizontal circle of ``radius`` metres around ``center``."""
    a = phase + 2 * np.pi * np.arange(n) / n
    return np.asarray(center, dtype=np.float64) + radius * np.c_[np.cos(a), np.sin(a), np.zeros(n)]


def line(n: int, start, end) -> np.ndarray:
    """``n`` points evenly from ``start`` to ``end`` (both included; one point sits at ``start``)."""
    s = np.linspace(0.0, 1.0, n) if n > 1 else np.zeros(1)
    start, end = np.asarray(start, dtype=np.float64), np.asarray(end, dtype=np.float64)
    return start + s[:, None] * (end - start)


def sphere(n: int, radius: float, center=(0.0, 0.0, 0.0)) -> np.ndarray:
    """``n`` nearly even points on a sphere (golden-angle spiral)."""
    i = np.arange(n) + 0.5
    polar = np.arccos(1 - 2 * i / n)
    azimuth = np.pi * (1 + 5**0.5) * i
    unit = np.c_[np.cos(azimuth) * np.sin(polar), np.sin(azimuth) * np.sin(polar), np.cos(polar)]
    return np.asarray(center, dtype=np.float64) + radius * unit
