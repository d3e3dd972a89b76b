"""String pulling of discrete plans (core.planning.string_pulling): straighter paths that keep the
obstacle margins (checked against trimesh's exact signed distance) and the pair clearances
(checked by the independent discrete check), without lengthening any step."""

import numpy as np
import trimesh

from core.clearance import ClearanceModel
from core.obstacles import ClearanceField, FleetFields
from core.planning.string_pulling import pull_strings
from core.roadmap.build import RoadmapSettings, build_roadmap
from core.scene.meshes import SiteMesh
from core.search import lacam
from core.verify.discrete import check_discrete_plan

AXES = np.array([0.3, 0.3, 0.5])
VOLUME = np.array([[0.0, 0.0, 0.5], [10.0, 10.0, 5.0]])


def _pillar():
    return trimesh.creation.box(extents=(2.0, 2.0, 6.0),
                                transform=trimesh.transformations.translation_matrix((5.0, 5.0, 3.0)))


def _step_lengths(positions: np.ndarray) -> np.ndarray:
    return np.linalg.norm(np.diff(positions, axis=1), axis=2)


def test_a_zig_zag_in_open_air_becomes_the_straight_segment():
    """In free space the shortest path between two points is the segment joining them (Euclid): a
    lone drone's zig-zag is pulled onto it, its step ends at the old fractions of the way (a wait
    stays a wait)."""
    path = np.array([[1.0, 1.0, 2.0], [2.0, 3.0, 2.5], [2.0, 3.0, 2.5], [4.0, 2.0, 3.0], [6.0, 5.0, 2.0]])
    pulled = pull_strings(path[None], ClearanceModel(AXES[None]), None)[0]
    chord = path[-1] - path[0]
    offsets = pulled - path[0]
    assert np.allclose(np.cross(offsets, chord), 0.0, atol=1e-12)  # every step end on the segment
    assert np.isclose(_step_lengths(pulled[None]).sum(), np.linalg.norm(chord))
    assert np.allclose(pulled[1], pulled[2]) and (pulled[[0, -1]] == path[[0, -1]]).all()


def test_pulled_paths_around_a_pillar_keep_clear_of_it_by_trimeshs_exact_distance():
    """Roadmap paths of 12 drones around a pillar, pulled: every point of every new step stays at
    least one clearance radius from the pillar, measured with trimesh.proximity.signed_distance on
    the pillar scaled by the clearance half-axes (the unit-ball rule of the field's docstring)."""
    pillar = _pillar()
    field = ClearanceField(AXES, [SiteMesh("pillar", pillar, ())], VOLUME)
    roadmap = build_roadmap(field, 2 * AXES, RoadmapSettings(samples=1200, seed=5))
    rng = np.random.default_rng(4)
    west = np.nonzero(roadmap.vertices[:, 0] < 2.5)[0]
    east = np.nonzero(roadmap.vertices[:, 0] > 7.5)[0]
    labels = roadmap.component_labels()
    chosen: list[int] = []
    for pool in (west, east):
        picked = []
        for v in rng.permutation(pool):
            if labels[v] == labels[west[0]] and all(not roadmap.action_conflicts[v, c] for c in chosen + picked):
                picked.append(int(v))
            if len(picked) == 12:
                break
        chosen += picked
    starts, goals = np.array(chosen[:12]), np.array(chosen[12:])
    result = lacam(roadmap, starts, goals, time_limit=30, refine_share=0.2)
    steps = max(len(p) for p in result.paths)
    positions = roadmap.vertices[np.array([list(p) + [p[-1]] * (steps - len(p)) for p in result.paths])]
    model = ClearanceModel(np.tile(AXES, (12, 1)))
    pulled = pull_strings(positions, model, FleetFields.uniform(field, len(positions)))

    assert (pulled[:, [0, -1]] == positions[:, [0, -1]]).all()
    assert check_discrete_plan(pulled, model) == []
    assert np.all(_step_lengths(pulled) <= _step_lengths(positions) + 1e-9)  # no step needs more time
    assert _step_lengths(pulled).sum() < 0.97 * _step_lengths(positions).sum()  # and paths got shorter
    t = np.linspace(0.0, 1.0, 25)
    a, b = pulled[:, :-1].reshape(-1, 3), pulled[:, 1:].reshape(-1, 3)
    points = (a[:, None] + t[None, :, None] * (b - a)[:, None]).reshape(-1, 3)
    scaled = trimesh.Trimesh(pillar.vertices / AXES, pillar.faces)
    distance = -trimesh.proximity.signed_distance(scaled, points / AXES)  # > 0 outside
    assert distance.min() >= 1.0


def test_a_shortcut_through_a_waiting_drone_is_refused():
    """Drone 0 detours around drone 1, which hovers on the straight line between drone 0's ends:
    pulling may not cut through it (the pair check), so the pulled plan keeps the independent
    discrete check and drone 0 still passes at least one clearance away."""
    detour = np.array([[1.0, 5.0, 2.0], [3.0, 6.5, 2.0], [5.0, 7.0, 2.0], [7.0, 6.5, 2.0], [9.0, 5.0, 2.0]])
    hover = np.repeat(np.array([[5.0, 5.0, 2.0]]), 5, axis=0)
    model = ClearanceModel(np.tile(AXES, (2, 1)))
    positions = np.stack([detour, hover])
    assert check_discrete_plan(positions, model) == []
    pulled = pull_strings(positions, model, None)
    assert check_discrete_plan(pulled, model) == []
    assert (pulled[1] == hover).all()
    gap = np.linalg.norm((pulled[0] - hover[0]) / model.radii(np.array([0]), np.array([1])), axis=1)
    assert gap.min() >= 1.0
    assert _step_lengths(pulled[:1]).sum() <= _step_lengths(detour[None]).sum() + 1e-12


def test_range_boxes_match_the_brute_force_bounding_boxes():
    """The sparse table's box over step ends a … b equals numpy's min / max over that slice, also
    after a drone's path changes."""
    from core.planning.string_pulling import _RangeBoxes

    rng = np.random.default_rng(2)
    positions = rng.normal(size=(5, 23, 3))
    boxes = _RangeBoxes(positions)
    positions[3] = rng.normal(size=(23, 3))
    boxes.update(3, positions[3])
    for a, b in [(0, 22), (0, 0), (4, 5), (7, 19), (21, 22), *rng.integers(0, 23, size=(30, 2))]:
        a, b = sorted((int(a), int(b)))
        low, high = boxes.over(a, b)
        assert np.array_equal(low, positions[:, a:b + 1].min(axis=1))
        assert np.array_equal(high, positions[:, a:b + 1].max(axis=1))
