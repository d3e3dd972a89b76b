"""Reading a site's obstacle meshes into world coordinates (metres, z up).

Used by the planner's clearance field and, independently, by the verifier's exact obstacle check.
"""

from __future__ import annotations

import io
import warnings
from dataclasses import dataclass
from functools import lru_cache
from pathlib import Path

import numpy as np
import trimesh

from ..errors import SceneError
from ..limits import MAX_COORDINATE_M, MAX_MESH_BYTES
from ..reading import UnreadableFile, read_bytes_limited
from .model import MeshRef, Site

#: Metres per unit of each accepted ``units`` value (exact definitions of the foot and the inch).
UNIT_METRES = {"m": 1.0, "cm": 0.01, "mm": 0.001, "ft": 0.3048, "in": 0.0254}


@dataclass(frozen=True, eq=False)
class SiteMesh:
    """One obstacle mesh placed in the site: ``mesh`` is in world metres; ``warnings`` are
    usable-but-suspicious findings (not watertight, degenerate faces)."""

    name: str
    mesh: trimesh.Trimesh
    warnings: tuple[str, ...]

    @property
    def watertight(self) -> bool:
        return bool(self.mesh.is_watertight)


def placement_matrix(ref: MeshRef) -> np.ndarray:
    """``(4, 4)`` transform: scale (units × scale), rotate about x, then y, then z (degrees), translate."""
    s = UNIT_METRES[ref.units] * ref.scale
    m = np.diag([s, s, s, 1.0])
    for axis, angle in zip(np.eye(3), ref.rotate_deg, strict=True):
        if angle:
            m = trimesh.transformations.rotation_matrix(np.radians(angle), axis) @ m
    m[:3, 3] += np.asarray(ref.translate, dtype=float)
    return m


#: Mesh file types Skyloom reads (by extension).
MESH_TYPES = ("stl", "obj", "ply", "glb", "gltf")


def load_site_meshes(site: Site, base_dir: Path, source: str = "scene") -> tuple[SiteMesh, ...]:
    """Load every ``site.meshes`` entry relative to ``base_dir``; ``source`` names the scene file.

    Raises :class:`SceneError` naming the entry (``source: site.meshes[k].file``) when a file is
    missing, too large, unreadable or has no faces. No file content is quoted.
    """
    loaded, problems = [], []
    for k, ref in enumerate(site.meshes):
        try:
            loaded.append(_load_placed(ref, Path(base_dir) / ref.file))
        except UnreadableFile as e:
            problems.append((f"{source}: site.meshes[{k}].file", f"mesh {ref.name!r} ({ref.file}): {e}"))
    if problems:
        raise SceneError(problems)
    return tuple(loaded)


def _load_placed(ref: MeshRef, path: Path) -> SiteMesh:
    """``ref`` read from ``path`` and placed; a scene is checked when it is loaded and its meshes
    are needed again to plan or verify it, so a file unchanged since (same size and modification
    time) is parsed once per process. Every user only reads the shared mesh."""
    kind = path.suffix.lower().lstrip(".")
    if kind not in MESH_TYPES:
        raise UnreadableFile(f"unsupported file type {path.suffix!r}; use one of {', '.join(MESH_TYPES)}")
    if not path.is_file():
        raise UnreadableFile("file not found")
    info = path.stat()
    return _parsed(ref, str(path.resolve()), info.st_size, info.st_mtime_ns)


@lru_cache(maxsize=32)
def _parsed(ref: MeshRef, path: str, size: int, mtime_ns: int) -> SiteMesh:
    """The mesh at ``path`` (whose size and modification time key the cache), placed by ``ref``."""
    path, kind = Path(path), Path(path).suffix.lower().lstrip(".")
    data = read_bytes_limited(path, MAX_MESH_BYTES)
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            if kind == "gltf":  # may reference buffers beside it: let trimesh resolve them from the path
                mesh = trimesh.load_mesh(str(path), process=True)
            else:
                mesh = trimesh.load_mesh(io.BytesIO(data), file_type=kind, process=True)
    except Exception as e:  # noqa: BLE001 - trimesh raises many kinds (even ImportError) for corrupt files
        raise UnreadableFile(f"not a readable {kind.upper()} mesh ({type(e).__name__})") from None
    if isinstance(mesh, trimesh.Scene):
        mesh = mesh.to_geometry() if mesh.geometry else None
    if not isinstance(mesh, trimesh.Trimesh) or len(mesh.faces) == 0:
        raise UnreadableFile("contains no triangles")
    if not np.isfinite(mesh.vertices).all():
        raise UnreadableFile("has vertices that are not finite numbers (nan or inf)")
    notes = []
    good = mesh.nondegenerate_faces()
    if not good.all():
        notes.append(f"{int((~good).sum())} degenerate faces ignored")
        mesh.update_faces(good)
        mesh.remove_unreferenced_vertices()
    mesh.apply_transform(placement_matrix(ref))
    if np.abs(mesh.vertices).max() > MAX_COORDINATE_M:
        raise UnreadableFile(f"reaches beyond ±{MAX_COORDINATE_M:g} m once placed (check units and scale)")
    if not mesh.is_watertight:
        notes.append("mesh is not watertight: only its surface is an obstacle (its inside is not known)")
    return SiteMesh(ref.name, mesh, tuple(notes))


def feature_edges(mesh: trimesh.Trimesh, angle_deg: float = 20.0) -> np.ndarray:
    """End points ``(2 E, 3)`` m of the edges worth drawing: where the two faces meet at more
    than ``angle_deg`` degrees, and open edges (one face only). A box gives its 12 edges, not the
    diagonals of its triangulation."""
    sharp = mesh.face_adjacency_edges[mesh.face_adjacency_angles > np.radians(angle_deg)]
    edges, counts = np.unique(np.sort(mesh.edges, axis=1), axis=0, return_counts=True)
    return mesh.vertices[np.concatenate([sharp.reshape(-1, 2), edges[counts == 1]])].reshape(-1, 3)
