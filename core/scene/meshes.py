"""Reading a site's obstacle meshes into world coordinates (metres, z up).

Used by the planner's clearance field and, independently, by the verifier's exact obstacle check.
"""

from __future__ import annotations

import warnings
from dataclasses import dataclass
from pathlib import Path

import numpy as np
import trimesh

from ..errors import SceneError
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


def load_site_meshes(site: Site, base_dir: Path, source: str = "<scene>") -> tuple[SiteMesh, ...]:
    """Load every ``site.meshes`` entry relative to ``base_dir``.

    Raises :class:`SceneError` naming the entry when a file is missing, unreadable or has no faces.
    """
    loaded, problems = [], []
    for k, ref in enumerate(site.meshes):
        where = f"{source}: site.meshes[{k}] ({ref.name!r})"
        try:
            loaded.append(_load_one(ref, Path(base_dir) / ref.file))
        except SceneError as e:
            problems += [(where, why) for _, why in e.problems]
    if problems:
        raise SceneError(problems)
    return tuple(loaded)


def _load_one(ref: MeshRef, path: Path) -> SiteMesh:
    if not path.is_file():
        raise SceneError([("", f"mesh file {str(path)!r} not found")])
    try:
        with warnings.catch_warnings():
            warnings.simplefilter("ignore")
            mesh = trimesh.load_mesh(str(path), process=True)
    except Exception as e:  # trimesh raises many kinds for corrupt files
        raise SceneError([("", f"cannot read mesh file {str(path)!r}: {type(e).__name__}: {e}")]) from None
    if isinstance(mesh, trimesh.Scene):
        mesh = mesh.to_geometry() if mesh.geometry else None
    if not isinstance(mesh, trimesh.Trimesh) or len(mesh.faces) == 0:
        raise SceneError([("", f"mesh file {str(path)!r} contains no triangles")])
    notes = []
    good = mesh.nondegenerate_faces()
    if not good.all():
        notes.append(f"{int((~good).sum())} degenerate faces ignored")
        mesh.update_faces(good)
        mesh.remove_unreferenced_vertices()
    mesh.apply_transform(placement_matrix(ref))
    if not mesh.is_watertight:
        notes.append("mesh is not watertight: only its surface is an obstacle (its inside is not known)")
    return SiteMesh(ref.name, mesh, tuple(notes))
