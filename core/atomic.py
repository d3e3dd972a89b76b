"""Atomic file and folder writes: readers see the old content or the new, never a half-written one."""

from __future__ import annotations

import os
import shutil
import tempfile
from collections.abc import Iterator
from contextlib import contextmanager
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


@contextmanager
def staged_folder(target: str | os.PathLike) -> Iterator[Path]:
    """Yield an empty staging folder beside ``target``; on success it replaces ``target`` whole.

    If the body raises, the staging folder is removed and ``target`` keeps its earlier content.
    """
    target = Path(target).resolve()
    target.parent.mkdir(parents=True, exist_ok=True)
    stage = Path(tempfile.mkdtemp(prefix=f".{target.name}.staging-", dir=target.parent))
    try:
        yield stage
    except BaseException:
        shutil.rmtree(stage, ignore_errors=True)
        raise
    old = None
    if target.exists():
        old = Path(tempfile.mkdtemp(prefix=f".{target.name}.old-", dir=target.parent))
        os.replace(target, old / "previous")
    os.replace(stage, target)
    if old is not None:
        shutil.rmtree(old, ignore_errors=True)
