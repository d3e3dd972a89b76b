"""Multi-agent search on a roadmap: bounded-suboptimal conflict-based search (ECBS) for small teams,
LaCAM* with a PIBT step generator for large ones."""

from .ecbs import SearchFailed, SearchResult, UnresolvedConflict, ecbs
from .lacam import LacamFailed, LacamResult, lacam

__all__ = ["LacamFailed", "LacamResult", "SearchFailed", "SearchResult", "UnresolvedConflict", "ecbs", "lacam"]
