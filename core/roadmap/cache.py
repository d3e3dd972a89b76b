"""On-disk cache of sampled roadmaps and their conflicts, keyed by everything they depend on
(site geometry, clearance shapes, roadmap settings), so re-planning a changed timeline reuses them.

Location: ``$SKYLOOM_CACHE_DIR``, else ``$XDG_CACHE_HOME/skyloom``, else ``~/.cache/skyloom``.
Files are written atomically. Each entry carries a SHA-256 checksum of its key and arrays, so a
truncated, damaged or misplaced (well-formed, but for other inputs) entry is recognised. Any
cache fault — an unreadable or inconsistent entry, a folder that cannot be written, a cache path
that is a file — means "plan without the cache" and a warning, never a failed plan.
"""

from __future__ import annotations

import hashlib
import io
import json
import zipfile
from collections.abc import Callable
from dataclasses import asdict
from pathlib import Path

import numpy as np

from ..atomic import write_bytes_atomic
from ..obstacles import ClearanceField
from ..paths import cache_dir
from .build import RoadmapSettings
from .conflicts import ConflictPairs
from .graph import Roadmap

CACHE_FORMAT = "skyloom-roadmap-cache-3"
_ARRAYS = ("vertices", "edges", "vv", "ve", "ee")


def roadmap_key(field: ClearanceField, pair_envelope: np.ndarray, settings: RoadmapSettings) -> str:
    """Hex digest of every input the roadmap depends on."""
    h = hashlib.sha256()
    h.update(json.dumps({"format": CACHE_FORMAT, "settings": asdict(settings),
                         "semi_axes": field.semi_axes.tolist(), "pair_envelope": np.asarray(pair_envelope).tolist(),
                         "volume": field.flight_volume.tolist(), "keep_out": [b.tolist() for b in field.keep_out],
                         "pitches": [g.pitch for g in field.grids]}, sort_keys=True).encode())
    for digest in field.mesh_digests:
        h.update(digest.encode())
    return h.hexdigest()[:32]


def cached_roadmap(key: str, build: Callable[[], Roadmap], use_cache: bool = True
                   ) -> tuple[Roadmap, bool, list[str]]:
    """The roadmap stored under ``key``, else ``build()`` (stored when ``use_cache``); whether it
    came from the cache; and warnings about cache faults (the plan goes on without the cache)."""
    path = cache_dir() / "roadmaps" / f"{key}.npz"
    warnings = []
    if use_cache and path.exists():
        try:
            return _read_entry(path, key), True, warnings
        except (OSError, ValueError, KeyError, EOFError, zipfile.BadZipFile) as exc:
            warnings.append(f"roadmap cache entry {path} is unusable ({exc}); rebuilt the roadmap")
    roadmap = build()
    if use_cache:
        try:
            path.parent.mkdir(parents=True, exist_ok=True)
            write_bytes_atomic(path, _entry_bytes(roadmap, key))
        except OSError as exc:
            warnings.append(f"could not store the roadmap in the cache {path.parent} ({exc.strerror or exc}); "
                            "planned without caching it")
    return roadmap, False, warnings


def _checksum(key: str, arrays: dict[str, np.ndarray]) -> str:
    h = hashlib.sha256(key.encode())
    for name in _ARRAYS:
        a = np.ascontiguousarray(arrays[name])
        h.update(f"{name}:{a.dtype.str}:{a.shape}".encode())
        h.update(a.tobytes())
    return h.hexdigest()


def _read_entry(path: Path, key: str) -> Roadmap:
    """The roadmap in ``path``; ValueError when its checksum, shapes or indices are off."""
    with np.load(path, allow_pickle=False) as z:
        arrays = {name: z[name] for name in _ARRAYS}
        stored = str(z["checksum"])
    if stored != _checksum(key, arrays):
        raise ValueError("checksum mismatch: damaged, or written for other inputs")
    vertices, edges = arrays["vertices"], arrays["edges"]
    if vertices.ndim != 2 or vertices.shape[1] != 3 or not np.isfinite(vertices).all():
        raise ValueError("vertices are not finite (V, 3) coordinates")
    n_v, n_e = len(vertices), len(edges)
    for name, bound_a, bound_b in (("edges", n_v, n_v), ("vv", n_v, n_v), ("ve", n_v, n_e), ("ee", n_e, n_e)):
        a = arrays[name]
        if a.ndim != 2 or a.shape[1] != 2 or a.dtype.kind not in "iu" or (len(a) and (
                a.min() < 0 or a[:, 0].max() >= bound_a or a[:, 1].max() >= bound_b)):
            raise ValueError(f"{name} is not a (P, 2) table of valid indices")
    return Roadmap(vertices, edges, ConflictPairs(arrays["vv"], arrays["ve"], arrays["ee"]))


def _entry_bytes(roadmap: Roadmap, key: str) -> bytes:
    c = roadmap.conflicts
    arrays = {"vertices": roadmap.vertices, "edges": roadmap.edges, "vv": c.vv, "ve": c.ve, "ee": c.ee}
    buffer = io.BytesIO()
    np.savez_compressed(buffer, checksum=np.asarray(_checksum(key, arrays)), **arrays)
    return buffer.getvalue()
