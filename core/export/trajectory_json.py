"""Per-drone trajectory files (our JSON format ``skyloom-trajectory``, version 1)."""

from __future__ import annotations

import numpy as np

from ..trajectory import FleetTrajectory
from .documents import ExportStatus, TrajectoryDoc

_AXES = ("x", "y", "z")


def trajectory_document(traj: FleetTrajectory, k: int, monomials: np.ndarray, drone_type: str,
                        status: ExportStatus) -> dict:
    """The file content (a :class:`TrajectoryDoc` as plain JSON data, built directly: a large
    export writes tens of thousands of pieces) for drone ``k``: Bézier control points and
    power-basis coefficients ``monomials`` ``(S, n + 1, 3)`` of that drone
    (:meth:`FleetTrajectory.monomial_coefficients`)."""
    starts, durations = traj.breaks[:-1].tolist(), traj.durations.tolist()
    bezier, mono = traj.control_points[k].transpose(0, 2, 1).tolist(), monomials.transpose(0, 2, 1).tolist()
    pieces = [{"start": starts[s], "duration": durations[s], "label": traj.segment_labels[s],
               "bezier": dict(zip(_AXES, bezier[s], strict=True)), "monomial": dict(zip(_AXES, mono[s], strict=True))}
              for s in range(traj.n_segments)]
    return {**status.model_dump(), "format": TrajectoryDoc.model_fields["format"].default, "version": 1,
            "drone": traj.drone_ids[k], "drone_type": drone_type, "units": {"time": "s", "position": "m"},
            "degree": traj.degree, "pieces": pieces}


def piece_points(doc: TrajectoryDoc, basis: str) -> list[np.ndarray]:
    """Per piece, the ``basis`` (``"bezier"`` or ``"monomial"``) coefficients as ``(m, 3)`` arrays."""
    out = []
    for p in doc.pieces:
        axes = getattr(p, basis)
        if not len(axes.x) == len(axes.y) == len(axes.z):
            raise ValueError(f"piece starting at {p.start:g} s has {basis} axes of different lengths")
        out.append(np.column_stack([axes.x, axes.y, axes.z]))
    return out


def trajectory_from_documents(documents: list[TrajectoryDoc]) -> FleetTrajectory:
    """Rebuild a :class:`FleetTrajectory` from per-drone documents (their Bézier points). Raises
    ValueError naming the drone when the documents disagree on pieces, times or degree."""
    first = documents[0]
    breaks = np.r_[[p.start for p in first.pieces], first.pieces[-1].start + first.pieces[-1].duration]
    points = []
    for doc in documents:
        starts = np.array([p.start for p in doc.pieces])
        if len(doc.pieces) != len(first.pieces) or not np.allclose(starts, breaks[:-1], rtol=0, atol=1e-9):
            raise ValueError(f"drone {doc.drone!r}: its pieces do not share the fleet's breakpoints")
        pieces = piece_points(doc, "bezier")
        if any(len(p) != doc.degree + 1 for p in pieces) or doc.degree != first.degree:
            raise ValueError(f"drone {doc.drone!r}: control point count does not match degree {first.degree}")
        points.append(pieces)
    return FleetTrajectory(breaks=breaks, control_points=np.array(points), drone_ids=tuple(d.drone for d in documents),
                           segment_labels=tuple(p.label for p in first.pieces))
