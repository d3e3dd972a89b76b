"""Flight paths as a glTF 2.0 file (Khronos glTF 2.0 specification): one node per drone, each a
LINE_STRIP primitive, with the buffer embedded as a base64 data URI (``paths.gltf``)."""

from __future__ import annotations

import base64
import json

import numpy as np

from ..trajectory import FleetTrajectory

_FLOAT, _ARRAY_BUFFER, _LINE_STRIP = 5126, 34962, 3
PALETTE = np.array([  # our own twelve-colour cycle, linear RGB
    (0.90, 0.30, 0.20), (0.20, 0.55, 0.90), (0.30, 0.75, 0.35), (0.95, 0.70, 0.15),
    (0.60, 0.35, 0.80), (0.10, 0.75, 0.75), (0.85, 0.40, 0.65), (0.55, 0.55, 0.20),
    (0.40, 0.40, 0.95), (0.95, 0.50, 0.35), (0.35, 0.65, 0.55), (0.70, 0.70, 0.70),
])


def paths_gltf(traj: FleetTrajectory, samples_per_piece: int, extras: dict) -> str:
    """glTF JSON text of every drone's path, ``samples_per_piece`` points per piece (z up in our
    scenes; glTF is y up, so the root node rotates −90° about x)."""
    tau = np.linspace(0, 1, samples_per_piece, endpoint=False)
    t = np.r_[(traj.breaks[:-1, None] + traj.durations[:, None] * tau).ravel(), traj.duration]
    points = traj.evaluate(t).astype(np.float32)  # (T, N, 3)
    blob = bytearray()
    accessors, views, meshes, nodes = [], [], [], []
    for k, drone in enumerate(traj.drone_ids):
        data = np.ascontiguousarray(points[:, k])
        views.append({"buffer": 0, "byteOffset": len(blob), "byteLength": data.nbytes, "target": _ARRAY_BUFFER})
        blob += data.tobytes()
        accessors.append({"bufferView": k, "componentType": _FLOAT, "count": len(data), "type": "VEC3",
                          "min": data.min(axis=0).tolist(), "max": data.max(axis=0).tolist()})
        meshes.append({"name": drone, "primitives": [{"attributes": {"POSITION": k}, "mode": _LINE_STRIP,
                                                      "material": k % len(PALETTE)}]})
        nodes.append({"name": drone, "mesh": k})
    doc = {
        "asset": {"version": "2.0", "generator": "Skyloom", "extras": extras},
        "scene": 0,
        "scenes": [{"nodes": [len(nodes)]}],
        "nodes": nodes + [{"name": "site (z up)", "rotation": [-np.sqrt(0.5), 0, 0, np.sqrt(0.5)],
                           "children": list(range(len(nodes)))}],
        "meshes": meshes,
        "materials": [{"pbrMetallicRoughness": {"baseColorFactor": [*c, 1.0]}, "name": f"path {i}"}
                      for i, c in enumerate(PALETTE.tolist())],
        "accessors": accessors,
        "bufferViews": views,
        "buffers": [{"byteLength": len(blob),
                     "uri": "data:application/octet-stream;base64," + base64.b64encode(bytes(blob)).decode()}],
    }
    return json.dumps(doc)
