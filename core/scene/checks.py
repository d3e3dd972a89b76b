"""Consistency checks of a parsed scene: references, counts, spacing, volume and keep-out boxes."""

from __future__ import annotations

from collections import Counter
from pathlib import Path

import numpy as np
import trimesh

from .. import limits
from ..errors import SceneError
from .meshes import SiteMesh, load_site_meshes
from .model import Box, DroneType, Scene
from .occupants import crowded_pairs, possible_shapes

MAX_LISTED = 5  # problems listed per kind before "and N more"


def box_distance_ratio(points: np.ndarray, bounds: np.ndarray, semi_axes: np.ndarray) -> np.ndarray:
    """Distance ``(M,)`` from points ``(M, 3)`` to an axis-aligned box ``(2, 3)``, in units of the
    ellipsoid half-axes ``(3,)`` or ``(M, 3)``: < 1 means the clearance ellipsoid touches the box."""
    gap = np.maximum(bounds[0] - points, 0.0) + np.maximum(points - bounds[1], 0.0)
    return np.linalg.norm(gap / semi_axes, axis=-1)


def format_xyz(point: np.ndarray, spec: str = "g") -> str:
    """``(x, y, z)`` with each coordinate formatted by ``spec`` (for messages)."""
    return "(" + ", ".join(format(c, spec) for c in point) + ")"


def check_scene(scene: Scene, source: str, base_dir: Path, meshes: tuple[SiteMesh, ...] | None = None
                ) -> list[tuple[str, str]]:
    """Every consistency problem of ``scene`` as ``(location, reason)``; empty when it is sound.
    ``base_dir`` is the folder mesh paths are relative to; the site's meshes are read from there
    unless already loaded ones are passed as ``meshes``."""
    problems: list[tuple[str, str]] = _check_fleet_size(scene, source)
    if problems:
        return problems
    problems += _check_names(scene, source)
    if problems:
        return problems
    problems += _check_fleet(scene, source)
    problems += _check_site(scene, source)
    problems += _check_mesh_files(scene, source, base_dir)
    problems += _check_formations(scene, source)
    problems += _check_timeline(scene, source)
    if scene.site.meshes and not problems:
        if meshes is None:
            try:
                meshes = load_site_meshes(scene.site, base_dir, source)
            except SceneError as exc:
                return exc.problems
        problems += check_points_clear_of_meshes(scene, meshes, source)
    return problems


def check_points_clear_of_meshes(scene: Scene, meshes: tuple[SiteMesh, ...], source: str) -> list[tuple[str, str]]:
    """Exact (trimesh) check that no formation point's clearance ellipsoid touches a mesh, or lies
    inside a watertight one, for every drone shape that can stand on the point
    (:func:`~core.scene.occupants.possible_shapes`); one problem per point, naming the formation,
    point and mesh."""
    clearance = scene.fleet.clearance
    occupants = possible_shapes(scene)
    axes_list = np.unique(clearance.kind_axes, axis=0)
    problems = []
    for m in meshes:
        for i, f in enumerate(scene.formations):
            worst = np.full(len(f.points), np.inf)
            inside = np.zeros(len(f.points), dtype=bool)
            for axes in axes_list:
                kinds = np.all(clearance.kind_axes == axes, axis=1)
                rows = np.nonzero(occupants[f.name][:, kinds].any(axis=1))[0]
                if not len(rows):
                    continue
                scaled = trimesh.Trimesh(m.mesh.vertices / axes, m.mesh.faces, process=False)
                p = f.positions[rows] / axes
                worst[rows] = np.minimum(worst[rows], trimesh.proximity.closest_point(scaled, p)[1])
                if m.watertight:
                    inside[rows] |= scaled.contains(p)
            for k in np.nonzero(inside | (worst < 1.0))[0]:
                why = "is inside" if inside[k] else f"is too close to ({worst[k]:.2f} of the clearance)"
                problems.append((f"{source}: formations[{i}] ({f.name!r}).points[{k}]",
                                 f"{format_xyz(f.positions[k], '.2f')} {why} mesh {m.name!r}"))
    return problems


def occupant_axes(kind_axes: np.ndarray, occupants: np.ndarray) -> np.ndarray:
    """``(P, 3)`` the largest clearance half-axes (metres) of the drone kinds ``kind_axes``
    ``(K, 3)`` that can stand on each point (``occupants`` ``(P, K)`` from
    :func:`~core.scene.occupants.possible_shapes`)."""
    return np.where(occupants[:, :, None], kind_axes[None], 0.0).max(axis=1)


def _duplicates(names: list[str]) -> list[str]:
    return [n for n, c in Counter(names).items() if c > 1]


def _check_fleet_size(scene: Scene, source: str) -> list[tuple[str, str]]:
    n = len(scene.fleet.drones)
    if n <= limits.MAX_DRONES:
        return []
    need_gb = limits.ASSIGNMENT_BYTES_PER_PAIR * n * n / 1e9
    return [(f"{source}: fleet.drones", f"{n} drones: Skyloom plans at most {limits.MAX_DRONES} (the goal "
             f"assignment alone would need about {need_gb:.1f} GB of memory for {n}); split the fleet into "
             "several scenes")]


def _check_names(scene: Scene, source: str) -> list[tuple[str, str]]:
    out = []
    by_folded: dict[str, str] = {}
    for i, d in enumerate(scene.fleet.drones):
        other = by_folded.setdefault(d.id.casefold(), d.id)
        if other != d.id:
            out.append((f"{source}: fleet.drones[{i}].id", f"{d.id!r} and {other!r} differ only in case; they would "
                        "share one trajectory file on disks that ignore case"))
    for field, names in (
        ("fleet.types", [t.name for t in scene.fleet.types]),
        ("fleet.drones", [d.id for d in scene.fleet.drones]),
        ("formations", [f.name for f in scene.formations]),
    ):
        for dup in _duplicates(names):
            out.append((f"{source}: {field}", f"name {dup!r} is used more than once"))
    types = {t.name for t in scene.fleet.types}
    for i, d in enumerate(scene.fleet.drones):
        if d.type not in types:
            out.append((f"{source}: fleet.drones[{i}].type", f"unknown drone type {d.type!r}"))
    return out


def box_problem(box: Box) -> str | None:
    """Why ``box`` (flight volume or keep-out box) is not a box, or None. The designer's site
    editor refuses such an edit with this text as it is typed."""
    if np.any(box.bounds[1] <= box.bounds[0]):
        return f"upper {box.upper} must exceed lower {box.lower} on every axis"
    return None


def drone_type_problem(t: DroneType) -> str | None:
    """Why drone type ``t``'s radii cannot be flown (the field named is ``radius_z``), or None.
    The designer's fleet table refuses such an edit with this text as it is typed."""
    if t.radius_z <= t.radius_xy:
        return (f"must exceed radius_xy ({t.radius_z} <= {t.radius_xy}): rotor downwash needs more vertical "
                "than horizontal spacing")
    return None


def _check_fleet(scene: Scene, source: str) -> list[tuple[str, str]]:
    fleet = scene.fleet
    out = [(f"{source}: fleet.types[{k}].radius_z", problem) for k, t in enumerate(fleet.types)
           if (problem := drone_type_problem(t)) is not None]
    index = {t.name: k for k, t in enumerate(fleet.types)}
    seen: dict[frozenset[str], int] = {}
    for k, pair in enumerate(fleet.pairs):
        where = f"{source}: fleet.pairs[{k}]"
        unknown = [name for name in pair.types if name not in index]
        if unknown:
            out.append((f"{where}.types", f"unknown drone type {unknown[0]!r}"))
            continue
        key = frozenset(pair.types)
        if key in seen:
            out.append((f"{where}.types", f"the pair {pair.types[0]!r}, {pair.types[1]!r} is already given in "
                        f"fleet.pairs[{seen[key]}]"))
        seen.setdefault(key, k)
        if pair.radius_z <= pair.radius_xy:
            out.append((f"{where}.radius_z", f"must exceed radius_xy ({pair.radius_z} <= {pair.radius_xy}): rotor "
                        "downwash needs more vertical than horizontal spacing"))
    return out or _check_shifts(scene, source)


def _check_shifts(scene: Scene, source: str) -> list[tuple[str, str]]:
    """A downwash shift difference must stay below the pair's vertical half-axis: otherwise two
    drones at one spot would not even conflict."""
    fleet = scene.fleet
    index = {t.name: k for k, t in enumerate(fleet.types)}
    first: dict[str, int] = {}  # a drone of each type that flies
    for i, d in enumerate(fleet.drones):
        first.setdefault(d.type, i)
    out = []
    for a, i in first.items():
        for b, j in first.items():
            difference = fleet.types[index[a]].downwash_shift - fleet.types[index[b]].downwash_shift
            vertical = float(fleet.clearance.radii(np.array([i]), np.array([j]))[0, 2])
            if difference >= vertical:
                out.append((f"{source}: fleet.types[{index[a]}].downwash_shift",
                            f"{fleet.types[index[a]].downwash_shift} m is {difference:.3f} m more than {b!r}'s, "
                            f"which reaches the pair's whole vertical clearance ({vertical:.3f} m): a {b!r} drone "
                            "just above it would need no room at all; use a smaller shift or a larger fleet.pairs "
                            "entry"))
    return out


def _check_site(scene: Scene, source: str) -> list[tuple[str, str]]:
    out = []
    boxes = [("site.flight_volume", scene.site.flight_volume)]
    boxes += [(f"site.keep_out[{k}]", b) for k, b in enumerate(scene.site.keep_out)]
    out += [(f"{source}: {where}", problem) for where, box in boxes if (problem := box_problem(box)) is not None]
    extent = np.ptp(scene.site.flight_volume.bounds, axis=0)
    if np.any(extent > limits.MAX_SITE_EXTENT_M):
        out.append((f"{source}: site.flight_volume", f"spans {format_xyz(extent)} m; each side may be at most "
                    f"{limits.MAX_SITE_EXTENT_M:g} m"))
    return out


def _check_mesh_files(scene: Scene, source: str, base_dir: Path) -> list[tuple[str, str]]:
    return [
        (f"{source}: site.meshes[{k}].file", f"mesh file {m.file!r} not found (looked in {base_dir})")
        for k, m in enumerate(scene.site.meshes) if not (base_dir / m.file).is_file()
    ]


def _check_formations(scene: Scene, source: str) -> list[tuple[str, str]]:
    out = []
    n = len(scene.fleet.drones)
    clearance = scene.fleet.clearance
    volume = scene.site.flight_volume.bounds
    occupants = possible_shapes(scene)
    for k, f in enumerate(scene.formations):
        where = f"{source}: formations[{k}] ({f.name!r})"
        if len(f.points) != n:
            out.append((where, f"has {len(f.points)} points but the fleet has {n} drones"))
            continue
        if f.groups is not None and len(f.groups) != len(f.points):
            out.append((f"{where}.groups", f"has {len(f.groups)} labels for {len(f.points)} points"))
        p = f.positions
        axes = occupant_axes(clearance.kind_axes, occupants[f.name])
        outside = np.nonzero(np.any((p < volume[0]) | (p > volume[1]), axis=1))[0]
        out += _listed([(f"{where}.points[{i}]", f"{format_xyz(p[i])} is outside the flight volume") for i in outside])
        for box in scene.site.keep_out:
            hit = np.nonzero(box_distance_ratio(p, box.bounds, axes) < 1.0)[0]
            out += _listed([(f"{where}.points[{i}]", f"{format_xyz(p[i])} puts a drone's clearance ellipsoid inside "
                             f"keep-out box {box.name!r}") for i in hit])
        pairs, ratios = crowded_pairs(p, clearance, occupants[f.name])
        out += _listed([
            (f"{where}.points[{i}] and points[{j}]",
             f"are closer than the clearance of drones that can stand there (separation ratio {r:.3f} < 1; "
             f"distance {np.linalg.norm(p[i] - p[j]):.3f} m)")
            for (i, j), r in zip(pairs, ratios, strict=True)
        ])
    return out


def _listed(problems: list[tuple[str, str]]) -> list[tuple[str, str]]:
    """The first :data:`MAX_LISTED` problems, then one line counting the rest."""
    if len(problems) <= MAX_LISTED:
        return problems
    where = problems[MAX_LISTED][0].split(".points")[0]
    return problems[:MAX_LISTED] + [(where, f"... and {len(problems) - MAX_LISTED} more like this")]


def _check_timeline(scene: Scene, source: str) -> list[tuple[str, str]]:
    out = []
    tl = scene.timeline
    fixed = tl.start_hold + sum(t.hold + (0.0 if t.duration == "fastest" else t.duration) for t in tl.transitions)
    if fixed > limits.MAX_TIMELINE_S:
        out.append((f"{source}: timeline", f"durations and holds add up to {fixed:.0f} s; a timeline may last at "
                    f"most {limits.MAX_TIMELINE_S:.0f} s (7 days)"))
    names = {f.name: f for f in scene.formations}
    if scene.timeline.start not in names:
        return [(f"{source}: timeline.start", f"unknown formation {scene.timeline.start!r}")]
    previous = names[scene.timeline.start]
    for k, tr in enumerate(scene.timeline.transitions):
        where = f"{source}: timeline.transitions[{k}]"
        if tr.to not in names:
            out.append((f"{where}.to", f"unknown formation {tr.to!r}"))
            continue
        target = names[tr.to]
        if tr.assignment == "grouped":
            if previous.groups is None or target.groups is None:
                missing = previous.name if previous.groups is None else target.name
                out.append((f"{where}.assignment", f"'grouped' needs group labels on formation {missing!r}"))
            elif Counter(previous.groups) != Counter(target.groups):
                out.append((
                    f"{where}.assignment",
                    f"group sizes differ between {previous.name!r} {dict(Counter(previous.groups))} "
                    f"and {target.name!r} {dict(Counter(target.groups))}",
                ))
        previous = target
    return out
