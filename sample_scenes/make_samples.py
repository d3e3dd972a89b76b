"""Regenerate the sample scenes (invented demo scenarios): ``python sample_scenes/make_samples.py``."""

from __future__ import annotations

from pathlib import Path

import numpy as np
import trimesh

from core.assignment import min_sum_of_squares
from core.clearance import ClearanceModel
from core.formations import grid, line, ring, sphere
from core.scene import save_scene, scene_from_dict

HERE = Path(__file__).parent


def _spaced_sphere(n: int, center, axes: np.ndarray, ratio: float) -> np.ndarray:
    """A sphere just large enough that every point is ``ratio`` clear of its neighbours."""
    model = ClearanceModel(np.repeat(axes[None], n, axis=0))
    radius = 1.0
    while True:
        points = sphere(n, radius, center)
        _, _, nearest = model.neighbourhood(points, 0.0)
        if nearest.min() >= ratio:
            return points
        radius *= 1.05


def meadow_show() -> dict:
    """196 show drones over an invented festival meadow: ground grid → ring → sphere → ground grid."""
    n = 196
    lantern = {"name": "lantern-quad", "radius_xy": 0.35, "radius_z": 0.9, "tracking_margin": 0.1,
               "max_speed_xy": 4.0, "max_speed_z": 2.5, "max_acceleration": 3.0}
    axes = np.array([0.45, 0.45, 1.0])
    pad = grid(n, 3.0, origin=(20.0, 20.0, 0.0))
    halo = ring(n, 52.0, center=(40.0, 40.0, 35.0))
    globe = _spaced_sphere(n, (40.0, 40.0, 45.0), axes, 1.6)
    return {
        "name": "Lindqvist meadow harvest show",
        "description": "Invented demo: 196 lantern drones rise from a launch grid into a halo, fold into "
                       "a globe over the meadow, and land back on the grid. Spectator stand is a keep-out box.",
        "site": {"flight_volume": {"lower": [-20.0, -20.0, 0.0], "upper": [100.0, 100.0, 70.0]},
                 "keep_out": [{"name": "spectator stand", "lower": [-15.0, 95.5, 0.0], "upper": [95.0, 99.0, 8.0]}]},
        "fleet": {"types": [lantern], "drones": [{"id": f"L{k + 1:03d}", "type": "lantern-quad"} for k in range(n)]},
        "formations": [
            {"name": "launch grid", "points": pad.round(3).tolist()},
            {"name": "halo", "points": halo.round(3).tolist()},
            {"name": "globe", "points": globe.round(3).tolist()},
        ],
        "timeline": {"start": "launch grid", "start_hold": 2.0, "transitions": [
            {"to": "halo", "assignment": "unlabeled", "duration": "fastest", "hold": 4.0},
            {"to": "globe", "assignment": "unlabeled", "duration": 40.0, "hold": 6.0},
            {"to": "launch grid", "assignment": "unlabeled", "duration": "fastest", "hold": 0.0},
        ]},
    }


def lab_eight() -> dict:
    """Eight nano-quadrotors in an invented indoor arena; one formation comes from a CSV file."""
    nano = {"name": "nano-quad", "radius_xy": 0.12, "radius_z": 0.3, "tracking_margin": 0.03,
            "max_speed_xy": 1.5, "max_speed_z": 1.0, "max_acceleration": 2.0}
    pads = line(8, (-2.1, -2.5, 0.0), (2.1, -2.5, 0.0))
    colours = ["amber"] * 4 + ["teal"] * 4
    two_rings = np.r_[ring(4, 1.2, center=(-1.5, 0.5, 1.2)), ring(4, 1.2, center=(1.5, 0.5, 1.6), phase=0.4)]
    return {
        "name": "Arena eight",
        "description": "Invented demo: eight nano quadrotors lift off a pad row, form a cube read from "
                       "cube.csv (labeled), split into two colour rings and land on pads of their colour (grouped).",
        "site": {"flight_volume": {"lower": [-4.0, -4.0, 0.0], "upper": [4.0, 4.0, 3.0]},
                 "keep_out": [{"name": "camera tripod", "lower": [3.2, 3.2, 0.0], "upper": [3.8, 3.8, 1.8]}]},
        "fleet": {"types": [nano], "drones": [{"id": f"N{k + 1}", "type": "nano-quad"} for k in range(8)]},
        "formations": [
            {"name": "pads", "points": pads.round(3).tolist(), "groups": colours},
            {"name": "cube", "csv": "cube.csv"},
            {"name": "rings", "points": two_rings.round(3).tolist(), "groups": colours},
        ],
        "timeline": {"start": "pads", "start_hold": 1.0, "transitions": [
            {"to": "cube", "assignment": "labeled", "duration": "fastest", "hold": 2.0},
            {"to": "rings", "assignment": "grouped", "duration": 8.0, "hold": 2.0},
            {"to": "pads", "assignment": "grouped", "duration": "fastest", "hold": 0.0},
        ]},
    }


def write_bridge_mesh(path: Path) -> None:
    """An invented two-pier footbridge: deck, two piers and two abutments, united into one
    watertight mesh (manifold3d boolean union), written as binary STL in metres."""
    parts = [((30.0, 4.0, 1.0), (0.0, 0.0, 6.5)),      # deck, underside at 6 m
             ((1.2, 3.0, 6.0), (-6.0, 0.0, 3.0)), ((1.2, 3.0, 6.0), (6.0, 0.0, 3.0)),  # piers
             ((2.0, 6.0, 7.0), (-16.0, 0.0, 3.5)), ((2.0, 6.0, 7.0), (16.0, 0.0, 3.5))]  # abutments
    boxes = [trimesh.creation.box(extents=e, transform=trimesh.transformations.translation_matrix(c))
             for e, c in parts]
    trimesh.boolean.union(boxes, engine="manifold").export(path)


def bridge_inspection() -> dict:
    """Six inspection drones visit stations under and beside an invented footbridge (labeled goals)."""
    inspector = {"name": "inspection-quad", "radius_xy": 0.4, "radius_z": 0.7, "tracking_margin": 0.1,
                 "max_speed_xy": 3.0, "max_speed_z": 1.5, "max_acceleration": 2.5}
    launch = line(6, (-7.5, -8.0, 1.0), (7.5, -8.0, 1.0))
    stations = np.array([(-11.0, 0.0, 4.0), (-2.5, 0.0, 3.5), (2.5, 0.0, 3.5), (11.0, 0.0, 4.0),
                         (-3.0, 4.0, 6.5), (3.0, -4.0, 6.5)])
    second = np.array([(-11.0, 4.0, 6.5), (-2.5, 0.0, 1.5), (9.0, 4.0, 6.5), (11.0, 0.0, 2.0),
                       (-8.0, -4.0, 6.5), (2.5, 0.0, 1.5)])
    return {
        "name": "Harrow Creek footbridge inspection",
        "description": "Invented demo: six inspection drones fly from a launch line to stations under the deck "
                       "and beside it (labeled), move to a second set of stations, and return.",
        "site": {"flight_volume": {"lower": [-20.0, -10.0, 0.5], "upper": [20.0, 10.0, 12.0]},
                 "meshes": [{"name": "footbridge", "file": "meshes/footbridge.stl", "units": "m"}]},
        "fleet": {"types": [inspector], "drones": [{"id": f"I{k + 1}", "type": "inspection-quad"} for k in range(6)]},
        "formations": [
            {"name": "launch line", "points": launch.round(3).tolist()},
            {"name": "first stations", "points": stations.tolist()},
            {"name": "second stations", "points": second.tolist()},
        ],
        "timeline": {"start": "launch line", "start_hold": 1.0, "transitions": [
            {"to": "first stations", "assignment": "labeled", "duration": "fastest", "hold": 5.0},
            {"to": "second stations", "assignment": "labeled", "duration": "fastest", "hold": 5.0},
            {"to": "launch line", "assignment": "unlabeled", "duration": "fastest", "hold": 0.0},
        ]},
    }


def write_courtyard_mesh(path: Path) -> None:
    """Two invented building blocks with a 2.5 m passage between them (binary STL, metres)."""
    blocks = [trimesh.creation.box(extents=(4.0, 8.75, 14.0),
                                   transform=trimesh.transformations.translation_matrix((10.0, y, 7.0)))
              for y in (4.375, 15.625)]
    trimesh.util.concatenate(blocks).export(path)


def courtyard_swap(n: int = 32) -> dict:
    """``n`` drones swap sides of an invented courtyard through the passage between two blocks."""
    courier = {"name": "courier-quad", "radius_xy": 0.25, "radius_z": 0.35, "tracking_margin": 0.05,
               "max_speed_xy": 3.0, "max_speed_z": 1.5, "max_acceleration": 3.0}
    half = n // 2
    rows = 4
    ys = np.linspace(3.0, 17.0, half // rows)
    west = np.array([(x, y, z) for x in (2.5, 4.5) for z in (2.0, 4.5) for y in ys])[:half]
    east = west * [-1, 1, 1] + [20.0, 0.0, 0.0]
    return {
        "name": "Cloister courtyard swap",
        "description": f"Invented demo: {n} drones on the west and east lawns of a courtyard trade places "
                       "through the 2.5 m passage between two blocks (labeled).",
        "site": {"flight_volume": {"lower": [0.0, 0.0, 0.5], "upper": [20.0, 20.0, 8.0]},
                 "meshes": [{"name": "blocks", "file": "meshes/courtyard_blocks.stl", "units": "m"}]},
        "fleet": {"types": [courier], "drones": [{"id": f"C{k + 1:02d}", "type": "courier-quad"} for k in range(n)]},
        "formations": [
            {"name": "lawns", "points": np.r_[west, east].round(3).tolist()},
            {"name": "swapped", "points": np.r_[east, west].round(3).tolist()},
        ],
        "timeline": {"start": "lawns", "start_hold": 1.0, "transitions": [
            {"to": "swapped", "assignment": "labeled", "duration": "fastest", "hold": 0.0},
        ]},
    }


#: The viaduct's service opening (x from −1.5 to 1.5 m, z from 2.0 to 3.6 m) and main arch (x from
#: 12 to 18 m, z up to 8 m), both through the whole wall.
OPENING = ((-1.5, 2.0), (1.5, 3.6))
ARCH = ((12.0, 0.0), (18.0, 8.0))


def write_viaduct_mesh(path: Path) -> None:
    """An invented masonry viaduct across the whole site (x from −21 to 21 m, 15 m
    tall: above the flight volume, 1 m thick) with a service opening (:data:`OPENING`) and a main arch
    (:data:`ARCH`), as boxes 1 mm apart (binary STL, metres)."""
    (ox0, oz0), (ox1, oz1) = OPENING
    (ax0, _), (ax1, az1) = ARCH
    gap, top = 1e-3, 15.0
    parts = [((-21.0, 0.0), (ox0 - gap, top)), ((ox0, 0.0), (ox1, oz0)), ((ox0, oz1), (ox1, top)),
             ((ox1 + gap, 0.0), (ax0 - gap, top)), ((ax0, az1), (ax1, top)), ((ax1 + gap, 0.0), (21.0, top))]
    trimesh.util.concatenate([trimesh.creation.box(bounds=[(lo[0], -0.5, lo[1]), (hi[0], 0.5, hi[1])])
                              for lo, hi in parts]).export(path)


def viaduct_survey() -> dict:
    """A heavy camera drone and five light scouts survey the north face of an invented viaduct:
    the scouts fit through its 3 m × 1.6 m service opening, the camera drone (2.2 m of vertical
    clearance) does not and takes the main arch 12 m away. The camera drone's downwash reaches
    0.4 m further below it, and the camera–scout pair keeps its own separation (fleet.pairs)."""
    camera = {"name": "camera-heavy", "radius_xy": 0.6, "radius_z": 1.0, "tracking_margin": 0.1,
              "max_speed_xy": 2.5, "max_speed_z": 1.5, "max_acceleration": 2.0, "downwash_shift": 0.4}
    scout = {"name": "scout-light", "radius_xy": 0.15, "radius_z": 0.35, "tracking_margin": 0.05,
             "max_speed_xy": 4.0, "max_speed_z": 2.0, "max_acceleration": 3.0}
    pads = np.array([(10.0, -8.0, 0.5)] + [(x, -8.0, 0.5) for x in (-2.4, -1.2, 0.0, 1.2, 2.4)])
    stations = np.array([(8.0, 5.0, 7.0), (-6.0, 2.6, 2.5), (-3.0, 2.6, 4.5), (0.0, 2.6, 6.0), (3.0, 2.6, 4.5),
                         (6.0, 2.6, 2.5)])
    kinds = ["camera"] + ["scouts"] * 5
    return {
        "name": "Millrace viaduct survey",
        "description": "Invented demo: one heavy camera drone and five light scouts fly from their pads south of "
                       "a viaduct to stations on its north face and back. The scouts pass the wall's small "
                       "service opening; the camera drone, too tall for it, takes the main arch.",
        "site": {"flight_volume": {"lower": [-20.0, -12.0, 0.5], "upper": [20.0, 12.0, 14.0]},
                 "meshes": [{"name": "viaduct", "file": "meshes/viaduct.stl", "units": "m"}]},
        "fleet": {"types": [camera, scout],
                  "drones": [{"id": "CAM", "type": "camera-heavy"}]
                  + [{"id": f"S{k + 1}", "type": "scout-light"} for k in range(5)],
                  "pairs": [{"types": ["camera-heavy", "scout-light"], "radius_xy": 1.0, "radius_z": 1.6}]},
        "formations": [
            {"name": "pads", "points": pads.tolist(), "groups": kinds},
            {"name": "north face", "points": stations.tolist(), "groups": kinds},
        ],
        "timeline": {"start": "pads", "start_hold": 1.0, "transitions": [
            {"to": "north face", "assignment": "labeled", "duration": "fastest", "hold": 5.0},
            {"to": "pads", "assignment": "grouped", "duration": "fastest", "hold": 0.0},
        ]},
    }


def write_cube_csv(path: Path) -> None:
    """Cube corners listed so that pad ``i`` → corner ``i`` is the shortest (non-crossing) pairing."""
    corners = np.array([(x, y, z) for z in (0.9, 2.1) for y in (-0.8, 0.8) for x in (-0.8, 0.8)])
    pads = line(8, (-2.1, -2.5, 0.0), (2.1, -2.5, 0.0))
    scale = np.array([0.3, 0.3, 0.66])
    corners = corners[min_sum_of_squares(pads / scale, corners / scale).goal_of]
    colours = ["amber"] * 4 + ["teal"] * 4
    rows = "".join(f"{x:g},{y:g},{z:g},{g}\n" for (x, y, z), g in zip(corners, colours, strict=True))
    path.write_text("x,y,z,group\n" + rows)


def main() -> None:
    write_cube_csv(HERE / "cube.csv")
    (HERE / "meshes").mkdir(exist_ok=True)
    write_bridge_mesh(HERE / "meshes" / "footbridge.stl")
    write_courtyard_mesh(HERE / "meshes" / "courtyard_blocks.stl")
    write_viaduct_mesh(HERE / "meshes" / "viaduct.stl")
    for name, build in (("meadow_show.json", meadow_show), ("lab_eight.json", lab_eight),
                        ("bridge_inspection.json", bridge_inspection), ("courtyard_swap.json", courtyard_swap),
                        ("viaduct_survey.json", viaduct_survey)):
        save_scene(scene_from_dict(build(), source=name, base_dir=HERE), HERE / name)
        print(f"wrote {HERE / name}")


if __name__ == "__main__":
    main()
