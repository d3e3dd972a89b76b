"""Atomic file writes: readers see the old content or the new, never a half-written one."""

from __future__ import annotations

import os
import tempfile
from pathlib import Path


def write_text_atomic(path: str | os.PathLike, text: str) -> None:
    """Write ``text`` (UTF-8, ``\\n`` line ends) to ``path`` atomically (see :func:`write_bytes_atomic`)."""
    write_bytes_atomic(path, text.encode("utf-8"))


def write_bytes_atomic(path: str | os.PathLike, data: bytes) -> None:
    """Write ``data`` to ``path`` through a temporary file in the same folder and a rename."""
    path = Path(path)
    path.parent.mkdir(parents=True, exist_ok=True)
    fd, tmp = tempfile.mkstemp(prefix=f".{path.name}.", suffix=".tmp", dir=path.parent)
    try:
        with os.fdopen(fd, "wb") as f:
            f.write(data)
            f.flush()
            os.fsync(f.fileno())
        os.replace(tmp, path)
    except BaseException:
        Path(tmp).unlink(missing_ok=True)
        raise
