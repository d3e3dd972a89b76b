"""Site cuts for the layout views (core/scene/sections.py): a box mesh cut by a plane gives its
cross-section's outline (total length = the rectangle's perimeter, every end point on it; plain
geometry, derived), keep-out boxes give their rectangle, planes that miss give nothing."""

import numpy as np
import trimesh

from core.scene.meshes import SiteMesh
from core.scene.sections import site_section


def _on_rectangle(points: np.ndarray, lo: np.ndarray, hi: np.ndarray) -> bool:
    inside = np.all((points >= lo - 1e-9) & (points <= hi + 1e-9), axis=1)
    on_edge = np.any(np.isclose(points, lo) | np.isclose(points, hi), axis=1)
    return bool(np.all(inside & on_edge))


def test_a_box_mesh_cut_from_above_and_from_the_side_gives_its_outline():
    block = trimesh.creation.box(bounds=[(1.0, -2.0, 0.0), (4.0, 3.0, 6.0)])
    meshes = [SiteMesh("block", block, ())]
    top = site_section(meshes, [], 2, 2.5, (0, 1))
    length = np.linalg.norm(top[:, 1] - top[:, 0], axis=1).sum()
    assert np.isclose(length, 2 * (3.0 + 5.0))
    assert _on_rectangle(top.reshape(-1, 2), np.array([1.0, -2.0]), np.array([4.0, 3.0]))
    side = site_section(meshes, [], 1, 0.5, (0, 2))
    assert np.isclose(np.linalg.norm(side[:, 1] - side[:, 0], axis=1).sum(), 2 * (3.0 + 6.0))
    assert len(site_section(meshes, [], 2, 7.0, (0, 1))) == 0  # above the block


def test_keep_out_boxes_give_their_rectangle_where_the_plane_crosses_them():
    box = np.array([[-1.0, 0.0, 0.0], [2.0, 4.0, 3.0]])
    top = site_section([], [box], 2, 1.0, (0, 1))
    assert top.shape == (4, 2, 2)
    assert np.isclose(np.linalg.norm(top[:, 1] - top[:, 0], axis=1).sum(), 2 * (3.0 + 4.0))
    assert _on_rectangle(top.reshape(-1, 2), box[0, :2], box[1, :2])
    assert len(site_section([], [box], 2, 3.5, (0, 1))) == 0
