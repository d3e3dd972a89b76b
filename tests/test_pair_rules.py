"""Pair rules of mixed fleets: the per-pair table and the downwash shift (a heavier drone needs more
room below it than above it), against brute force and through the independent verifier."""

import numpy as np
import pytest
from scipy.spatial import Delaunay

from core.clearance import ClearanceModel
from core.errors import SceneError
from core.scene import scene_from_dict
from core.trajectory import FleetTrajectory
from core.verify import spec_from_scene, verify

HEAVY = {"name": "heavy", "radius_xy": 0.6, "radius_z": 1.0, "tracking_margin": 0.1, "max_speed_xy": 2.5,
         "max_speed_z": 1.5, "max_acceleration": 2.0, "downwash_shift": 0.4}
LIGHT = {"name": "light", "radius_xy": 0.15, "radius_z": 0.35, "tracking_margin": 0.05, "max_speed_xy": 4.0,
         "max_speed_z": 2.0, "max_acceleration": 3.0}


def _scene(points: list, pairs: list | None = None, heavy: dict = HEAVY) -> dict:
    fleet = {"types": [heavy, LIGHT], "drones": [{"id": "H", "type": "heavy"}, {"id": "L", "type": "light"}]}
    if pairs is not None:
        fleet["pairs"] = pairs
    return {"name": "pair rule", "site": {"flight_volume": {"lower": [-10, -10, 0.5], "upper": [10, 10, 15]}},
            "fleet": fleet, "formations": [{"name": "here", "points": points}],
            "timeline": {"start": "here", "transitions": [{"to": "here"}]}}


def _hovering(scene, points: np.ndarray) -> FleetTrajectory:
    """Both drones hover at ``points`` ``(2, 3)`` for 2 s (one piece of degree 5)."""
    return FleetTrajectory(np.array([0.0, 2.0]), np.repeat(points[:, None, None, :], 6, axis=2), scene.fleet.ids)


def test_shifted_pair_region_matches_a_brute_force_hull_of_the_shifted_ellipsoid():
    """The light drone's relative position ``d = p_light − p_heavy`` conflicts exactly when it lies
    in the pair ellipsoid moved down by the shift difference (the heavy drone's clearance centre
    sits 0.4 m below it). Brute force: the convex hull (scipy.spatial.Delaunay) of 4 000 points on
    that moved ellipsoid's surface; every random ``d`` away from the surface must agree with the
    model's ratio < 1."""
    model = ClearanceModel(np.array([[0.7, 0.7, 1.1], [0.2, 0.2, 0.4]]), np.array([0.4, 0.0]))
    r = model.radii(np.array([0]), np.array([1]))[0]
    rng = np.random.default_rng(2)
    u = rng.normal(size=(4000, 3))
    u /= np.linalg.norm(u, axis=1, keepdims=True)
    hull = Delaunay(u * r + [0.0, 0.0, -0.4])  # the region of d: centred 0.4 m below the heavy drone
    d = rng.uniform(-1.2, 1.2, size=(20_000, 3)) * r + [0.0, 0.0, -0.4]
    ratio = model.ratio(np.zeros(len(d), int), np.ones(len(d), int), np.zeros((len(d), 3)), d)
    clear_of_surface = np.abs(ratio - 1.0) > 0.02
    inside = hull.find_simplex(d) >= 0
    assert np.array_equal(inside[clear_of_surface], (ratio < 1.0)[clear_of_surface])
    # the same pair seen from the light drone gives the same ratios
    assert np.allclose(model.ratio(np.ones(len(d), int), np.zeros(len(d), int), d, np.zeros((len(d), 3))), ratio)


def test_the_verifier_asks_more_room_below_a_heavy_drone_than_above_it():
    """Straight below the heavy drone the light one needs r_z + 0.4 m, above it r_z − 0.4 m
    (r_z = 1.0 + 0.35 enclosing-sum value with margins, from the pair's own half-axes). Hovering
    plans 5 cm either side of those gaps pass or fail the independent verifier accordingly."""
    data = _scene([[0, 0, 6], [3, 0, 6]])
    scene = scene_from_dict(data)
    spec = spec_from_scene(scene)
    vertical = float(scene.fleet.clearance.radii(np.array([0]), np.array([1]))[0, 2])
    for side, needed in ((-1.0, vertical + 0.4), (1.0, vertical - 0.4)):
        for extra, ok in ((0.05, True), (-0.05, False)):
            points = np.array([[0.0, 0.0, 6.0], [0.0, 0.0, 6.0 + side * (needed + extra)]])
            report = verify(_hovering(scene, points), spec)
            assert report.ok == ok, (side, extra, [v.describe() for v in report.violations])


def test_the_pair_table_replaces_the_enclosing_sum_for_that_pair_only():
    """``fleet.pairs`` gives heavy–light 1.0 m sideways and 1.6 m vertically, plus both tracking
    margins (0.15 m); heavy–heavy keeps the sum 2 × 0.7 / 2 × 1.1 m. Two drones 1.1 m apart at one
    height then fail the verifier (1.1 < 1.15) and pass at 1.2 m; without the table the enclosing
    sum (about 0.90 m sideways, Kurzhanski & Vályi's bound as in core.clearance) passes 1.1 m."""
    pairs = [{"types": ["heavy", "light"], "radius_xy": 1.0, "radius_z": 1.6}]
    with_table = scene_from_dict(_scene([[0, 0, 6], [3, 0, 6]], pairs))
    without = scene_from_dict(_scene([[0, 0, 6], [3, 0, 6]]))
    model = with_table.fleet.clearance
    assert np.allclose(model.radii(np.array([0]), np.array([1]))[0], [1.15, 1.15, 1.75])
    assert np.allclose(model.radii(np.array([0]), np.array([0]))[0], [1.4, 1.4, 2.2])
    points = np.array([[0.0, 0.0, 6.0], [1.1, 0.0, 6.0]])
    assert not verify(_hovering(with_table, points), spec_from_scene(with_table)).ok
    assert verify(_hovering(without, points), spec_from_scene(without)).ok
    points[1, 0] = 1.2
    assert verify(_hovering(with_table, points), spec_from_scene(with_table)).ok


@pytest.mark.parametrize(("pairs", "heavy", "where", "fragment"), [
    ([{"types": ["heavy", "medium"], "radius_xy": 1.0, "radius_z": 1.6}], HEAVY, "fleet.pairs[0].types",
     "unknown drone type 'medium'"),
    ([{"types": ["heavy", "light"], "radius_xy": 1.0, "radius_z": 1.6},
      {"types": ["light", "heavy"], "radius_xy": 1.0, "radius_z": 1.6}], HEAVY, "fleet.pairs[1].types",
     "already given in fleet.pairs[0]"),
    ([{"types": ["heavy", "light"], "radius_xy": 1.0, "radius_z": 0.8}], HEAVY, "fleet.pairs[0].radius_z",
     "must exceed radius_xy"),
    (None, {**HEAVY, "downwash_shift": 1.7}, "fleet.types[0].downwash_shift", "whole vertical clearance"),
])
def test_pair_table_and_shift_problems_name_the_field(pairs, heavy, where, fragment):
    with pytest.raises(SceneError) as caught:
        scene_from_dict(_scene([[0, 0, 6], [3, 0, 6]], pairs, heavy), source="s.json")
    assert any(w == f"s.json: {where}" and fragment in why for w, why in caught.value.problems), caught.value.problems
