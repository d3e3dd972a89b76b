"""The export's JSON documents as typed records: what ``skyloom plan`` writes and ``skyloom check``
reads back (format: README, "Export folder"). Reading validates every number (finite, strict
types) and every file path (relative, inside the folder), so a damaged export is reported with
its file and field instead of failing later."""

from __future__ import annotations

from pathlib import PurePosixPath
from typing import Annotated, Literal

from pydantic import AfterValidator, BaseModel, ConfigDict, Field

from .. import SAFETY_CAUTION, __version__

EXPORT_FORMAT = "skyloom-plan"
TRAJECTORY_FORMAT = "skyloom-trajectory"
VERIFIED_NOTE = "VERIFIED by Skyloom's checker"
UNVERIFIED_NOTE = "UNVERIFIED: this plan FAILED verification and was exported only on explicit request. Do not fly it."

#: The fields of the status stamp every export file carries.
STAMP_FIELDS = ("verified", "status", "caution", "generator")

Finite = Annotated[float, Field(strict=True, allow_inf_nan=False)]


def _inside_folder(path: str) -> str:
    p = PurePosixPath(path)
    if p.is_absolute() or ".." in p.parts or "\\" in path or not path or path != p.as_posix():
        raise ValueError(f"{path!r} is not a plain relative path inside the export folder")
    return path


RelativePath = Annotated[str, Field(strict=True), AfterValidator(_inside_folder)]


class _Doc(BaseModel):
    model_config = ConfigDict(extra="forbid", frozen=True)


class ExportStatus(_Doc):
    """The stamp every export file carries: verdict, wording, caution and writer."""

    verified: Annotated[bool, Field(strict=True)]
    status: str
    caution: str
    generator: str

    @classmethod
    def of(cls, verified: bool) -> ExportStatus:
        return cls(verified=verified, status=VERIFIED_NOTE if verified else UNVERIFIED_NOTE,
                   caution=SAFETY_CAUTION, generator=f"Skyloom {__version__}")

    def stamp(self) -> ExportStatus:
        """Just the stamp fields of this document (a manifest, a trajectory file)."""
        return ExportStatus(**self.model_dump(include=set(STAMP_FIELDS)))

    @property
    def header(self) -> str:
        """Two lines (status, caution) that open the text files."""
        return f"{self.status}\n{self.caution}"

    def problems(self) -> list[str]:
        """Why this stamp contradicts itself (status wording vs ``verified``, empty caution)."""
        out = []
        if self.status != (VERIFIED_NOTE if self.verified else UNVERIFIED_NOTE):
            out.append(f"status {self.status!r} does not match verified = {str(self.verified).lower()}")
        if not self.caution.strip():
            out.append("the safety caution is missing")
        return out


class Axes(_Doc):
    x: list[Finite]
    y: list[Finite]
    z: list[Finite]


class PieceDoc(_Doc):
    start: Annotated[float, Field(strict=True, allow_inf_nan=False, ge=0)]
    duration: Annotated[float, Field(strict=True, allow_inf_nan=False, gt=0)]
    label: str
    bezier: Axes
    monomial: Axes


class TrajectoryDoc(ExportStatus):
    """``trajectories/<id>.json``: one drone's pieces; ``monomial[axis][m]`` multiplies ``t**m``,
    ``t`` in seconds from the piece start."""

    format: Literal["skyloom-trajectory"] = TRAJECTORY_FORMAT
    version: Literal[1] = 1
    drone: str
    drone_type: str
    units: dict[str, str]
    degree: Annotated[int, Field(strict=True, ge=1, le=30)]
    pieces: Annotated[list[PieceDoc], Field(min_length=1)]


class DroneEntry(_Doc):
    id: str
    file: RelativePath


class Manifest(ExportStatus):
    """``plan.json``. ``digests`` maps every other file to the SHA-256 of its bytes."""

    format: Literal["skyloom-plan"] = EXPORT_FORMAT
    version: Literal[1] = 1
    scene: str
    duration_s: Finite
    degree: Annotated[int, Field(strict=True, ge=1, le=30)]
    sample_rate_hz: Annotated[float, Field(strict=True, allow_inf_nan=False, gt=0)]
    breaks_s: Annotated[list[Finite], Field(min_length=2)]
    pieces: list[str]
    drones: Annotated[list[DroneEntry], Field(min_length=1)]
    transitions: list[dict]
    settings: dict
    roadmap: dict
    files: list[RelativePath]
    digests: dict[RelativePath, str]
