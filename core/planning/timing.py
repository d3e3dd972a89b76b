"""A transition's duration: the shortest it may take, or the one the timeline asks for."""

from __future__ import annotations

from ..errors import PlanningError


def requested_duration(where: str, requested, needed: float, needs: str, detail: str = "") -> float:
    """A transition's duration in seconds: ``needed`` for ``"fastest"``, else the request. A request
    below ``needed`` raises :class:`PlanningError` saying where, what ``needs`` how long, and ``detail``."""
    if requested == "fastest":
        return needed
    if requested < needed:
        raise PlanningError(f"{where}: duration {requested:g} s is too short; {needs} at least {needed:.2f} s{detail}")
    return float(requested)
