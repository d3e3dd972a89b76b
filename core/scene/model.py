"""Scene data model: frozen dataclasses validated by pydantic when a file is read.

Units everywhere: metres, seconds, m/s, m/s². Positions are ``(x, y, z)`` with ``z`` up.
"""

from __future__ import annotations

from functools import cached_property
from typing import Annotated, Literal

import numpy as np
from pydantic import AfterValidator, ConfigDict, Field
from pydantic.dataclasses import dataclass

from ..smoothing.terms import parse_objective

_STRICT = ConfigDict(extra="forbid", frozen=True)

Vec3 = tuple[float, float, float]
Positive = Annotated[float, Field(gt=0)]
NonNegative = Annotated[float, Field(ge=0)]
Name = Annotated[str, Field(min_length=1, max_length=80)]

SCENE_FORMAT = "skyloom-scene"
SCENE_VERSION = 1
AssignmentMode = Literal["labeled", "unlabeled", "grouped"]


@dataclass(config=_STRICT)
class Box:
    """Axis-aligned box from ``lower`` to ``upper`` corner (metres)."""

    lower: Vec3
    upper: Vec3

    @property
    def bounds(self) -> np.ndarray:
        """``(2, 3)`` array: lower corner, upper corner."""
        return np.array([self.lower, self.upper], dtype=np.float64)


@dataclass(config=_STRICT)
class NamedBox(Box):
    """A keep-out box: no drone's clearance ellipsoid may touch it."""

    name: Name


@dataclass(config=_STRICT)
class MeshRef:
    """An obstacle mesh file (STL/OBJ/PLY/glTF), path relative to the scene file.

    The file's coordinates are multiplied by the unit factor and ``scale``, rotated by
    ``rotate_deg`` (x, then y, then z, degrees, about the origin) and moved by ``translate``.
    """

    name: Name
    file: Annotated[str, Field(min_length=1)]
    units: Literal["m", "cm", "mm", "ft", "in"] = "m"
    scale: Positive = 1.0
    rotate_deg: Vec3 = (0.0, 0.0, 0.0)
    translate: Vec3 = (0.0, 0.0, 0.0)


@dataclass(config=_STRICT)
class Site:
    """Where the fleet may fly: the flight volume (geofence for drone centres) and obstacles."""

    flight_volume: Box
    keep_out: tuple[NamedBox, ...] = ()
    meshes: tuple[MeshRef, ...] = ()


@dataclass(config=_STRICT)
class DroneType:
    """An airframe: clearance half-axes and dynamic limits.

    ``radius_xy`` / ``radius_z`` are this drone's share of the separation (a pair of equal drones
    must stay ``2 radius_xy`` apart sideways, ``2 radius_z`` vertically); ``radius_z`` exceeds
    ``radius_xy`` because of rotor downwash. ``tracking_margin`` is added to both radii.
    """

    name: Name
    radius_xy: Positive
    radius_z: Positive
    max_speed_xy: Positive
    max_speed_z: Positive
    max_acceleration: Positive
    tracking_margin: NonNegative = 0.0

    @property
    def semi_axes(self) -> np.ndarray:
        """Clearance ellipsoid half-axes ``(3,)`` in metres, margin included."""
        m = self.tracking_margin
        return np.array([self.radius_xy + m, self.radius_xy + m, self.radius_z + m])


@dataclass(config=_STRICT)
class Drone:
    id: Name
    type: Name


@dataclass(config=_STRICT)
class Fleet:
    types: Annotated[tuple[DroneType, ...], Field(min_length=1)]
    drones: Annotated[tuple[Drone, ...], Field(min_length=1)]

    @cached_property
    def type_of(self) -> tuple[DroneType, ...]:
        """The :class:`DroneType` of each drone, in fleet order."""
        by_name = {t.name: t for t in self.types}
        return tuple(by_name[d.type] for d in self.drones)

    @cached_property
    def semi_axes(self) -> np.ndarray:
        """``(N, 3)`` clearance half-axes per drone (metres)."""
        return np.array([t.semi_axes for t in self.type_of])

    @cached_property
    def limits(self) -> np.ndarray:
        """``(N, 3)`` per drone: max horizontal speed, max vertical speed (m/s), max accel (m/s²)."""
        return np.array([(t.max_speed_xy, t.max_speed_z, t.max_acceleration) for t in self.type_of])

    @property
    def ids(self) -> tuple[str, ...]:
        return tuple(d.id for d in self.drones)


@dataclass(config=_STRICT)
class Formation:
    """A named set of points, one per drone, with an optional group label per point.

    ``csv`` names a CSV file (relative to the scene) the points were read from; the scene file
    then stores only that reference.
    """

    name: Name
    points: Annotated[tuple[Vec3, ...], Field(min_length=1)]
    groups: tuple[Name, ...] | None = None
    csv: str | None = None

    @cached_property
    def positions(self) -> np.ndarray:
        """``(N, 3)`` positions in metres."""
        return np.array(self.points, dtype=np.float64)


@dataclass(config=_STRICT)
class Transition:
    """Fly from the previous formation to ``to``, then hover ``hold`` seconds.

    ``duration`` is seconds, or ``"fastest"`` for the shortest duration the limits allow.
    """

    to: Name
    assignment: AssignmentMode = "unlabeled"
    duration: Positive | Literal["fastest"] = "fastest"
    hold: NonNegative = 0.0


@dataclass(config=_STRICT)
class Timeline:
    start: Name
    transitions: Annotated[tuple[Transition, ...], Field(min_length=1)]
    start_hold: NonNegative = 0.0


def _objective_text(text: str) -> str:
    parse_objective(text)  # raises ValueError with the reason
    return text


@dataclass(config=_STRICT)
class PlannerSettings:
    """Planner options stored with the scene.

    ``limit_margin`` is the fraction of each speed/acceleration limit the planner may use; the
    rest is headroom for the verifier's tolerance and for tracking (common practice, no source).
    """

    degree: Annotated[int, Field(ge=5, le=15)] = 9
    profile: Literal["min_snap", "min_jerk"] = "min_snap"
    limit_margin: Annotated[float, Field(gt=0.5, le=1.0)] = 0.95
    #: Roadmap (used where straight lines are blocked): free-space samples drawn, neighbours tried
    #: per vertex, spanner stretch factor, sampler seed.
    roadmap_samples: Annotated[int, Field(ge=50, le=200_000)] = 1500
    roadmap_neighbours: Annotated[int, Field(ge=3, le=64)] = 12
    spanner_stretch: Annotated[float, Field(ge=1.0, le=10.0)] = 1.5
    roadmap_seed: Annotated[int, Field(ge=0)] = 0
    #: Voxel pitch of the planner's obstacle field, in clearance radii (error bound ≈ 2 × pitch).
    obstacle_pitch: Annotated[float, Field(ge=0.05, le=1.0)] = 0.2
    #: Multi-agent search: suboptimality factor w ≥ 1 (sum of costs ≤ w × optimal), time limit (s).
    suboptimality: Annotated[float, Field(ge=1.0, le=10.0)] = 2.0
    search_time_limit: Annotated[float, Field(gt=0.0, le=3600.0)] = 60.0
    #: Smoothing of roadmap plans: on/off, most QP rounds, objective (a name or term weights, see
    #: :func:`core.smoothing.terms.parse_objective`).
    smoothing: bool = True
    smoothing_iterations: Annotated[int, Field(ge=1, le=50)] = 3
    objective: Annotated[str, AfterValidator(_objective_text)] = "snap"


@dataclass(config=_STRICT, kw_only=True)
class Scene:
    """A whole scene file. ``format`` and ``version`` identify our format."""

    format: Literal["skyloom-scene"] = SCENE_FORMAT
    version: Literal[1] = SCENE_VERSION
    name: Name
    description: str = ""
    site: Site
    fleet: Fleet
    formations: Annotated[tuple[Formation, ...], Field(min_length=1)]
    timeline: Timeline
    planner: PlannerSettings = PlannerSettings()

    def formation(self, name: str) -> Formation:
        for f in self.formations:
            if f.name == name:
                return f
        raise KeyError(name)
