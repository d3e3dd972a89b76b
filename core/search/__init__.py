"""Multi-agent search on a roadmap: bounded-suboptimal conflict-based search (ECBS)."""

from .ecbs import SearchFailed, SearchResult, UnresolvedConflict, ecbs

__all__ = ["SearchFailed", "SearchResult", "UnresolvedConflict", "ecbs"]
