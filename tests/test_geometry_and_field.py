"""Segment distances and the planner's clearance field against outside references."""

import numpy as np
import pytest
import trimesh
from scipy.optimize import lsq_linear

from conftest import ROOT
from core.geometry import point_segment_distance, segment_segment_distance
from core.obstacles import ClearanceField
from core.scene.meshes import SiteMesh
from core.verify.discrete import _segment_distance as enumerated_segment_distance


def _random_segments(rng, m):
    p0, p1, q0, q1 = (rng.normal(size=(m, 3)) for _ in range(4))
    p1[:20] = p0[:20]                                   # points
    q1[10:30] = q0[10:30]
    q1[40:60] = q0[40:60] + 0.6 * (p1[40:60] - p0[40:60])  # parallel
    return p0, p1, q0, q1


def test_segment_distances_match_dense_sampling_and_scipy_minimisation():
    """Reference 1: brute-force dense sampling of both segments (never below the exact minimum).
    Reference 2: scipy.optimize.lsq_linear — min |[d₁, −d₂](s, t) − (q₀ − p₀)| on [0, 1]², a bounded
    linear least-squares problem solved to optimality."""
    rng = np.random.default_rng(7)
    p0, p1, q0, q1 = _random_segments(rng, 120)
    exact = segment_segment_distance(p0, p1, q0, q1)
    s = np.linspace(0, 1, 201)
    a = p0[:, None, :] + s[None, :, None] * (p1 - p0)[:, None, :]
    b = q0[:, None, :] + s[None, :, None] * (q1 - q0)[:, None, :]
    sampled = np.linalg.norm(a[:, :, None] - b[:, None, :], axis=-1).min(axis=(1, 2))
    assert np.all(exact <= sampled + 1e-12)
    assert np.all(sampled - exact < 0.02)  # sampling step 1/200 of segments of length ≲ 4
    for k in range(len(exact)):
        matrix = np.c_[p1[k] - p0[k], q0[k] - q1[k]]
        res = lsq_linear(matrix, q0[k] - p0[k], bounds=(0.0, 1.0), method="bvls")
        assert exact[k] == pytest.approx(np.linalg.norm(matrix @ res.x - (q0[k] - p0[k])), abs=1e-9)
    # The verifier's own (enumeration) routine agrees with the planner's (clamping) one.
    np.testing.assert_allclose(enumerated_segment_distance(p0, p1, q0, q1), exact, atol=1e-9)


def test_point_segment_distance_matches_scipy_minimisation():
    """Reference: scipy.optimize.minimize_scalar (bounded) of |a + t(b − a) − p| on [0, 1]."""
    from scipy.optimize import minimize_scalar

    rng = np.random.default_rng(3)
    p, a, b = (rng.normal(size=(100, 3)) for _ in range(3))
    b[:5] = a[:5]
    exact = point_segment_distance(p, a, b)
    for k in range(100):
        res = minimize_scalar(lambda t, k=k: np.linalg.norm(a[k] + t * (b[k] - a[k]) - p[k]), bounds=(0, 1),
                              method="bounded", options={"xatol": 1e-10})
        assert exact[k] == pytest.approx(res.fun, abs=1e-6)


def _bridge() -> trimesh.Trimesh:
    return trimesh.load_mesh(ROOT / "sample_scenes" / "meshes" / "footbridge.stl")


@pytest.mark.parametrize("pitch", [0.2, 0.35])
def test_field_never_reports_free_where_trimesh_says_collision(pitch):
    """Reference: trimesh.proximity.signed_distance (exact; positive inside) on the mesh scaled by
    the clearance half-axes, so the ellipsoid touches the mesh where scaled distance < 1."""
    mesh = _bridge()
    axes = np.array([0.5, 0.5, 0.8])
    field = ClearanceField(axes, [SiteMesh("bridge", mesh, ())], np.array([[-25, -12, -2], [25, 12, 14.0]]),
                           pitch=pitch)
    rng = np.random.default_rng(11)
    near = mesh.sample(3000) + rng.normal(scale=1.0, size=(3000, 3))
    points = np.r_[near, rng.uniform([-20, -8, 0], [20, 8, 10], size=(2000, 3))]
    scaled = trimesh.Trimesh(mesh.vertices / axes, mesh.faces)
    exact_margin = -trimesh.proximity.signed_distance(scaled, points / axes) - 1.0  # < 0: collision
    mesh_margin = field.margin_parts(points)[-1]
    collide = exact_margin < 0
    assert collide.sum() > 500 and (~collide).sum() > 500  # both cases are exercised
    assert not np.any(mesh_margin[collide] >= 0), "field says free where the exact distance says collision"
    # Outside the mesh the field is pessimistic by at most its error bound plus √3·pitch.
    outside = exact_margin > -1.0
    assert np.all(exact_margin[outside] - mesh_margin[outside] >= -1e-9)
    within = outside & (exact_margin < 1.5)
    assert np.max(exact_margin[within] - mesh_margin[within]) <= field.error_bound + np.sqrt(3) * pitch + 1e-9


def test_field_segments_are_conservative_against_dense_exact_sampling():
    """A segment reported clear must have exact margin ≥ 0 at 400 points along it (trimesh)."""
    mesh = _bridge()
    axes = np.array([0.5, 0.5, 0.8])
    field = ClearanceField(axes, [SiteMesh("bridge", mesh, ())], np.array([[-25, -12, 0], [25, 12, 14.0]]))
    rng = np.random.default_rng(5)
    a = rng.uniform([-20, -8, 0.5], [20, 8, 11], size=(300, 3))
    b = a + rng.normal(scale=3.0, size=(300, 3))
    b = np.clip(b, [-25, -12, 0], [25, 12, 14])
    clear = field.segments_clear(a, b)
    assert 30 < clear.sum() < 290
    s = np.linspace(0, 1, 400)
    pts = (a[clear, None] + s[None, :, None] * (b - a)[clear, None]).reshape(-1, 3)
    scaled = trimesh.Trimesh(mesh.vertices / axes, mesh.faces)
    exact = trimesh.proximity.closest_point(scaled, pts / axes)[1]
    inside = scaled.contains(pts / axes)
    assert np.all(exact >= 1.0) and not inside.any()
