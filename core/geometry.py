"""Exact point–segment and segment–segment distances, vectorised over rows.

Used by the roadmap stages in coordinates scaled by the clearance ellipsoid, where "distance < 1"
means "the two clearance ellipsoids overlap". Zero-length segments (a drone waiting) are allowed.
"""

from __future__ import annotations

import numpy as np

_TINY = 1e-12


def point_segment_distance(p: np.ndarray, a: np.ndarray, b: np.ndarray) -> np.ndarray:
    """Distance ``(M,)`` from points ``p`` to segments ``a``–``b`` (all ``(M, 3)``)."""
    d = b - a
    dd = np.einsum("ij,ij->i", d, d)
    t = np.clip(np.einsum("ij,ij->i", p - a, d) / np.maximum(dd, _TINY), 0.0, 1.0)
    return np.linalg.norm(a + t[:, None] * d - p, axis=1)


def segment_segment_distance(p0: np.ndarray, p1: np.ndarray, q0: np.ndarray, q1: np.ndarray) -> np.ndarray:
    """Distance ``(M,)`` between segments ``p0``–``p1`` and ``q0``–``q1`` (all ``(M, 3)``)."""
    on_p, on_q = segment_segment_closest(p0, p1, q0, q1)
    return np.linalg.norm(on_p - on_q, axis=1)


def segment_segment_closest(p0: np.ndarray, p1: np.ndarray, q0: np.ndarray, q1: np.ndarray
                            ) -> tuple[np.ndarray, np.ndarray]:
    """Closest points ``(M, 3)`` on segments ``p0``–``p1`` and ``q0``–``q1`` (all ``(M, 3)``).

    Closest-point parameters by clamping (Ericson, *Real-Time Collision Detection*, 2005, §5.1.9),
    with degenerate and parallel segments handled in the same vectorised pass.
    """
    d1, d2, r = p1 - p0, q1 - q0, p0 - q0
    a = np.einsum("ij,ij->i", d1, d1)
    e = np.einsum("ij,ij->i", d2, d2)
    f = np.einsum("ij,ij->i", d2, r)
    c = np.einsum("ij,ij->i", d1, r)
    b = np.einsum("ij,ij->i", d1, d2)
    denom = a * e - b * b
    crossing = denom > _TINY * np.maximum(a * e, _TINY)
    s = np.where(crossing, np.clip((b * f - c * e) / np.where(crossing, denom, 1.0), 0.0, 1.0), 0.0)
    t = np.where(e > _TINY, (b * s + f) / np.maximum(e, _TINY), 0.0)
    # t outside [0, 1] (or q degenerate, t = 0): clamp t and recompute s for it.
    low, high = (t < 0.0) | (e <= _TINY), t > 1.0
    t = np.clip(t, 0.0, 1.0)
    s_low = np.clip(-c / np.maximum(a, _TINY), 0.0, 1.0)
    s_high = np.clip((b - c) / np.maximum(a, _TINY), 0.0, 1.0)
    s = np.where(a > _TINY, np.where(low, s_low, np.where(high, s_high, s)), 0.0)
    return p0 + s[:, None] * d1, q0 + t[:, None] * d2
