"""Where an export may be written, and putting it there without losing anything.

The rule (README, "Export folder"): an export is written into a folder that does not exist yet,
an empty folder, or an earlier Skyloom export whose every file its own ``plan.json`` lists.
Anything else — a file, a folder holding other files, the folder of the scene being planned — is
refused with what to do instead, and nothing is touched.

The new export is built in a staging folder beside the target and swapped in only once complete;
the earlier export is then removed file by file (only the files its manifest lists). Writers of
one parent folder are serialised by an advisory lock on that folder, so two exports to one target
never race. Staging and swap folders left by a killed run are recognised by name and removed by
the next export into the same place.
"""

from __future__ import annotations

import os
import re
import secrets
import shutil
import signal
import time
from collections.abc import Iterator, Sequence
from contextlib import contextmanager, suppress
from pathlib import Path

from .. import lifecycle
from ..errors import ExportError
from ..reading import UnreadableFile, load_json_file
from .documents import EXPORT_FORMAT

try:  # advisory locks exist on POSIX systems; elsewhere writers are not serialised
    import fcntl
except ImportError:  # pragma: no cover - not on Linux or macOS
    fcntl = None

MANIFEST = "plan.json"
#: How long a second writer waits for the first one before it is refused (s).
LOCK_WAIT_S = 60.0
_STAGING, _RETIRED = "skyloom-staging", "skyloom-old"


def fresh_folder(parent: Path, stem: str) -> Path:
    """``parent/<stem>_export``, or ``_export_2``, ``_3``… : the first name not taken yet."""
    for k in range(1, 10_000):
        candidate = Path(parent) / (f"{stem}_export" + (f"_{k}" if k > 1 else ""))
        if not candidate.exists() and not candidate.is_symlink():
            return candidate
    raise ExportError(f"{parent}: no free export folder name for {stem!r}")


def export_manifest_files(folder: Path) -> set[str] | None:
    """Relative paths (POSIX) that the Skyloom export in ``folder`` says it wrote, ``plan.json``
    included; None when ``folder`` holds no readable Skyloom manifest."""
    try:
        manifest = load_json_file(folder / MANIFEST)
    except UnreadableFile:
        return None
    if not isinstance(manifest, dict) or manifest.get("format") != EXPORT_FORMAT:
        return None
    files = manifest.get("files")
    if not isinstance(files, list) or not all(isinstance(f, str) for f in files):
        return None
    return {*files, MANIFEST}


def _entries(folder: Path) -> tuple[list[str], list[str]]:
    """Relative POSIX paths of the regular files, and of everything else that is not a folder
    (links, devices), below ``folder``; links are not followed."""
    files, others = [], []
    for root, dirs, names in os.walk(folder, followlinks=False):
        rel = Path(root).relative_to(folder)
        for d in list(dirs):
            if (Path(root) / d).is_symlink():
                others.append((rel / d).as_posix())
                dirs.remove(d)
        for n in names:
            p = Path(root) / n
            (files if p.is_file() and not p.is_symlink() else others).append((rel / n).as_posix())
    return files, others


def _named(paths: Sequence[str]) -> str:
    shown = ", ".join(repr(p) for p in sorted(paths)[:3])
    return shown + (f" and {len(paths) - 3} more" if len(paths) > 3 else "")


def inspect_target(target: Path, protected: Sequence[Path] = ()) -> set[str] | None:
    """What replacing ``target`` would remove: None when it does not exist, else the files of the
    empty folder or earlier export there (relative paths). Raises :class:`ExportError` saying why
    and what to do when ``target`` may not be replaced, or lies above any ``protected`` file."""
    advice = "choose a folder name that does not exist yet (or an earlier Skyloom export)"
    for p in protected:
        p = Path(p).resolve()
        if p == target or target in p.parents:
            raise ExportError(f"--out {target}: would replace a folder holding {p.name}, an input of this plan; "
                              f"{advice}")
    if target.is_symlink():
        raise ExportError(f"--out {target}: is a symbolic link; {advice}")
    if not target.exists():
        return None
    if not target.is_dir():
        raise ExportError(f"--out {target}: is a file that Skyloom did not write; {advice}")
    files, others = _entries(target)
    if others:
        raise ExportError(f"--out {target}: holds links or special files ({_named(others)}); {advice}")
    if not files:
        return set()
    listed = export_manifest_files(target)
    if listed is None:
        raise ExportError(f"--out {target}: holds {len(files)} file(s) that Skyloom did not write "
                          f"({_named(files)}); Skyloom replaces only an empty folder or an earlier Skyloom "
                          f"export; {advice}")
    foreign = [f for f in files if f not in listed]
    if foreign:
        raise ExportError(f"--out {target}: is an earlier Skyloom export, but also holds files it did not write "
                          f"({_named(foreign)}); move them out first, or {advice}")
    return set(files)


@contextmanager
def _parent_lock(parent: Path) -> Iterator[None]:
    """Exclusive advisory lock on the folder ``parent`` (released when the process ends, however)."""
    if fcntl is None:
        yield
        return
    fd = os.open(parent, os.O_RDONLY)
    try:
        deadline = time.monotonic() + LOCK_WAIT_S
        while True:
            try:
                fcntl.flock(fd, fcntl.LOCK_EX | fcntl.LOCK_NB)
                break
            except BlockingIOError:
                if time.monotonic() > deadline:
                    raise ExportError(f"another Skyloom export into {parent} has been running for over "
                                      f"{LOCK_WAIT_S:.0f} s; try again once it has finished") from None
                time.sleep(0.05)
        yield
    finally:
        os.close(fd)  # closing the descriptor releases the lock


def _remove_listed(folder: Path, files: set[str]) -> bool:
    """Delete ``files`` (relative paths) from ``folder``, then its emptied sub-folders and itself;
    True when ``folder`` is gone (anything else found there is left alone)."""
    for rel in files:
        (folder / rel).unlink(missing_ok=True)
    for root, _dirs, _names in sorted(os.walk(folder), key=lambda w: -len(w[0])):
        with suppress(OSError):  # not empty: something Skyloom did not list stays
            os.rmdir(root)
    return not folder.exists()


def _sweep_leftovers(parent: Path, name: str) -> list[str]:
    """Remove staging and swap folders of ``name`` left in ``parent`` by a killed run; warnings
    for any that hold files Skyloom did not write (those are kept)."""
    pattern = re.compile(rf"\.{re.escape(name)}\.({_STAGING}|{_RETIRED})-[0-9a-f]+")
    warnings = []
    for entry in parent.iterdir():
        found = pattern.fullmatch(entry.name)
        if not found or entry.is_symlink() or not entry.is_dir():
            continue
        if found.group(1) == _STAGING:
            shutil.rmtree(entry, ignore_errors=True)  # only ever holds what an export was writing
            continue
        listed = export_manifest_files(entry) or set()
        if not _remove_listed(entry, listed):
            warnings.append(f"kept {entry}: a folder an earlier export moved aside, holding files it did not write")
    return warnings


def _swap_in(stage: Path, target: Path, previous: set[str] | None) -> list[str]:
    """Move ``stage`` to ``target``; an earlier export there is moved aside first and then removed
    file by file. Interrupting signals wait until both renames are done."""
    retired = None
    old_mask = signal.pthread_sigmask(signal.SIG_BLOCK, {signal.SIGINT, signal.SIGTERM})
    try:
        if previous is not None:
            retired = target.with_name(f".{target.name}.{_RETIRED}-{secrets.token_hex(6)}")
            os.rename(target, retired)
        try:
            os.rename(stage, target)
        except OSError:
            if retired is not None:
                os.rename(retired, target)
            raise
    finally:
        signal.pthread_sigmask(signal.SIG_SETMASK, old_mask)
    if retired is not None and not _remove_listed(retired, previous):
        return [f"kept {retired}: files appeared in the earlier export while the new one was written"]
    return []


@contextmanager
def export_folder(target: str | os.PathLike, protected: Sequence[Path] = ()) -> Iterator[tuple[Path, list[str]]]:
    """Yield an empty staging folder beside ``target`` and a list that collects warnings; when the
    body returns, the staging folder becomes ``target`` (see the module rule). Raises
    :class:`ExportError` before anything is written when ``target`` may not be replaced or its
    folder cannot be written; if the body raises, the staging folder is removed and ``target``
    is left as it was."""
    target = Path(os.path.abspath(target))
    parent = target.parent
    try:
        parent.mkdir(parents=True, exist_ok=True)
    except OSError as exc:
        raise ExportError(f"--out {target}: cannot create the folder {parent} ({exc.strerror or exc}); "
                          "is part of that path a file, or read-only?") from None
    with _parent_lock(parent):
        warnings = _sweep_leftovers(parent, target.name)
        inspect_target(target, protected)
        try:
            stage = parent / f".{target.name}.{_STAGING}-{secrets.token_hex(6)}"
            stage.mkdir()
        except OSError as exc:
            raise ExportError(f"--out {target}: cannot write into {parent} ({exc.strerror or exc})") from None
        remove_stage = lifecycle.on_emergency_exit(lambda: shutil.rmtree(stage, ignore_errors=True))
        try:
            yield stage, warnings
            previous = inspect_target(target, protected)  # again: the body took a while
            warnings += _swap_in(stage, target, previous)
        except BaseException:
            shutil.rmtree(stage, ignore_errors=True)
            raise
        finally:
            remove_stage()
