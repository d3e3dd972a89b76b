"""Cuts through the site for the designer's layout views: where the obstacle meshes and keep-out
boxes meet a horizontal or vertical plane, as line segments in that view's two coordinates."""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import trimesh

from .meshes import SiteMesh


def site_section(meshes: Sequence[SiteMesh], boxes: Sequence[np.ndarray], normal_axis: int, value: float,
                 view_axes: tuple[int, int]) -> np.ndarray:
    """Segments ``(M, 2, 2)`` metres where the plane ``x[normal_axis] = value`` cuts the placed
    ``meshes`` (their triangles, by :func:`trimesh.intersections.mesh_plane`) and the keep-out
    ``boxes`` (``(2, 3)`` each: the rectangle where the plane crosses one), in the coordinates
    ``view_axes`` of the view looking along ``normal_axis``."""
    normal = np.eye(3)[normal_axis]
    origin = normal * value
    parts = [np.empty((0, 2, 3))]
    for m in meshes:
        lo, hi = m.mesh.bounds
        if lo[normal_axis] <= value <= hi[normal_axis]:
            parts.append(np.asarray(trimesh.intersections.mesh_plane(m.mesh, normal, origin), dtype=np.float64))
    for bounds in boxes:
        if bounds[0][normal_axis] <= value <= bounds[1][normal_axis]:
            (a0, b0), (a1, b1) = bounds[:, list(view_axes)]
            corners = np.array([(a0, b0), (a1, b0), (a1, b1), (a0, b1)])
            rectangle = np.zeros((4, 2, 3))
            rectangle[:, :, list(view_axes)] = np.stack([corners, np.roll(corners, -1, axis=0)], axis=1)
            parts.append(rectangle)
    return np.concatenate(parts)[:, :, list(view_axes)]
