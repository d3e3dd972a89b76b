"""Obstacles for the planner: a conservative clearance field over meshes, keep-out boxes and the
flight volume (the verifier uses its own exact check instead)."""

from .field import ClearanceField
from .fleet import FleetFields

__all__ = ["ClearanceField", "FleetFields"]
