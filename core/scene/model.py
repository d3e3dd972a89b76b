"""Scene data model: frozen dataclasses validated by pydantic when a file is read.

Units everywhere: metres, seconds, m/s, m/s². Positions are ``(x, y, z)`` with ``z`` up.
"""

from __future__ import annotations

import re
from functools import cached_property
from typing import Annotated, Literal

import numpy as np
from pydantic import AfterValidator, ConfigDict, Field
from pydantic.dataclasses import dataclass

from ..clearance import ClearanceModel
from ..limits import (
    MAX_ACCELERATION_M_S2,
    MAX_COORDINATE_M,
    MAX_DRONE_TYPES,
    MAX_DURATION_S,
    MAX_FORMATIONS,
    MAX_MESH_SCALE,
    MAX_RADIUS_M,
    MAX_ROTATION_DEG,
    MAX_SPEED_M_S,
    MAX_TRANSITIONS,
)
from ..objectives import parse_objective

_STRICT = ConfigDict(extra="forbid", frozen=True)


def _finite(**bounds) -> object:
    """A float field that accepts JSON numbers only (no strings, no booleans), finite, within ``bounds``."""
    return Annotated[float, Field(strict=True, allow_inf_nan=False, **bounds)]


def _integer(**bounds) -> object:
    """An integer field that accepts JSON integers only, within ``bounds``."""
    return Annotated[int, Field(strict=True, **bounds)]


Coordinate = _finite(ge=-MAX_COORDINATE_M, le=MAX_COORDINATE_M)
Vec3 = tuple[Coordinate, Coordinate, Coordinate]
Radius = _finite(ge=0.005, le=MAX_RADIUS_M)
Margin = _finite(ge=0.0, le=MAX_RADIUS_M)
Speed = _finite(ge=0.01, le=MAX_SPEED_M_S)
Acceleration = _finite(ge=0.01, le=MAX_ACCELERATION_M_S2)
Seconds = _finite(gt=0.0, le=MAX_DURATION_S)
Hold = _finite(ge=0.0, le=MAX_DURATION_S)
Angle = _finite(ge=-MAX_ROTATION_DEG, le=MAX_ROTATION_DEG)

#: Drone ids and group labels become file names and CSV cells: letters, digits, ``_``, ``-``, ``.``,
#: starting with a letter or digit, at most 64 characters.
SAFE_ID = re.compile(r"[A-Za-z0-9][A-Za-z0-9_.-]{0,63}")


def _safe_id(text: str) -> str:
    if not SAFE_ID.fullmatch(text):
        raise ValueError(f"{text!r} is not a valid id: use 1-64 letters, digits, '_', '-' or '.', starting with a "
                         "letter or digit (ids become file names and CSV cells)")
    return text


def _printable(text: str) -> str:
    if not text.isprintable():
        raise ValueError(f"{text!r} contains a line break, tab or other control character")
    return text


Name = Annotated[str, Field(strict=True, min_length=1, max_length=80), AfterValidator(_printable)]
SafeId = Annotated[str, Field(strict=True), AfterValidator(_safe_id)]

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
    file: Annotated[str, Field(strict=True, min_length=1, max_length=1000), AfterValidator(_printable)]
    units: Literal["m", "cm", "mm", "ft", "in"] = "m"
    scale: _finite(gt=0.0, le=MAX_MESH_SCALE) = 1.0
    rotate_deg: tuple[Angle, Angle, Angle] = (0.0, 0.0, 0.0)
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
    radius_xy: Radius
    radius_z: Radius
    max_speed_xy: Speed
    max_speed_z: Speed
    max_acceleration: Acceleration
    tracking_margin: Margin = 0.0
    #: How far below the drone its clearance ellipsoid's centre sits, metres (downwash of a heavier
    #: airframe): against a drone of smaller shift it needs the difference more room below it and
    #: as much less above it. Equal shifts keep pairs symmetric (see :mod:`core.clearance`).
    downwash_shift: Margin = 0.0

    @property
    def semi_axes(self) -> np.ndarray:
        """Clearance ellipsoid half-axes ``(3,)`` in metres, margin included."""
        m = self.tracking_margin
        return np.array([self.radius_xy + m, self.radius_xy + m, self.radius_z + m])


@dataclass(config=_STRICT)
class Drone:
    """One aircraft: ``id`` follows :data:`SAFE_ID`; ``type`` names a :class:`DroneType`."""

    id: SafeId
    type: Name


PairRadius = _finite(ge=0.01, le=2 * MAX_RADIUS_M)


@dataclass(config=_STRICT)
class PairClearance:
    """The separation two drone types keep, replacing the sum of their own radii: ``radius_xy``
    sideways and ``radius_z`` vertically between their clearance centres (metres), to which both
    types' tracking margins are added. ``types`` names the two (the same name twice: a type with itself)."""

    types: tuple[Name, Name]
    radius_xy: PairRadius
    radius_z: PairRadius

    def semi_axes(self, margins: float) -> np.ndarray:
        """Pair half-axes ``(3,)`` in metres with the two types' tracking ``margins`` (their sum) added."""
        return np.array([self.radius_xy, self.radius_xy, self.radius_z]) + margins


@dataclass(config=_STRICT)
class Fleet:
    """The drone types, the drones, and optional per-pair separations (:class:`PairClearance`)."""

    types: Annotated[tuple[DroneType, ...], Field(min_length=1, max_length=MAX_DRONE_TYPES)]
    drones: Annotated[tuple[Drone, ...], Field(min_length=1)]
    pairs: Annotated[tuple[PairClearance, ...], Field(max_length=MAX_DRONE_TYPES * (MAX_DRONE_TYPES + 1) // 2)] = ()

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
    def clearance(self) -> ClearanceModel:
        """The fleet's clearance model (pair shapes with the per-pair table, downwash shifts,
        envelope), built once. Pairs naming unknown types are left out (the scene checks report them)."""
        index = {t.name: k for k, t in enumerate(self.types)}
        overrides = {}
        for pair in self.pairs:
            a, b = (index.get(name) for name in pair.types)
            if a is not None and b is not None:
                overrides[(a, b)] = pair.semi_axes(self.types[a].tracking_margin + self.types[b].tracking_margin)
        return ClearanceModel(self.semi_axes, np.array([t.downwash_shift for t in self.type_of]),
                              np.array([index[d.type] for d in self.drones]), overrides)

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
    groups: tuple[SafeId, ...] | None = None
    csv: Annotated[str, Field(strict=True, max_length=1000), AfterValidator(_printable)] | None = None

    @cached_property
    def positions(self) -> np.ndarray:
        """``(N, 3)`` positions in metres."""
        return np.array(self.points, dtype=np.float64)


ProfileName = Literal["cruise", "min_snap", "min_jerk"]


@dataclass(config=_STRICT)
class Transition:
    """Fly from the previous formation to ``to``, then hover ``hold`` seconds.

    ``duration`` is seconds, or ``"fastest"`` for the shortest duration the limits allow.
    """

    to: Name
    assignment: AssignmentMode = "unlabeled"
    duration: Seconds | Literal["fastest"] = "fastest"
    hold: Hold = 0.0
    #: Time law of straight-line flights for this transition (None: ``planner.profile``).
    profile: ProfileName | None = None


@dataclass(config=_STRICT)
class Timeline:
    start: Name
    transitions: Annotated[tuple[Transition, ...], Field(min_length=1, max_length=MAX_TRANSITIONS)]
    start_hold: Hold = 0.0


def _objective_text(text: str) -> str:
    parse_objective(text)  # raises ValueError with the reason
    return text


SearchName = Literal["auto", "ecbs", "lacam"]


@dataclass(config=_STRICT)
class PlannerSettings:
    """Planner options stored with the scene.

    ``limit_margin`` is the fraction of each speed/acceleration limit the planner may use; the
    rest is headroom for the verifier's tolerance and for tracking (common practice, no source).
    """

    degree: _integer(ge=5, le=15) = 9
    #: Time law of straight-line flights: ``cruise`` (speed up, cruise, slow down) or one
    #: rest-to-rest polynomial (``min_snap``, ``min_jerk``; also the stop-and-go steps' shape).
    profile: ProfileName = "cruise"
    limit_margin: _finite(gt=0.5, le=1.0) = 0.95
    #: Roadmap (used where straight lines are blocked): free-space samples drawn, neighbours tried
    #: per vertex, spanner stretch factor, sampler seed.
    roadmap_samples: _integer(ge=50, le=200_000) = 1500
    roadmap_neighbours: _integer(ge=3, le=64) = 12
    spanner_stretch: _finite(ge=1.0, le=10.0) = 1.5
    roadmap_seed: _integer(ge=0, le=2**32 - 1) = 0
    #: Voxel pitch of the planner's obstacle field, in clearance radii (error bound ≈ 2 × pitch).
    obstacle_pitch: _finite(ge=0.05, le=1.0) = 0.2
    #: Multi-agent search: ``auto`` (ECBS for small teams, LaCAM* for large ones, see
    #: :func:`core.planning.solvers.choose_solver`), ``ecbs`` or ``lacam``; ECBS's suboptimality
    #: factor w ≥ 1 (sum of costs ≤ w × optimal); time limit (s).
    search: SearchName = "auto"
    suboptimality: _finite(ge=1.0, le=10.0) = 2.0
    search_time_limit: _finite(gt=0.0, le=3600.0) = 60.0
    #: Smoothing of roadmap plans: on/off, most QP rounds, objective (a name or term weights, see
    #: :func:`core.objectives.parse_objective`).
    smoothing: Annotated[bool, Field(strict=True)] = True
    smoothing_iterations: _integer(ge=1, le=50) = 5
    objective: Annotated[str, Field(strict=True, max_length=200), AfterValidator(_objective_text)] = "snap"


@dataclass(config=_STRICT, kw_only=True)
class Scene:
    """A whole scene file. ``format`` and ``version`` identify our format."""

    format: Literal["skyloom-scene"] = SCENE_FORMAT
    version: Literal[1] = SCENE_VERSION
    name: Name
    description: Annotated[str, Field(strict=True, max_length=10_000)] = ""
    site: Site
    fleet: Fleet
    formations: Annotated[tuple[Formation, ...], Field(min_length=1, max_length=MAX_FORMATIONS)]
    timeline: Timeline
    planner: PlannerSettings = PlannerSettings()

    def formation(self, name: str) -> Formation:
        for f in self.formations:
            if f.name == name:
                return f
        raise KeyError(name)
