"""Reading user files defensively: regular files only, bounded size, bounded JSON nesting.

Each function raises :class:`UnreadableFile` with a reason that names no file content, so
callers can wrap it into the error of their stage (scene, export) with the file's name.
"""

from __future__ import annotations

import hashlib
import json
import stat
from pathlib import Path
from typing import Any

from .limits import MAX_JSON_BYTES, MAX_JSON_DEPTH


class UnreadableFile(ValueError):
    """A file that cannot be read as asked; ``str(exc)`` is the reason (no file content)."""


def read_bytes_limited(path: Path, max_bytes: int) -> bytes:
    """Bytes of the regular file ``path``, refusing devices, pipes, folders and files over ``max_bytes``."""
    try:
        info = Path(path).stat()
    except OSError as exc:
        raise UnreadableFile(f"cannot read the file ({exc.strerror or exc})") from None
    if stat.S_ISDIR(info.st_mode):
        raise UnreadableFile("is a folder, not a file")
    if not stat.S_ISREG(info.st_mode):
        raise UnreadableFile("is not a regular file (a device, pipe or socket)")
    if info.st_size > max_bytes:
        raise UnreadableFile(f"is {info.st_size / 2**20:.1f} MiB; at most {max_bytes / 2**20:.0f} MiB is read")
    try:
        with open(path, "rb") as f:
            data = f.read(max_bytes + 1)
    except OSError as exc:
        raise UnreadableFile(f"cannot read the file ({exc.strerror or exc})") from None
    if len(data) > max_bytes:
        raise UnreadableFile(f"grew past {max_bytes / 2**20:.0f} MiB while being read")
    return data


def read_text_limited(path: Path, max_bytes: int, encoding: str = "utf-8") -> str:
    """UTF-8 text of ``path`` (see :func:`read_bytes_limited`); NUL bytes and bad encodings refused."""
    data = read_bytes_limited(path, max_bytes)
    if b"\x00" in data:
        raise UnreadableFile("contains NUL bytes: it is not a text file")
    try:
        return data.decode(encoding)
    except UnicodeDecodeError as exc:
        raise UnreadableFile(f"is not UTF-8 text (byte {exc.start})") from None


def load_json_file(path: Path, max_bytes: int = MAX_JSON_BYTES) -> Any:
    """Parsed JSON of ``path``: at most ``max_bytes``, nested at most :data:`MAX_JSON_DEPTH` deep."""
    text = read_text_limited(path, max_bytes, encoding="utf-8-sig")
    try:
        data = json.loads(text)
    except json.JSONDecodeError as exc:
        raise UnreadableFile(f"line {exc.lineno}, column {exc.colno}: not valid JSON: {exc.msg}") from None
    except RecursionError:
        raise UnreadableFile(f"nested deeper than {MAX_JSON_DEPTH} levels") from None
    if json_depth(data) > MAX_JSON_DEPTH:
        raise UnreadableFile(f"nested deeper than {MAX_JSON_DEPTH} levels")
    return data


def json_depth(data: Any) -> int:
    """Nesting depth of parsed JSON (a scalar is 0, ``[1]`` is 1), without recursion."""
    deepest, stack = 0, [(data, 0)]
    while stack:
        item, depth = stack.pop()
        children = item.values() if isinstance(item, dict) else item if isinstance(item, list) else None
        if children is None:
            deepest = max(deepest, depth)
            continue
        deepest = max(deepest, depth + 1)
        stack.extend((c, depth + 1) for c in children)
    return deepest


def file_sha256(path: Path) -> str:
    """Hex SHA-256 digest of the file ``path``'s bytes (read in 1 MiB blocks)."""
    h = hashlib.sha256()
    with open(path, "rb") as f:
        for block in iter(lambda: f.read(1 << 20), b""):
            h.update(block)
    return h.hexdigest()
