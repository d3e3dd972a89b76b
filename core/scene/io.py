"""Reading and writing scene files (JSON, format described in the README under "Scene file")."""

from __future__ import annotations

import csv
import io
import json
import re
from pathlib import Path
from typing import Any

from pydantic import TypeAdapter, ValidationError

from ..atomic import write_text_atomic
from ..errors import SceneError
from .checks import check_scene
from .model import Scene

_ADAPTER = TypeAdapter(Scene)


def load_scene(path: str | Path) -> Scene:
    """Read, validate and check a scene file; raise :class:`SceneError` naming file, field, reason."""
    path = Path(path)
    try:
        text = path.read_text(encoding="utf-8")
    except (OSError, UnicodeDecodeError) as exc:
        raise SceneError([(str(path), f"cannot read the file ({exc})")]) from None
    try:
        data = json.loads(text)
    except json.JSONDecodeError as exc:
        raise SceneError([(f"{path}: line {exc.lineno}, column {exc.colno}", f"not valid JSON: {exc.msg}")]) from None
    return scene_from_dict(data, source=path.name, base_dir=path.parent)


def scene_from_dict(data: Any, source: str = "<scene>", base_dir: Path | None = None) -> Scene:
    """Build a checked :class:`Scene` from parsed JSON; CSV formations are read from ``base_dir``."""
    if not isinstance(data, dict):
        raise SceneError([(source, "the top level must be a JSON object")])
    base_dir = base_dir or Path(".")
    data = _with_csv_points(data, source, base_dir)
    try:
        scene = _ADAPTER.validate_python(data)
    except ValidationError as exc:
        raise SceneError(_validation_problems(exc, source)) from None
    problems = check_scene(scene, source, base_dir)
    if problems:
        raise SceneError(problems)
    return scene


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
    found = [(_location(e["loc"]), e["msg"]) for e in exc.errors()]
    paths = [where for where, _ in found]
    innermost = [
        (where, why) for where, why in found
        if not any(other != where and other.startswith(where) for other in paths)
    ]
    return [(f"{source}: {where}", why) for where, why in innermost]


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


def read_formation_csv(path: Path, where: str) -> tuple[list[list[float]], list[str] | None]:
    """Points from a CSV of ``x,y,z`` (metres) with an optional 4th ``group`` column and an
    optional header row. Raises :class:`SceneError` naming the file, row and problem."""
    try:
        text = Path(path).read_text(encoding="utf-8-sig")
    except (OSError, UnicodeDecodeError) as exc:
        raise SceneError([(where, f"cannot read formation CSV {path} ({exc})")]) from None
    points, groups = [], []
    for row_no, row in enumerate(csv.reader(io.StringIO(text)), start=1):
        if not row or all(not c.strip() for c in row):
            continue
        try:
            xyz = [float(c) for c in row[:3]]
        except ValueError:
            if row_no == 1:
                continue  # header
            raise SceneError([(f"{path}: row {row_no}", f"x,y,z must be numbers, got {row[:3]}")]) from None
        if len(xyz) != 3 or len(row) > 4:
            raise SceneError([(f"{path}: row {row_no}", "expected x,y,z or x,y,z,group")])
        points.append(xyz)
        groups.append(row[3].strip() if len(row) == 4 else None)
    if not points:
        raise SceneError([(f"{path}", "no points found")])
    has_groups = [g is not None for g in groups]
    if any(has_groups) and not all(has_groups):
        raise SceneError([(f"{path}", "either every row or no row must have a group column")])
    return points, (groups if all(has_groups) else None)
