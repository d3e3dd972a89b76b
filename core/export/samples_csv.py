"""``samples.csv``: every drone's state on a regular time grid (SI units)."""

from __future__ import annotations

import io

import numpy as np

from ..trajectory import FleetTrajectory

HEADER = "drone,t,x,y,z,vx,vy,vz,ax,ay,az"


def samples_csv(traj: FleetTrajectory, rate_hz: float, comment: str) -> str:
    """CSV text sampled at ``rate_hz`` from 0 to the end (the end included); rows grouped by drone.

    ``comment`` lines are written first, each prefixed with ``#``.
    """
    steps = int(np.floor(traj.duration * rate_hz + 1e-9))
    t = np.r_[np.arange(steps + 1) / rate_hz, [traj.duration] if steps / rate_hz < traj.duration - 1e-9 else []]
    p, v, a = (traj.evaluate(t, order) for order in (0, 1, 2))
    out = io.StringIO()
    for line in comment.splitlines():
        out.write(f"# {line}\n")
    out.write(HEADER + "\n")
    for k, drone in enumerate(traj.drone_ids):
        block = np.c_[t, p[:, k], v[:, k], a[:, k]]
        for row in block:
            out.write(drone + "," + ",".join(f"{x:.6f}" for x in row) + "\n")
    return out.getvalue()
