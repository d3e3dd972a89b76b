"""Where Skyloom keeps files of its own: the cache (roadmaps, crash logs)."""

from __future__ import annotations

import os
from pathlib import Path


def cache_dir() -> Path:
    """``$SKYLOOM_CACHE_DIR``, else ``$XDG_CACHE_HOME/skyloom``, else ``~/.cache/skyloom``."""
    if os.environ.get("SKYLOOM_CACHE_DIR"):
        return Path(os.environ["SKYLOOM_CACHE_DIR"])
    base = os.environ.get("XDG_CACHE_HOME") or Path.home() / ".cache"
    return Path(base) / "skyloom"
