"""The planner's clearance field: "does the clearance ellipsoid centred at p touch an obstacle, and
how much margin is left?" for many points and segments at once.

Everything is measured in coordinates scaled by the ellipsoid's half-axes, where the ellipsoid is
the unit ball; a *margin* is then "scaled distance to the nearest obstacle − 1" (≥ 0: free), a
conservative lower bound (see :mod:`core.obstacles.voxels` for the mesh error bound). Obstacles are
the site's meshes, its keep-out boxes and the flight volume's faces (which drone centres may touch).

Each mesh is split into groups of connected parts whose padded bounding boxes overlap, and each
group gets its own voxel grid, so building the field costs in proportion to the space around the
obstacles, not to the bounding box of a spread-out mesh (sixteen pillars are sixteen small grids).

Where a grid's bound is too pessimistic to decide — a margin below 0 that the true distance could
still lift above 0 — the exact distance to that mesh is measured instead (trimesh's closest-point
query on the scaled mesh). That is the field's fine resolution, spent only in narrow places: a
window a quarter of a metre wider than the drone would otherwise look shut.
"""

from __future__ import annotations

import hashlib
from collections.abc import Sequence

import numpy as np
import trimesh
from scipy import sparse
from scipy.sparse import csgraph

from ..scene.checks import box_distance_ratio
from ..scene.meshes import SiteMesh
from .voxels import MeshDistanceGrid

#: Default voxel pitch in scaled units (fractions of the clearance radius).
DEFAULT_PITCH = 0.2
#: Sample spacing (scaled units) when a segment's margin is re-measured with exact distances.
EXACT_SPACING = 0.2


class ClearanceField:
    """Conservative clearance margins for one clearance ellipsoid ``semi_axes`` ``(3,)`` (metres).

    meshes : placed site meshes; flight_volume : ``(2, 3)`` box for drone centres; keep_out :
    ``(2, 3)`` boxes; pitch : voxel size in scaled units.
    """

    def __init__(self, semi_axes: np.ndarray, meshes: Sequence[SiteMesh], flight_volume: np.ndarray,
                 keep_out: Sequence[np.ndarray] = (), pitch: float = DEFAULT_PITCH):
        self.semi_axes = np.asarray(semi_axes, dtype=float)
        self.flight_volume = np.asarray(flight_volume, dtype=float)
        self.keep_out = [np.asarray(b, dtype=float) for b in keep_out]
        self.mesh_names = tuple(m.name for m in meshes)
        self.mesh_digests = tuple(_digest(m) for m in meshes)
        pad = 2.0 + 2 * pitch
        #: Per mesh, the grids of its groups of parts (see the module docstring).
        self.mesh_grids: list[list[MeshDistanceGrid]] = []
        for m in meshes:
            vertices = m.mesh.vertices / self.semi_axes
            self.mesh_grids.append([MeshDistanceGrid(vertices, faces, pitch, pad=pad, solid=m.watertight)
                                    for faces in _grid_groups(vertices, m.mesh.faces, m.mesh.face_adjacency, pad)])
        self.grids = [g for grids in self.mesh_grids for g in grids]
        self._grid_boxes = [_GridBoxes(grids) if grids else None for grids in self.mesh_grids]
        self._scaled_meshes = [(m.mesh.vertices / self.semi_axes, m.mesh.faces) for m in meshes]
        self._exact: dict[int, trimesh.proximity.ProximityQuery] = {}
        self.error_bound = max((g.error for g in self.grids), default=0.0)

    def __getstate__(self) -> dict:
        state = dict(self.__dict__)
        state["_exact"] = {}  # rebuilt on first need (its trees do not pickle well)
        return state

    def margins(self, points: np.ndarray) -> np.ndarray:
        """Conservative margin ``(M,)`` of points ``(M, 3)`` in metres (scaled units out; < 0: collision)."""
        return self.margin_parts(points).min(axis=0)

    def margin_parts(self, points: np.ndarray, exact: bool = True) -> np.ndarray:
        """Margins ``(1 + boxes + meshes, M)``: flight volume, each keep-out box, each mesh. With
        ``exact``, undecided mesh margins (see the module docstring) are measured exactly."""
        points = np.atleast_2d(points)
        scaled = points / self.semi_axes
        lo, hi = self.flight_volume / self.semi_axes
        parts = [np.minimum(scaled - lo, hi - scaled).min(axis=1)]
        parts += [box_distance_ratio(points, box, self.semi_axes) - 1.0 for box in self.keep_out]
        for k, grids in enumerate(self.mesh_grids):
            bound = _lower_bound_over(self._grid_boxes[k], scaled) - 1.0 if grids else np.full(len(points), np.inf)
            if exact and grids:
                # Undecided: the bound is < 0 but within the grids' two-sided error of 0, and > −1,
                # so the point is outside the mesh (inside a watertight mesh the bound is ≤ −1).
                error = max(g.error for g in grids)
                undecided = np.nonzero((bound < 0) & (bound > max(-1.0, -2.0 * error)))[0]
                if len(undecided):
                    bound = bound.copy()
                    bound[undecided] = self._exact_distance(k, scaled[undecided]) - 1.0
            parts.append(bound)
        return np.stack(parts)

    def _exact_distance(self, mesh: int, scaled: np.ndarray) -> np.ndarray:
        """Exact distances ``(M,)`` from scaled points ``(M, 3)`` to mesh ``mesh``'s surface."""
        query = self._exact.get(mesh)
        if query is None:
            vertices, faces = self._scaled_meshes[mesh]
            query = self._exact[mesh] = trimesh.proximity.ProximityQuery(
                trimesh.Trimesh(vertices, faces, process=False))
        return query.on_surface(scaled)[1]

    def blocking(self, points: np.ndarray) -> list[str]:
        """Names of what each point ``(M, 3)`` collides with ('' where free): volume, box or mesh."""
        names = ["flight volume"] + [f"keep-out box {k}" for k in range(len(self.keep_out))] \
            + [f"mesh {n!r}" for n in self.mesh_names]
        parts = self.margin_parts(points)
        worst = parts.argmin(axis=0)
        return [names[w] if parts[w, k] < 0 else "" for k, w in enumerate(worst)]

    def segments_clear(self, a: np.ndarray, b: np.ndarray, spacing: float | None = None) -> np.ndarray:
        """Whether each segment ``a``–``b`` (``(M, 3)`` metres) keeps a clearance margin ≥ 0 everywhere.

        The flight volume is convex, so both ends inside it suffice; boxes and meshes use
        :meth:`segment_margins`.
        """
        a, b = np.atleast_2d(a), np.atleast_2d(b)
        lo, hi = self.flight_volume
        inside = np.all((a >= lo) & (a <= hi) & (b >= lo) & (b <= hi), axis=1)
        return inside & (self.segment_margins(a, b, spacing) >= 0)

    def segment_margins(self, a: np.ndarray, b: np.ndarray, spacing: float | None = None) -> np.ndarray:
        """Lower bound ``(M,)`` on the margin to keep-out boxes and meshes along segments ``a``–``b``
        (``(M, 3)`` metres; scaled units out, ``inf`` without such obstacles).

        Points every ``spacing`` scaled units (default: the voxel pitch); margins are 1-Lipschitz in
        scaled coordinates, so every point of the segment has at least the smallest sample margin
        minus half a sample spacing. Segments this leaves below 0 but possibly clear are measured
        again every :data:`EXACT_SPACING` with exact distances where the grids cannot decide.
        """
        a, b = np.atleast_2d(a), np.atleast_2d(b)
        if not self.keep_out and not self.grids:
            return np.full(len(a), np.inf)
        spacing = spacing or (self.grids[0].pitch if self.grids else DEFAULT_PITCH)
        out = self._sampled_margins(a, b, spacing, exact=False)
        if self.grids:
            worst = 2.0 * self.error_bound + 0.5 * spacing
            again = np.nonzero((out < 0) & (out > -worst))[0]
            if len(again):
                out[again] = np.maximum(out[again], self._sampled_margins(a[again], b[again], EXACT_SPACING,
                                                                          exact=True))
        return out

    def _sampled_margins(self, a: np.ndarray, b: np.ndarray, spacing: float, exact: bool) -> np.ndarray:
        length = np.linalg.norm((b - a) / self.semi_axes, axis=1)
        n = np.maximum(np.ceil(length / spacing).astype(np.int64), 1)
        row = np.repeat(np.arange(len(a)), n + 1)
        offsets = np.cumsum(np.r_[0, n[:-1] + 1])
        frac = (np.arange(len(row)) - offsets[row]) / n[row]
        points = a[row] + frac[:, None] * (b - a)[row]
        bound = self.margin_parts(points, exact)[1:].min(axis=0) - 0.5 * (length[row] / n[row])
        return np.minimum.reduceat(bound, offsets)


#: Grid count × point count handled in one array when a mesh's grids are queried together.
QUERY_BLOCK = 1 << 20


class _GridBoxes:
    """One mesh's grids with their boxes stacked once (for :func:`_lower_bound_over`): mesh boxes
    ``bounds`` ``(2, G, 3)`` and grid extents ``low``, ``high`` ``(G, 3)``, scaled units."""

    def __init__(self, grids: list[MeshDistanceGrid]):
        self.grids = grids
        self.bounds = np.stack([g.bounds for g in grids], axis=1)
        self.low = np.stack([g.origin for g in grids])
        self.high = self.low + np.array([g.shape for g in grids]) * np.array([g.pitch for g in grids])[:, None]


def _lower_bound_over(boxes: _GridBoxes, points: np.ndarray) -> np.ndarray:
    """``min`` over a mesh's grids of their lower bounds ``(M,)`` for scaled ``points`` ``(M, 3)``,
    as :meth:`MeshDistanceGrid.lower_bound` gives them, without asking every grid about every
    point: the distances to all grids' boxes come in one array, and only the grids with points
    near their extent look those points up."""
    out = np.full(len(points), np.inf)
    block = max(1, QUERY_BLOCK // max(len(points), 1))
    p = points[:, None, :]
    for first in range(0, len(boxes.grids), block):
        part = slice(first, first + block)
        distance = box_distance_ratio(p, boxes.bounds[:, part], np.ones(3))  # (M, g): the bound outside a grid
        # Slack of one scaled unit: the grid's own index test decides near its extent's faces.
        near = np.all((p >= boxes.low[part] - 1.0) & (p <= boxes.high[part] + 1.0), axis=-1)
        for g in np.nonzero(near.any(axis=0))[0]:
            rows = np.nonzero(near[:, g])[0]
            distance[rows, g] = boxes.grids[first + g].lower_bound(points[rows])
        out = np.minimum(out, distance.min(axis=1))
    return out


#: Meshes with more connected parts than this get one grid (grouping them would cost more than it saves).
MAX_GRID_PARTS = 2000


def _grid_groups(vertices: np.ndarray, faces: np.ndarray, adjacency: np.ndarray, pad: float) -> list[np.ndarray]:
    """The mesh's faces ``(F, 3)`` split into groups of connected parts whose bounding boxes, grown
    by ``pad``, overlap (directly or through other parts); each group gets one voxel grid.
    ``vertices`` ``(V, 3)`` scaled."""
    if not len(faces):
        return []
    count, labels = csgraph.connected_components(sparse.coo_matrix(
        (np.ones(len(adjacency)), (adjacency[:, 0], adjacency[:, 1])), shape=(len(faces), len(faces))), directed=False)
    if count == 1 or count > MAX_GRID_PARTS:
        return [faces]
    corners = vertices[faces]
    lo = np.full((count, 3), np.inf)
    hi = np.full((count, 3), -np.inf)
    np.minimum.at(lo, labels, corners.min(axis=1))
    np.maximum.at(hi, labels, corners.max(axis=1))
    overlap = np.all((lo[:, None] - pad <= hi[None] + pad) & (lo[None] - pad <= hi[:, None] + pad), axis=2)
    _, group = csgraph.connected_components(sparse.csr_matrix(overlap), directed=False)
    return [faces[group[labels] == g] for g in range(group.max() + 1)]


def _digest(mesh: SiteMesh) -> str:
    """Hash of a placed mesh's geometry (for cache keys)."""
    h = hashlib.sha256(np.ascontiguousarray(mesh.mesh.vertices, dtype=np.float64).tobytes())
    h.update(np.ascontiguousarray(mesh.mesh.faces, dtype=np.int64).tobytes())
    h.update(b"solid" if mesh.watertight else b"surface")
    return h.hexdigest()
