"""Colours: one per drone (evenly spread hues, golden-ratio steps) and a few fixed roles."""

from __future__ import annotations

import colorsys

import numpy as np

BACKGROUND = (0.09, 0.10, 0.12, 1.0)
OBSTACLE = (1.0, 1.0, 1.0, 1.0)  # the shaded shader keeps 0.2–1.0 of it, by the angle to its light
OBSTACLE_EDGE = (0.80, 0.82, 0.86, 0.55)
VOLUME = (0.35, 0.65, 0.95, 0.6)
KEEP_OUT = (0.95, 0.45, 0.25, 0.35)
FORMATION = (0.85, 0.85, 0.85, 0.9)
SELECTED = (1.0, 1.0, 1.0, 1.0)
TOO_CLOSE = (1.0, 0.25, 0.25, 1.0)
ELLIPSOID = (1.0, 0.85, 0.2, 0.25)
GROUND_GRID = (0.62, 0.68, 0.75, 0.22)
SCALE_TEXT = (0.75, 0.80, 0.86, 1.0)


def drone_colours(n: int) -> np.ndarray:
    """``(n, 4)`` RGBA in [0, 1], neighbours in fleet order clearly different."""
    hues = (np.arange(n) * 0.6180339887) % 1.0
    return np.array([(*colorsys.hsv_to_rgb(h, 0.65, 0.95), 1.0) for h in hues]).reshape(n, 4)
