"""Invented stress scenes for the flight-quality benchmark and its tests (not tuned samples).

Each builder returns ``(scene dict, files)``: ``files`` maps a mesh file name to the trimesh it must
be written as, next to the scene. :func:`write_scene` writes both into a folder.

* :func:`wall_crossing` — a labeled crossing of a wall through two 3 m gaps.
* :func:`tower_stations` — drones stationed on the near side of a round tower move to its far side.
* :func:`line_swap` — two lines of drones 8 m apart swap places head-on in open air.
* :func:`floor_pads` — a mixed team takes off from pads on the floor of the flight volume, flies
  over a low canopy to a crown, and lands again (grouped by type).
* :func:`mixed_crown` — heavy camera drones and light scouts on tightly packed floor pads (the
  scouts' pads closer than two heavy drones may be) fly to a two-ring crown and back, grouped by type.
* :func:`mixed_slot` — camera drones and scouts cross a wall where only the scouts fit through a
  slot near them; the camera drones take a door to the side (downwash shift on the heavy type).
* :func:`window_facade` — an inspection crew passes a facade through its one window (a mesh),
  with a quarter of a metre to spare above and below each drone.
* :func:`crowd_wall` — a show crowd (unlabeled) crosses a wall through two 3 m gaps.
* :func:`pillar_field` — a crowd crosses a field of pillars (one mesh file holding all of them).
"""

from __future__ import annotations

import json
from pathlib import Path

import numpy as np
import trimesh

QUAD = {"name": "quad", "radius_xy": 0.25, "radius_z": 0.6, "tracking_margin": 0.05,
        "max_speed_xy": 3.0, "max_speed_z": 2.0, "max_acceleration": 2.5}


def _scene(name: str, site: dict, types: list[dict], drone_types: list[str], formations: dict[str, np.ndarray],
           transitions: list[dict], groups: dict[str, list[str]] | None = None) -> dict:
    return {
        "name": name, "description": "Invented stress scene for bench/bench_flight_quality.py.",
        "site": site,
        "fleet": {"types": types, "drones": [{"id": f"D{k + 1:03d}", "type": t} for k, t in enumerate(drone_types)]},
        "formations": [{"name": k, "points": np.round(v, 3).tolist(), **({"groups": groups[k]} if groups and k in
                                                                           groups else {})}
                       for k, v in formations.items()],
        "timeline": {"start": next(iter(formations)), "transitions": transitions},
    }


def wall_crossing(n: int = 64) -> tuple[dict, dict]:
    """``n`` drones (a multiple of 8) in a block 11 m before a wall fly to the mirrored block 11 m
    behind it (labeled, 22 m); the wall has two full-height gaps 3 m wide at x = ±5 m."""
    columns = n // 4
    xs = np.linspace(-0.9 * (columns - 1), 0.9 * (columns - 1), columns)
    near = np.array([(x, -11.0, z) for z in (2.0, 4.0, 6.0, 8.0) for x in xs])[:n]
    far = near * [1, -1, 1]
    wall = [((-30.0, -0.3, 0.0), (-6.5, 0.3, 12.0)), ((-3.5, -0.3, 0.0), (3.5, 0.3, 12.0)),
            ((6.5, -0.3, 0.0), (30.0, 0.3, 12.0))]
    site = {"flight_volume": {"lower": [-25.0, -16.0, 0.5], "upper": [25.0, 16.0, 11.0]},
            "keep_out": [{"name": f"wall {k}", "lower": list(lo), "upper": list(hi)}
                         for k, (lo, hi) in enumerate(wall)]}
    return _scene(f"wall crossing ({n} drones)", site, [QUAD], ["quad"] * n, {"near": near, "far": far},
                  [{"to": "far", "assignment": "labeled"}]), {}


def tower_stations(n: int = 10) -> tuple[dict, dict]:
    """``n`` drones stationed on the west half of a ring 7 m round a tower (radius 3 m, 24 m tall)
    move to the mirrored stations on its east half (labeled)."""
    angles = np.linspace(np.pi * 0.6, np.pi * 1.4, n)
    heights = 3.0 + (np.arange(n) % 3) * 4.0
    west = np.c_[7.0 * np.cos(angles), 7.0 * np.sin(angles), heights]
    east = west * [-1, 1, 1]
    tower = trimesh.creation.cylinder(radius=3.0, height=24.0, sections=32,
                                      transform=trimesh.transformations.translation_matrix((0.0, 0.0, 12.0)))
    site = {"flight_volume": {"lower": [-15.0, -15.0, 1.0], "upper": [15.0, 15.0, 16.0]},
            "meshes": [{"name": "tower", "file": "tower.stl", "units": "m"}]}
    return _scene(f"tower stations ({n} drones)", site, [QUAD], ["quad"] * n, {"west": west, "east": east},
                  [{"to": "east", "assignment": "labeled"}]), {"tower.stl": tower}


def line_swap(n: int = 5) -> tuple[dict, dict]:
    """Two lines of ``n`` drones, 2 m apart within a line and 8 m apart, swap places head-on:
    each drone flies to the drone facing it (labeled; straight lines would collide)."""
    xs = (np.arange(n) - (n - 1) / 2) * 2.0
    south = np.c_[xs, np.full(n, -4.0), np.full(n, 5.0)]
    north = south * [1, -1, 1]
    site = {"flight_volume": {"lower": [-20.0, -20.0, 0.5], "upper": [20.0, 20.0, 15.0]}}
    return _scene(f"line swap ({n} + {n} drones)", site, [QUAD], ["quad"] * (2 * n),
                  {"lines": np.r_[south, north], "swapped": np.r_[north, south]},
                  [{"to": "swapped", "assignment": "labeled"}]), {}


def floor_pads(heavy: int = 2, light: int = 6) -> tuple[dict, dict]:
    """A mixed team on pads at the floor of the flight volume (z = 0) flies over a low canopy (a
    keep-out box between the pads and the crown) to a crown 6 m up, then lands on the pads again
    (grouped by type)."""
    heavy_type = {"name": "camera", "radius_xy": 0.6, "radius_z": 1.0, "tracking_margin": 0.1,
                  "max_speed_xy": 2.5, "max_speed_z": 1.5, "max_acceleration": 2.0}
    light_type = {"name": "scout", "radius_xy": 0.25, "radius_z": 0.5, "tracking_margin": 0.05,
                  "max_speed_xy": 4.0, "max_speed_z": 2.5, "max_acceleration": 3.0}
    n = heavy + light
    pads = np.array([(-9.0, (k - (n - 1) / 2) * 3.0, 0.0) for k in range(n)])
    angles = np.linspace(0.0, 2 * np.pi, n, endpoint=False)
    crown = np.c_[6.0 + 4.5 * np.cos(angles), 4.5 * np.sin(angles), np.where(np.arange(n) < heavy, 8.0, 6.0)]
    kinds = ["camera"] * heavy + ["scout"] * light
    site = {"flight_volume": {"lower": [-14.0, -16.0, 0.0], "upper": [14.0, 16.0, 12.0]},
            "keep_out": [{"name": "canopy", "lower": [-4.0, -14.0, 0.0], "upper": [-2.0, 14.0, 3.5]}]}
    return _scene(f"floor pads ({heavy} heavy + {light} light)", site, [heavy_type, light_type], kinds,
                  {"pads": pads, "crown": crown, "landed": pads},
                  [{"to": "crown", "assignment": "grouped"}, {"to": "landed", "assignment": "grouped"}],
                  groups={"pads": kinds, "crown": kinds, "landed": kinds}), {}


def mixed_crown(heavy: int = 4, light: int = 12) -> tuple[dict, dict]:
    """``heavy`` camera drones (radii 0.6 / 1.0 m + 0.1) on floor pads 3 m apart and ``light``
    scouts (0.15 / 0.35 m + 0.05) on pads 1.2 m apart — closer than two heavy drones may be — fly
    to a crown (heavy inner ring 3 m round at 9 m, scouts outer ring 7 m round at 6 m) and land
    again, grouped by type."""
    heavy_type = {"name": "camera", "radius_xy": 0.6, "radius_z": 1.0, "tracking_margin": 0.1,
                  "max_speed_xy": 2.5, "max_speed_z": 1.5, "max_acceleration": 2.0}
    light_type = {"name": "scout", "radius_xy": 0.15, "radius_z": 0.35, "tracking_margin": 0.05,
                  "max_speed_xy": 4.0, "max_speed_z": 2.5, "max_acceleration": 3.0}
    heavy_pads = np.c_[np.full(heavy, -10.0), (np.arange(heavy) - (heavy - 1) / 2) * 3.0, np.zeros(heavy)]
    light_pads = np.c_[np.full(light, -6.0), (np.arange(light) - (light - 1) / 2) * 1.2, np.zeros(light)]
    pads = np.vstack([heavy_pads, light_pads])
    inner = np.linspace(0.0, 2 * np.pi, heavy, endpoint=False)
    outer = np.linspace(0.0, 2 * np.pi, light, endpoint=False) + np.pi / light
    crown = np.vstack([np.c_[3.0 * np.cos(inner), 3.0 * np.sin(inner), np.full(heavy, 9.0)],
                       np.c_[7.0 * np.cos(outer), 7.0 * np.sin(outer), np.full(light, 6.0)]])
    kinds = ["camera"] * heavy + ["scout"] * light
    site = {"flight_volume": {"lower": [-14.0, -12.0, 0.0], "upper": [12.0, 12.0, 12.0]}}
    return _scene(f"mixed crown ({heavy} heavy + {light} light)", site, [heavy_type, light_type], kinds,
                  {"pads": pads, "crown": crown, "landed": pads},
                  [{"to": "crown", "assignment": "grouped"}, {"to": "landed", "assignment": "grouped"}],
                  groups={"pads": kinds, "crown": kinds, "landed": kinds}), {}


def mixed_slot(heavy: int = 2, light: int = 6) -> tuple[dict, dict]:
    """``heavy`` camera drones (0.6 / 1.0 m + 0.1, downwash shift 0.3 m) and ``light`` scouts
    (0.15 / 0.35 m + 0.05) cross a 0.3 m thick wall of keep-out boxes (labeled, 12 m): the scouts
    in front of its 2 m × 1.6 m slot, which only they fit through, the camera drones 12 m to the
    side in front of a 4 m × 6 m door. The wall rises above the flight volume: nobody climbs over."""
    heavy_type = {"name": "camera", "radius_xy": 0.6, "radius_z": 1.0, "tracking_margin": 0.1,
                  "max_speed_xy": 2.5, "max_speed_z": 1.5, "max_acceleration": 2.0, "downwash_shift": 0.3}
    light_type = {"name": "scout", "radius_xy": 0.15, "radius_z": 0.35, "tracking_margin": 0.05,
                  "max_speed_xy": 4.0, "max_speed_z": 2.5, "max_acceleration": 3.0}
    cameras = np.c_[10.0 + 2.5 * (np.arange(heavy) % 2), np.full(heavy, -6.0), 3.0 + 3.0 * (np.arange(heavy) // 2)]
    scouts = np.c_[(np.arange(light) % 3 - 1) * 2.0, np.full(light, -6.0) - (np.arange(light) // 3) * 1.0,
                   2.0 + 1.5 * (np.arange(light) % 3)]
    near = np.vstack([cameras, scouts])
    far = near * [1, -1, 1]
    wall = [((-30.0, -0.15, 0.0), (-1.0, 0.15, 12.0)), ((-1.0, -0.15, 0.0), (1.0, 0.15, 3.0)),
            ((-1.0, -0.15, 4.6), (1.0, 0.15, 12.0)), ((1.0, -0.15, 0.0), (12.0, 0.15, 12.0)),
            ((12.0, -0.15, 6.0), (16.0, 0.15, 12.0)), ((16.0, -0.15, 0.0), (30.0, 0.15, 12.0))]
    site = {"flight_volume": {"lower": [-20.0, -10.0, 0.5], "upper": [20.0, 10.0, 11.0]},
            "keep_out": [{"name": f"wall {k}", "lower": list(lo), "upper": list(hi)}
                         for k, (lo, hi) in enumerate(wall)]}
    return _scene(f"mixed slot ({heavy} heavy + {light} light)", site, [heavy_type, light_type],
                  ["camera"] * heavy + ["scout"] * light, {"near": near, "far": far},
                  [{"to": "far", "assignment": "labeled"}]), {}


def window_facade(n: int = 6, window: tuple[float, float] = (3.0, 1.3)) -> tuple[dict, dict]:
    """``n`` drones with a 0.8 m tall, 0.78 m wide clearance (0.35 m and 0.34 m + 0.05 m tracking margin) cross a
    facade (0.3 m thick mesh spanning the whole flight volume) through one window ``window`` =
    (width, height) metres centred 3.65 m up; labeled, from 6 m before the facade to 6 m behind."""
    width, height = window
    small = {"name": "inspector", "radius_xy": 0.34, "radius_z": 0.35, "tracking_margin": 0.05,
             "max_speed_xy": 2.0, "max_speed_z": 1.5, "max_acceleration": 2.0}
    z0, z1 = 3.65 - height / 2, 3.65 + height / 2
    x0, x1 = -width / 2, width / 2
    gap = 1e-3  # panels 1 mm apart, so that each stays a closed box of its own (the mesh is watertight)
    panels = [((-13.0, 0.0), (x0 - gap, 11.0)), ((x1 + gap, 0.0), (13.0, 11.0)), ((x0, 0.0), (x1, z0)),
              ((x0, z1), (x1, 11.0))]
    facade = trimesh.util.concatenate([
        trimesh.creation.box(bounds=[(lo[0], -0.15, lo[1]), (hi[0], 0.15, hi[1])]) for lo, hi in panels])
    xs = (np.arange(n) - (n - 1) / 2) * 1.6
    near = np.c_[xs, np.full(n, -6.0) - (np.arange(n) % 2) * 1.5, 2.5 + (np.arange(n) % 3) * 1.2]
    far = near * [1, -1, 1]
    site = {"flight_volume": {"lower": [-12.0, -10.0, 0.5], "upper": [12.0, 10.0, 10.0]},
            "meshes": [{"name": "facade", "file": "facade.stl", "units": "m"}]}
    return _scene(f"window facade ({n} drones, window {width:g} × {height:g} m)", site, [small], ["inspector"] * n,
                  {"before": near, "behind": far}, [{"to": "behind", "assignment": "labeled"}]), \
        {"facade.stl": facade}


def crowd_wall(n: int = 250) -> tuple[dict, dict]:
    """``n`` drones in a block 12 m before a wall (25 columns 1.2 m apart, rows 1.5 m apart) fly to
    the mirrored block behind it, unlabeled; the wall has two full-height gaps 3 m wide at x = ±6 m."""
    columns = 25
    rows = -(-n // columns)
    xs = (np.arange(columns) - (columns - 1) / 2) * 1.2
    near = np.array([(x, -12.0 - 1.0 * (r % 2), 1.5 + 1.5 * r) for r in range(rows) for x in xs])[:n]
    far = near * [1, -1, 1]
    wall = [((-40.0, -0.3, 0.0), (-7.5, 0.3, 20.0)), ((-4.5, -0.3, 0.0), (4.5, 0.3, 20.0)),
            ((7.5, -0.3, 0.0), (40.0, 0.3, 20.0))]
    site = {"flight_volume": {"lower": [-30.0, -20.0, 0.5], "upper": [30.0, 20.0, 1.5 * rows + 2.0]},
            "keep_out": [{"name": f"wall {k}", "lower": list(lo), "upper": list(hi)}
                         for k, (lo, hi) in enumerate(wall)]}
    return _scene(f"crowd wall ({n} drones)", site, [QUAD], ["quad"] * n, {"near": near, "far": far},
                  [{"to": "far", "assignment": "unlabeled"}]), {}


def pillar_field(n: int = 1000, pillars: int = 4) -> tuple[dict, dict]:
    """``n`` drones in a block south of a ``pillars`` × ``pillars`` grid of round pillars (radius
    1 m, 8 m apart, 30 m tall, all in one mesh file) fly to the mirrored block north of it, unlabeled."""
    columns, layers = 25, 8
    rows = -(-n // (columns * layers))
    xs = (np.arange(columns) - (columns - 1) / 2) * 1.5
    block = np.array([(x, -20.0 - 1.5 * y, 2.0 + 1.5 * r) for r in range(rows) for y in range(layers)
                      for x in xs])[:n]
    far = block * [1, -1, 1]
    centres = (np.arange(pillars) - (pillars - 1) / 2) * 8.0
    field = trimesh.util.concatenate([
        trimesh.creation.cylinder(radius=1.0, height=30.0, sections=24,
                                  transform=trimesh.transformations.translation_matrix((x, y, 15.0)))
        for x in centres for y in centres])
    site = {"flight_volume": {"lower": [-25.0, -35.0, 1.0], "upper": [25.0, 35.0, 1.5 * rows + 3.5]},
            "meshes": [{"name": "pillars", "file": "pillars.stl", "units": "m"}]}
    return _scene(f"pillar field ({n} drones, {pillars * pillars} pillars)", site, [QUAD], ["quad"] * n,
                  {"south": block, "north": far}, [{"to": "north", "assignment": "unlabeled"}]), \
        {"pillars.stl": field}


def write_scene(built: tuple[dict, dict], folder: Path, name: str) -> Path:
    """Write a builder's scene (as ``name``.json) and its mesh files into ``folder``; the path."""
    scene, files = built
    folder.mkdir(parents=True, exist_ok=True)
    for file, mesh in files.items():
        mesh.export(folder / file)
    path = folder / f"{name}.json"
    path.write_text(json.dumps(scene, indent=1))
    return path
