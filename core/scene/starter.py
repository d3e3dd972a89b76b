"""The scene a new document starts from: an open site with one drone type and two formations,
ready to edit and plannable as it is (invented values, chosen to read clearly)."""

from __future__ import annotations

import numpy as np

from ..formations import grid, ring
from .io import scene_from_dict
from .model import Scene

#: Name of a scene that has no file yet.
STARTER_NAME = "Untitled scene"


#: Drones in the starter scene.
STARTER_DRONES = 8


def starter_scene() -> Scene:
    """A 30 × 30 × 12 m flight volume (floor at 0 m), one quadrotor type (clearance 0.3 m
    horizontally, 0.6 m vertically, 3 m/s, 1.5 m/s vertically, 3 m/s²), eight drones on a ground
    grid 1.5 m apart, a hover ring of radius 4 m at 4 m height, and one fastest transition to it."""
    drones = STARTER_DRONES
    pads = grid(drones, 1.5, origin=(-1.5, -8.0, 0.0))
    hover = ring(drones, 4.0, center=(0.0, 4.0, 4.0))
    return scene_from_dict({
        "name": STARTER_NAME,
        "site": {"flight_volume": {"lower": [-15.0, -15.0, 0.0], "upper": [15.0, 15.0, 12.0]}},
        "fleet": {"types": [{"name": "quadrotor", "radius_xy": 0.3, "radius_z": 0.6, "max_speed_xy": 3.0,
                             "max_speed_z": 1.5, "max_acceleration": 3.0}],
                  "drones": [{"id": f"Q{i + 1}", "type": "quadrotor"} for i in range(drones)]},
        "formations": [{"name": "ground", "points": np.round(pads, 3).tolist()},
                       {"name": "hover", "points": np.round(hover, 3).tolist()}],
        "timeline": {"start": "ground", "transitions": [{"to": "hover"}]},
    })
