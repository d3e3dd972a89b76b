"""Bézier curve algebra on arrays of control points (pure numpy, vectorised).

Control points have shape ``(..., n + 1, D)`` for degree ``n``; the curve parameter is
``tau`` in [0, 1] and a piece of duration ``h`` seconds maps time ``t = tau * h``.
"""

from __future__ import annotations

import numpy as np
from scipy.special import comb


def bernstein_basis(degree: int, tau: np.ndarray) -> np.ndarray:
    """Bernstein basis values ``(T, degree + 1)`` at parameters ``tau`` ``(T,)`` in [0, 1]."""
    tau = np.asarray(tau, dtype=np.float64)[:, None]
    i = np.arange(degree + 1)
    return comb(degree, i) * tau**i * (1.0 - tau) ** (degree - i)


def derivative_control_points(points: np.ndarray, duration, order: int = 1) -> np.ndarray:
    """Control points of the ``order``-th time derivative, shape ``(..., n + 1 - order, D)``.

    ``duration`` is the piece length in seconds (scalar or broadcastable to ``points[..., 0, 0]``);
    each differentiation multiplies by ``degree / duration`` (units gain one ``/s``).
    """
    points = np.asarray(points, dtype=np.float64)
    h = np.asarray(duration, dtype=np.float64)[..., None, None]
    for _ in range(order):
        n = points.shape[-2] - 1
        if n == 0:
            return np.zeros(points.shape[:-2] + (1, points.shape[-1]))
        points = n * np.diff(points, axis=-2) / h
    return points


def elevate_degree(points: np.ndarray, degree: int) -> np.ndarray:
    """The same curve written with ``degree + 1`` control points (degree elevation, exact)."""
    points = np.asarray(points, dtype=np.float64)
    while points.shape[-2] - 1 < degree:
        n = points.shape[-2] - 1
        i = np.arange(1, n + 1)[:, None] / (n + 1)
        middle = i * points[..., :-1, :] + (1 - i) * points[..., 1:, :]
        points = np.concatenate([points[..., :1, :], middle, points[..., -1:, :]], axis=-2)
    return points


def bernstein_to_monomial_matrix(degree: int) -> np.ndarray:
    """Matrix ``M`` ``(n+1, n+1)`` with ``a = M @ b``: power-basis coefficients of ``tau**k`` from
    Bernstein coefficients ``b`` (``M[k, i] = C(n, k) C(k, i) (-1)**(k - i)`` for ``i <= k``)."""
    n = degree
    k = np.arange(n + 1)[:, None]
    i = np.arange(n + 1)[None, :]
    m = comb(n, k) * comb(k, i) * (-1.0) ** (k - i)
    return np.where(i <= k, m, 0.0)


def monomial_to_bernstein(coefficients: np.ndarray, degree: int) -> np.ndarray:
    """Bernstein coefficients ``(degree + 1,)`` on ``tau`` in [0, 1] of ``sum_k c_k tau**k`` with
    ``coefficients`` ``(m + 1,)``, ``m <= degree``: ``b_j = sum_{k <= j} C(j, k) / C(n, k) c_k``
    (Farin, *Curves and Surfaces for CAGD*, 2002, the power-to-Bernstein conversion)."""
    c = np.zeros(degree + 1)
    c[: len(coefficients)] = coefficients
    j = np.arange(degree + 1)[:, None]
    k = np.arange(degree + 1)[None, :]
    return np.where(k <= j, comb(j, k) / comb(degree, k), 0.0) @ c


def monomial_coefficients(points: np.ndarray, duration) -> np.ndarray:
    """Coefficients ``c[..., k, D]`` of ``p(t) = sum_k c_k t**k`` in local time ``t`` in [0, h]."""
    points = np.asarray(points, dtype=np.float64)
    n = points.shape[-2] - 1
    in_tau = np.einsum("ki,...id->...kd", bernstein_to_monomial_matrix(n), points)
    h = np.asarray(duration, dtype=np.float64)[..., None, None]
    return in_tau / h ** np.arange(n + 1)[:, None]


def split_equal_parts(points: np.ndarray, parts: int) -> np.ndarray:
    """Control points ``(..., parts, n + 1, D)`` of the curve restricted to ``parts`` equal
    sub-intervals of [0, 1] (exact, by repeated de Casteljau splits)."""
    points = np.asarray(points, dtype=np.float64)
    out = []
    rest = points
    for k in range(parts - 1):
        left, rest = _de_casteljau_split(rest, 1.0 / (parts - k))
        out.append(left)
    out.append(rest)
    return np.stack(out, axis=-3)


def _de_casteljau_split(points: np.ndarray, t: float) -> tuple[np.ndarray, np.ndarray]:
    """Left and right control points of a Bézier curve split at parameter ``t``."""
    left, right = [points[..., 0, :]], [points[..., -1, :]]
    level = points
    while level.shape[-2] > 1:
        level = (1 - t) * level[..., :-1, :] + t * level[..., 1:, :]
        left.append(level[..., 0, :])
        right.append(level[..., -1, :])
    return np.stack(left, axis=-2), np.stack(right[::-1], axis=-2)
