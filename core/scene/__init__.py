"""Scene files: the site, the fleet, the formations and the timeline (format: README, "Scene file")."""

from .io import load_scene, save_scene, scene_from_dict, scene_to_dict
from .model import (
    Box,
    Drone,
    DroneType,
    Fleet,
    Formation,
    MeshRef,
    NamedBox,
    PlannerSettings,
    Scene,
    Site,
    Timeline,
    Transition,
)

__all__ = [
    "Box", "Drone", "DroneType", "Fleet", "Formation", "MeshRef", "NamedBox", "PlannerSettings",
    "Scene", "Site", "Timeline", "Transition", "load_scene", "save_scene", "scene_from_dict",
    "scene_to_dict",
]
