"""Per-drone trajectory files (our JSON format ``skyloom-trajectory``, version 1)."""

from __future__ import annotations

import numpy as np

from ..trajectory import FleetTrajectory

TRAJECTORY_FORMAT = "skyloom-trajectory"
_AXES = ("x", "y", "z")


def trajectory_document(traj: FleetTrajectory, k: int, drone_type: str, status: dict) -> dict:
    """The file content for drone ``k``: Bézier control points and monomial coefficients per piece.

    ``monomial[axis][m]`` multiplies ``t**m`` with ``t`` in seconds from the piece start.
    """
    mono = traj.monomial_coefficients()[k]
    pieces = []
    for s in range(traj.n_segments):
        pieces.append({
            "start": float(traj.breaks[s]),
            "duration": float(traj.durations[s]),
            "label": traj.segment_labels[s],
            "bezier": {a: traj.control_points[k, s, :, i].tolist() for i, a in enumerate(_AXES)},
            "monomial": {a: mono[s, :, i].tolist() for i, a in enumerate(_AXES)},
        })
    return {
        "format": TRAJECTORY_FORMAT, "version": 1, **status,
        "drone": traj.drone_ids[k], "drone_type": drone_type,
        "units": {"time": "s", "position": "m"}, "degree": traj.degree, "pieces": pieces,
    }


def trajectory_from_documents(documents: list[dict]) -> FleetTrajectory:
    """Rebuild a :class:`FleetTrajectory` from per-drone documents (their Bézier points)."""
    first = documents[0]["pieces"]
    breaks = np.r_[[p["start"] for p in first], first[-1]["start"] + first[-1]["duration"]]
    points = np.array([[np.c_[[p["bezier"][a] for a in _AXES]].T for p in doc["pieces"]] for doc in documents])
    return FleetTrajectory(breaks=breaks, control_points=points, drone_ids=tuple(d["drone"] for d in documents),
                           segment_labels=tuple(p["label"] for p in first))
