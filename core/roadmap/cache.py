"""On-disk cache of sampled roadmaps and their conflicts, keyed by everything they depend on
(site geometry, clearance shapes, roadmap settings), so re-planning a changed timeline reuses them.

Location: ``$SKYLOOM_CACHE_DIR``, else ``$XDG_CACHE_HOME/skyloom``, else ``~/.cache/skyloom``.
Files are written atomically; an unreadable entry is ignored and rebuilt.
"""

from __future__ import annotations

import hashlib
import io
import json
import os
from collections.abc import Callable
from dataclasses import asdict
from pathlib import Path

import numpy as np

from ..atomic import write_bytes_atomic
from ..obstacles import ClearanceField
from .build import RoadmapSettings
from .conflicts import ConflictPairs
from .graph import Roadmap

CACHE_FORMAT = "skyloom-roadmap-cache-1"


def cache_dir() -> Path:
    if os.environ.get("SKYLOOM_CACHE_DIR"):
        return Path(os.environ["SKYLOOM_CACHE_DIR"])
    base = os.environ.get("XDG_CACHE_HOME") or Path.home() / ".cache"
    return Path(base) / "skyloom"


def roadmap_key(field: ClearanceField, pair_scale: np.ndarray, settings: RoadmapSettings) -> str:
    """Hex digest of every input the roadmap depends on."""
    h = hashlib.sha256()
    h.update(json.dumps({"format": CACHE_FORMAT, "settings": asdict(settings),
                         "semi_axes": field.semi_axes.tolist(), "pair_scale": np.asarray(pair_scale).tolist(),
                         "volume": field.flight_volume.tolist(), "keep_out": [b.tolist() for b in field.keep_out],
                         "pitches": [g.pitch for g in field.grids]}, sort_keys=True).encode())
    for digest in field.mesh_digests:
        h.update(digest.encode())
    return h.hexdigest()[:32]


def cached_roadmap(key: str, build: Callable[[], Roadmap], use_cache: bool = True) -> tuple[Roadmap, bool]:
    """The roadmap stored under ``key``, else ``build()`` (stored when ``use_cache``); and whether it was cached."""
    path = cache_dir() / "roadmaps" / f"{key}.npz"
    if use_cache and path.is_file():
        try:
            with np.load(path) as z:
                conflicts = ConflictPairs(z["vv"], z["ve"], z["ee"])
                return Roadmap(z["vertices"], z["edges"], conflicts, int(z["n_sampled"])), True
        except (OSError, KeyError, ValueError):
            pass  # damaged entry: rebuild and overwrite
    roadmap = build()
    if use_cache:
        path.parent.mkdir(parents=True, exist_ok=True)
        write_bytes_atomic(path, _npz_bytes(roadmap))
    return roadmap, False


def _npz_bytes(roadmap: Roadmap) -> bytes:
    buffer = io.BytesIO()
    c = roadmap.conflicts
    np.savez_compressed(buffer, vertices=roadmap.vertices, edges=roadmap.edges, vv=c.vv, ve=c.ve, ee=c.ee,
                        n_sampled=roadmap.n_sampled)
    return buffer.getvalue()
