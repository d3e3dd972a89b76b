"""Reading and writing scene files (JSON, format described in the README under "Scene file")."""

from __future__ import annotations

import csv
import io
import json
import math
import os
import re
from dataclasses import replace
from pathlib import Path
from typing import Any

from pydantic import TypeAdapter, ValidationError

from ..atomic import write_text_atomic
from ..errors import SceneError
from ..limits import MAX_CSV_BYTES
from ..reading import UnreadableFile, load_json_file, read_text_limited
from .checks import check_scene
from .model import Scene

_ADAPTER = TypeAdapter(Scene)
#: Validation problems listed in one message before "and N more".
MAX_LISTED_PROBLEMS = 20


def load_scene(path: str | Path, check: bool = True) -> Scene:
    """Read, validate and check a scene file; raise :class:`SceneError` naming file, field, reason.
    ``check=False`` skips the whole-scene checks (:func:`~.checks.check_scene`: points in
    obstacles, counts, radii) but not the file's structure and types: the designer opens a scene
    saved while still being edited, and lists its problems instead of refusing it."""
    path = Path(path)
    try:
        data = load_json_file(path)
    except UnreadableFile as exc:
        raise SceneError([(path.name, str(exc))]) from None
    return scene_from_dict(data, source=path.name, base_dir=path.parent, check=check)


#: Top-level field an export writes into its ``scene.json`` (status and caution); ignored on load.
EXPORT_STAMP_FIELD = "export_status"


def scene_from_dict(data: Any, source: str = "<scene>", base_dir: Path | None = None, check: bool = True) -> Scene:
    """Build a :class:`Scene` from parsed JSON, checked unless ``check`` is False (see
    :func:`load_scene`); CSV formations are read from ``base_dir``.

    A top-level :data:`EXPORT_STAMP_FIELD` object (written by exports) is ignored.
    """
    if not isinstance(data, dict):
        raise SceneError([(source, "the top level must be a JSON object")])
    if isinstance(data.get(EXPORT_STAMP_FIELD), dict):
        data = {k: v for k, v in data.items() if k != EXPORT_STAMP_FIELD}
    base_dir = base_dir or Path(".")
    data = _with_csv_points(data, source, base_dir)
    try:
        scene = _ADAPTER.validate_python(data)
    except ValidationError as exc:
        raise SceneError(_validation_problems(exc, source)) from None
    problems = check_scene(scene, source, base_dir) if check else []
    if problems:
        raise SceneError(problems)
    return scene


def relocated(scene: Scene, old_dir: Path, new_dir: Path) -> Scene:
    """``scene`` as it must be written into ``new_dir`` when it was read from ``old_dir``: files
    it names keep working. CSV formations are written inline (their points are already in the
    scene), mesh paths are made relative to ``new_dir`` (absolute where no relative path exists,
    e.g. another drive). Unchanged when the folders are the same."""
    old_dir, new_dir = Path(old_dir).resolve(), Path(new_dir).resolve()
    if old_dir == new_dir:
        return scene
    formations = tuple(replace(f, csv=None) for f in scene.formations)
    meshes = tuple(replace(m, file=_path_from(new_dir, old_dir / m.file)) for m in scene.site.meshes)
    return replace(scene, formations=formations, site=replace(scene.site, meshes=meshes))


def _path_from(folder: Path, target: Path) -> str:
    try:
        return Path(os.path.relpath(target.resolve(), folder)).as_posix()
    except ValueError:  # another drive
        return str(target.resolve())


def scene_to_dict(scene: Scene, inline_csv: bool = False) -> dict:
    """JSON-ready dict of ``scene``. CSV-backed formations keep only their file reference, unless
    ``inline_csv`` asks for their points (for a file that must stand alone, as in an export)."""
    data = _ADAPTER.dump_python(scene, mode="json")
    for f in data["formations"]:
        if f.get("csv") and not inline_csv:
            f.pop("points"), f.pop("groups")
        else:
            f.pop("csv")
            if f.get("groups") is None:
                f.pop("groups")
    for tr in data["timeline"]["transitions"]:
        if tr.get("profile") is None:
            tr.pop("profile")  # planner.profile applies
    for t in data["fleet"]["types"]:
        if t["downwash_shift"] == 0.0:
            t.pop("downwash_shift")  # the default: a symmetric clearance
    if not data["fleet"]["pairs"]:
        data["fleet"].pop("pairs")
    return data


def save_scene(scene: Scene, path: str | Path) -> None:
    """Write ``scene`` to ``path`` atomically (CSV files it references are left as they are)."""
    write_text_atomic(path, dumps_compact(scene_to_dict(scene)))


_SCALAR = r'(?:-?[\d.eE+-]+|"[^"\\\[\]{},:]*"|true|false|null)'
_SCALAR_ARRAY = re.compile(rf"\[\s*({_SCALAR}(?:,\s*{_SCALAR})*)\s*\]")
_FLAT_OBJECT = re.compile(rf'\{{\s*("[^"]+": {_SCALAR}(?:,\s*"[^"]+": {_SCALAR})*)\s*\}}')


def dumps_compact(data: Any) -> str:
    """JSON with two-space indentation; arrays of scalars and flat objects kept on one line."""
    text = json.dumps(data, indent=2, ensure_ascii=False)
    text = _SCALAR_ARRAY.sub(lambda m: "[" + ", ".join(re.split(r",\s*", m.group(1))) + "]", text)
    text = _FLAT_OBJECT.sub(lambda m: "{" + ", ".join(re.split(r",\s*(?=\")", m.group(1))) + "}", text)
    return text + "\n"


def _validation_problems(exc: ValidationError, source: str) -> list[tuple[str, str]]:
    """One ``(location, reason)`` per innermost pydantic error (enclosing echoes are dropped)."""
    found = [(_location(e["loc"]), e["msg"].removeprefix("Value error, ")) for e in exc.errors()]
    paths = [where for where, _ in found]
    innermost = [
        (where, why) for where, why in found
        if not any(other != where and other.startswith(where) for other in paths)
    ]
    listed = [(f"{source}: {where}", why) for where, why in innermost[:MAX_LISTED_PROBLEMS]]
    if len(innermost) > MAX_LISTED_PROBLEMS:
        listed.append((source, f"... and {len(innermost) - MAX_LISTED_PROBLEMS} more problems"))
    return listed


def _location(loc: tuple) -> str:
    out = ""
    for part in loc:
        if isinstance(part, int):
            out += f"[{part}]"
        elif part.startswith(("function-", "literal[", "float", "int", "str", "tuple")):
            continue
        else:
            out += f".{part}" if out else str(part)
    return out or "(top level)"


def _with_csv_points(data: dict, source: str, base_dir: Path) -> dict:
    """Copy of ``data`` where formations with a ``csv`` reference get their points from that file."""
    formations = data.get("formations")
    if not isinstance(formations, list):
        return data
    resolved = []
    for k, f in enumerate(formations):
        if isinstance(f, dict) and isinstance(f.get("csv"), str):
            f = dict(f)
            f["points"], groups = read_formation_csv(base_dir / f["csv"], f"{source}: formations[{k}].csv")
            if groups is not None:
                f["groups"] = groups
        resolved.append(f)
    return {**data, "formations": resolved}


#: The header row a formation CSV may start with (case and spaces ignored).
CSV_HEADERS = (["x", "y", "z"], ["x", "y", "z", "group"])


def read_formation_csv(path: Path, where: str) -> tuple[list[list[float]], list[str] | None]:
    """Points from a ``.csv`` file of ``x,y,z`` (metres) with an optional 4th ``group`` column and an
    optional header row ``x,y,z`` or ``x,y,z,group``. Raises :class:`SceneError` naming the file,
    row and problem (cells are quoted only from ``.csv`` files, shortened)."""
    path = Path(path)
    if path.suffix.lower() != ".csv":
        raise SceneError([(where, f"formation file {path.name!r} must be a .csv file")])
    try:
        text = read_text_limited(path, MAX_CSV_BYTES, encoding="utf-8-sig")
    except UnreadableFile as exc:
        raise SceneError([(where, f"formation CSV {path.name}: {exc}")]) from None
    points, groups = [], []
    try:
        rows = list(csv.reader(io.StringIO(text)))
    except csv.Error as exc:
        raise SceneError([(f"{path.name}", f"not readable as CSV ({exc})")]) from None
    for row_no, row in enumerate(rows, start=1):
        if not row or all(not c.strip() for c in row):
            continue
        if not points and [c.strip().lower() for c in row] in CSV_HEADERS:
            continue  # header
        at = f"{path.name}: row {row_no}"
        if len(row) not in (3, 4):
            raise SceneError([(at, f"expected x,y,z or x,y,z,group, got {len(row)} columns")])
        try:
            xyz = [float(c) for c in row[:3]]
        except ValueError:
            shown = [c.strip()[:20] for c in row[:3]]
            raise SceneError([(at, f"x,y,z must be numbers, got {shown}")]) from None
        if not all(math.isfinite(c) for c in xyz):
            raise SceneError([(at, "x,y,z must be finite numbers (not nan or inf)")])
        points.append(xyz)
        groups.append(row[3].strip() if len(row) == 4 else None)
    if not points:
        raise SceneError([(f"{path.name}", "no points found")])
    has_groups = [g is not None for g in groups]
    if any(has_groups) and not all(has_groups):
        raise SceneError([(f"{path.name}", "either every row or no row must have a group column")])
    return points, (groups if all(has_groups) else None)
