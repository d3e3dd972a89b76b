"""Reading an export folder back (for ``skyloom check``): every document validated, every path
kept inside the folder, every problem an :class:`ExportError` naming the file and field."""

from __future__ import annotations

from dataclasses import dataclass
from pathlib import Path

from pydantic import BaseModel, ValidationError

from ..errors import ExportError, SceneError
from ..reading import UnreadableFile, load_json_file
from ..scene.io import EXPORT_STAMP_FIELD, scene_from_dict
from ..scene.model import Scene
from ..trajectory import FleetTrajectory
from .documents import EXPORT_FORMAT, ExportStatus, Manifest, TrajectoryDoc
from .target import MANIFEST
from .trajectory_json import trajectory_from_documents


@dataclass(frozen=True, eq=False)
class LoadedExport:
    """An export folder as read: its scene, fleet trajectory, manifest and per-drone documents
    (in manifest order), and the status stamp its ``scene.json`` carries (None if it has none)."""

    folder: Path
    scene: Scene
    trajectory: FleetTrajectory
    manifest: Manifest
    documents: tuple[TrajectoryDoc, ...]
    scene_stamp: ExportStatus | None


def _json(folder: Path, name: str) -> object:
    try:
        return load_json_file(folder / name)
    except UnreadableFile as exc:
        raise ExportError(f"{folder / name}: {exc}") from None


def _validated(model: type[BaseModel], data: object, where: Path) -> BaseModel:
    try:
        return model.model_validate(data)
    except ValidationError as exc:
        first = exc.errors()[0]
        field = ".".join(str(p) for p in first["loc"]) or "(top level)"
        more = f" (and {exc.error_count() - 1} more problems)" if exc.error_count() > 1 else ""
        raise ExportError(f"{where}: {field}: {first['msg']}{more}") from None


def load_export(folder: str | Path) -> LoadedExport:
    """Read ``folder``; raise :class:`ExportError` when it is not a readable Skyloom export."""
    folder = Path(folder)
    if not folder.is_dir():
        raise ExportError(f"{folder}: not a folder (give the folder 'skyloom plan --out' wrote)")
    raw = _json(folder, MANIFEST)
    if not isinstance(raw, dict) or raw.get("format") != EXPORT_FORMAT:
        found = raw.get("format") if isinstance(raw, dict) else type(raw).__name__
        raise ExportError(f"{folder / MANIFEST}: not a Skyloom plan manifest (format {found!r})")
    manifest = _validated(Manifest, raw, folder / MANIFEST)
    scene_data = _json(folder, "scene.json")
    stamp = None
    if isinstance(scene_data, dict) and EXPORT_STAMP_FIELD in scene_data:
        stamp = _validated(ExportStatus, scene_data[EXPORT_STAMP_FIELD], folder / "scene.json")
    try:
        scene = scene_from_dict(scene_data, source=str(folder / "scene.json"), base_dir=folder)
    except SceneError as exc:
        raise ExportError(str(exc)) from None
    listed = [d.id for d in manifest.drones]
    if listed != list(scene.fleet.ids):
        missing = sorted(set(scene.fleet.ids) - set(listed))
        extra = sorted(set(listed) - set(scene.fleet.ids))
        raise ExportError(f"{folder / MANIFEST}: drones: lists {len(listed)} drones but scene.json has "
                          f"{len(scene.fleet.ids)}" + (f"; missing {missing[:5]}" if missing else "")
                          + (f"; not in the scene {extra[:5]}" if extra else "")
                          + ("" if missing or extra else "; their order differs"))
    documents = tuple(_validated(TrajectoryDoc, _json(folder, d.file), folder / d.file) for d in manifest.drones)
    for entry, doc in zip(manifest.drones, documents, strict=True):
        if doc.drone != entry.id:
            raise ExportError(f"{folder / entry.file}: drone: says {doc.drone!r}, the manifest lists {entry.id!r}")
    try:
        traj = trajectory_from_documents(list(documents))
    except ValueError as exc:
        raise ExportError(f"{folder / 'trajectories'}: {exc}") from None
    return LoadedExport(folder, scene, traj, manifest, documents, stamp)
