"""Mixed fleets: the pair shape against the exact Minkowski sum, and formation checks that measure
each point pair only with the drones that can stand there (against brute force)."""

import sys

import numpy as np
import pytest
from pydantic import TypeAdapter
from scipy.optimize import minimize

from conftest import ROOT
from core.clearance import ClearanceModel, pair_radii
from core.errors import SceneError
from core.pipeline import plan
from core.planning import TransitionMethod
from core.scene import scene_from_dict
from core.scene.model import Scene
from core.scene.occupants import crowded_pairs, possible_shapes

sys.path.insert(0, str(ROOT / "bench"))
import stress_scenes  # noqa: E402  (the invented stress scenes live with the benchmarks)


def _parsed(data: dict) -> Scene:
    """The scene model without the loader's checks (random points crowd on purpose)."""
    return TypeAdapter(Scene).validate_python(data)


def _support(axes: np.ndarray, u: np.ndarray) -> np.ndarray:
    """Support function of the axis-aligned ellipsoid with half-axes ``axes`` in directions ``u`` (M, 3)."""
    return np.linalg.norm(u * axes, axis=-1)


@pytest.mark.parametrize("seed", range(4))
def test_pair_shape_contains_the_minkowski_sum_of_the_two_ellipsoids(seed):
    """A convex set C lies in D exactly when h_C ≤ h_D in every direction, and the support function
    of a Minkowski sum is the sum of the support functions (Rockafellar, "Convex Analysis", 1970,
    §13). Checked on 20 000 random directions and by scipy's minimiser of h_D − h_A − h_B over the
    sphere from 20 starts; the pair shape touches the sum (equal support) somewhere."""
    rng = np.random.default_rng(seed)
    a, b = rng.uniform(0.1, 1.2, 3), rng.uniform(0.1, 1.2, 3)
    r = pair_radii(a[None], b[None])[0]
    u = rng.normal(size=(20_000, 3))
    u /= np.linalg.norm(u, axis=1, keepdims=True)
    gap = _support(r, u) - _support(a, u) - _support(b, u)
    assert gap.min() >= -1e-12

    def slack(v):
        v = v / np.linalg.norm(v)
        return float((_support(r, v[None]) - _support(a, v[None]) - _support(b, v[None]))[0])

    found = min(minimize(slack, rng.normal(size=3), method="Nelder-Mead", options={"xatol": 1e-10, "fatol": 1e-12}).fun
                for _ in range(20))
    assert found >= -1e-9
    # equal shapes: the enclosing ellipsoid is the exact sum, half-axes a + a
    assert np.allclose(pair_radii(a[None], a[None])[0], 2 * a)


def _mixed_scene(assignments: list[str], rng) -> dict:
    """Three drone types, 12 drones, random points in a 6 m cube for three formations."""
    types = [{"name": n, "radius_xy": rx, "radius_z": rz, "max_speed_xy": 3.0, "max_speed_z": 2.0,
              "max_acceleration": 2.0} for n, rx, rz in (("big", 0.7, 1.1), ("mid", 0.35, 0.6), ("small", 0.15, 0.35))]
    kinds = rng.permutation(["big"] * 2 + ["mid"] * 4 + ["small"] * 6).tolist()
    names = ["a", "b", "c"]
    formations = [{"name": k, "points": rng.uniform(0.0, 6.0, size=(12, 3)).round(3).tolist(), "groups": kinds}
                  for k in names]
    transitions = [{"to": names[(k + 1) % 3], "assignment": m} for k, m in enumerate(assignments)]
    return {"name": "mixed", "site": {"flight_volume": {"lower": [-1, -1, -1], "upper": [7, 7, 7]}},
            "fleet": {"types": types, "drones": [{"id": f"d{i}", "type": t} for i, t in enumerate(kinds)]},
            "formations": formations, "timeline": {"start": "a", "transitions": transitions}}


def _brute_force_crowded(data: dict) -> dict[str, set[tuple[int, int]]]:
    """Per formation the point pairs some two possible occupants are too close on, by enumeration:
    occupants follow the timeline drone by drone (labeled: same index; grouped: any drone of the
    group; unlabeled: anyone), every pair measured with its own pair shape, no KD-tree."""
    kinds = [d["type"] for d in data["fleet"]["drones"]]
    axes = {t["name"]: np.array([t["radius_xy"], t["radius_xy"], t["radius_z"]]) for t in data["fleet"]["types"]}
    groups = kinds  # every formation's groups are the drone types in fleet order
    n = len(kinds)
    occupants = {f["name"]: [set() for _ in range(n)] for f in data["formations"]}
    current = [{i} for i in range(n)]  # drones that can stand on each point of the current formation
    occupants["a"] = [c.copy() for c in current]
    for tr in data["timeline"]["transitions"]:
        if tr["assignment"] == "labeled":
            current = [{i} for i in range(n)]
        elif tr["assignment"] == "unlabeled":
            current = [set(range(n)) for _ in range(n)]
        else:
            current = [set().union(*(current[q] for q in range(n) if groups[q] == groups[p])) for p in range(n)]
        occupants[tr["to"]] = [o | c for o, c in zip(occupants[tr["to"]], current, strict=True)]
    out = {}
    for f in data["formations"]:
        p, who = np.array(f["points"]), occupants[f["name"]]
        if not any(who):
            who = [set(range(n)) for _ in range(n)]
        bad = set()
        for i in range(n):
            for j in range(i + 1, n):
                for di in who[i]:
                    for dj in who[j]:
                        if di != dj and np.linalg.norm((p[i] - p[j]) / pair_radii(
                                axes[kinds[di]][None], axes[kinds[dj]][None])[0]) < 1.0:
                            bad.add((i, j))
        out[f["name"]] = bad
    return out


@pytest.mark.parametrize("seed, assignments", [(1, ["labeled", "grouped", "labeled"]),
                                               (2, ["grouped", "grouped", "grouped"]),
                                               (3, ["grouped", "unlabeled", "labeled"])])
def test_crowded_pairs_match_brute_force_over_possible_occupants(seed, assignments):
    rng = np.random.default_rng(seed)
    data = _mixed_scene(assignments, rng)
    scene = _parsed(data)
    reference = _brute_force_crowded(data)
    shapes = possible_shapes(scene)
    assert sum(len(v) for v in reference.values()) > 0  # the random points do crowd somewhere
    for f in scene.formations:
        pairs, ratios = crowded_pairs(f.positions, scene.fleet.clearance, shapes[f.name])
        assert {tuple(map(int, q)) for q in pairs} == reference[f.name]
        assert np.all(ratios < 1.0)
    # without occupants every pair is measured with the fleet's largest pair shape: a superset
    for f in scene.formations:
        pairs, _ = crowded_pairs(f.positions, scene.fleet.clearance, None)
        assert {tuple(map(int, q)) for q in pairs} >= reference[f.name]


def test_light_drones_pads_pass_when_only_light_drones_land_there():
    """Scouts' pads 1.2 m apart (a scout pair needs 0.4 m sideways, two camera drones 1.4 m):
    grouped by type they load; unlabeled — any drone may land on any pad — the loader names the
    pair on the landing formation (the start's pads still hold each drone's own type)."""
    data, _ = stress_scenes.mixed_crown(4, 12)
    scene = scene_from_dict(data)
    clearance = scene.fleet.clearance
    assert clearance.pair_envelope[0] == pytest.approx(1.4)
    pads = possible_shapes(scene)["pads"]
    assert pads[:4].sum() == 4 and pads[4:].sum() == 12  # each pad: its own type only
    for t in data["timeline"]["transitions"]:
        t["assignment"] = "unlabeled"
    with pytest.raises(SceneError) as info:
        scene_from_dict(data)
    text = "\n".join(f"{w}: {y}" for w, y in info.value.problems)
    assert "formations[2] ('landed').points[4] and points[5]" in text and "1.200 m" in text
    assert "formations[0]" not in text


def test_mixed_team_from_tight_pads_plans_smoothed_on_one_roadmap_layer_per_shape():
    """The scouts' pads are closer than two camera drones may be: the search keeps each pair only
    as far apart as its own pair shape needs (one roadmap layer per shape), so both transitions
    fly smoothed and the independent verifier passes the plan."""
    data, _ = stress_scenes.mixed_crown(4, 12)  # the team of 4 heavy and 12 light drones the issue measured
    result = plan(scene_from_dict(data))
    assert result.verified and result.roadmap.layers == 2
    assert [t.method for t in result.transitions] == [TransitionMethod.SMOOTHED] * 2
    pads = scene_from_dict(data).formation("pads").positions
    assert np.linalg.norm(pads[4] - pads[5]) == pytest.approx(1.2)  # closer than the heavy pair's 1.4 m


def test_unknown_formations_and_mismatched_counts_allow_anyone():
    data = _mixed_scene(["labeled", "grouped", "labeled"], np.random.default_rng(0))
    data["formations"][2]["points"] = data["formations"][2]["points"][:5]
    scene = _parsed(data)
    shapes = possible_shapes(scene)
    assert shapes["c"].shape == (5, 3) and shapes["c"].all()
    assert shapes["a"].sum(axis=1).max() == 1  # start and labeled: one shape per point
    kinds = ClearanceModel(scene.fleet.semi_axes).kind_of
    assert np.array_equal(np.argmax(shapes["a"], axis=1), kinds)
