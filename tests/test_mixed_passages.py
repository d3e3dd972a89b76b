"""Passages only the small drones of a mixed fleet fit through: the sample
(sample_scenes/viaduct_survey.json: one heavy camera drone and five light scouts) and the invented
stress scene bench/stress_scenes.py:mixed_slot. Each drone is planned on its own shape's roadmap;
the scouts use the opening that the camera drone cannot pass, and the plans keep the pair table
and the downwash shift."""

import sys

import numpy as np
import pytest

from conftest import ROOT
from core.executors import InlineExecutor
from core.pipeline import plan
from core.planning import PlanningContext
from core.planning.results import TransitionMethod
from core.scene import load_scene

sys.path.insert(0, str(ROOT / "bench"))
from stress_scenes import mixed_slot, write_scene  # noqa: E402  (the invented stress scenes live with the benchmarks)

SAMPLE = ROOT / "sample_scenes" / "viaduct_survey.json"
#: The opening and the arch as sample_scenes/make_samples.py builds them (x range, z range), metres.
OPENING = ((-1.5, 1.5), (2.0, 3.6))
ARCH = ((12.0, 18.0), (0.0, 8.0))


@pytest.fixture(scope="module")
def viaduct():
    scene = load_scene(SAMPLE)
    return scene, plan(scene, base_dir=SAMPLE.parent, executor=InlineExecutor())


def _crossings(result, drone: int) -> np.ndarray:
    """Positions ``(C, 3)`` where ``drone`` crosses the plane y = 0 (the wall's middle)."""
    times = np.linspace(0.0, result.trajectory.duration, 6000)
    y = result.trajectory.evaluate(times)[:, drone, 1]
    at = np.nonzero(np.sign(y[1:]) != np.sign(y[:-1]))[0]
    return result.trajectory.evaluate(times[at])[:, drone]


def test_each_shape_sees_its_own_passages():
    """The scouts' field finds the opening's centre free, the camera drone's finds it blocked."""
    scene = load_scene(SAMPLE)
    context = PlanningContext(scene, scene.planner, SAMPLE.parent, use_cache=False)
    centre = np.array([[0.0, 0.0, 2.8]])
    camera, scout = (context.fields.of_drone(scene.fleet.ids.index(name)) for name in ("CAM", "S1"))
    assert scout.segments_clear(centre + [0, -1.5, 0], centre + [0, 1.5, 0])[0]
    assert camera.margins(centre)[0] < 0


@pytest.mark.slow
def test_viaduct_plans_smoothed_with_scouts_through_the_opening(viaduct):
    scene, result = viaduct
    assert result.report.ok
    for t in result.transitions:
        assert t.method is TransitionMethod.SMOOTHED
        assert t.smoothing is not None and not t.smoothing.note
    through = {}
    for d, name in enumerate(scene.fleet.ids):
        where = _crossings(result, d)
        assert len(where) == 2, name  # out to the north face, back to the pads
        through[name] = ["opening" if OPENING[0][0] < x < OPENING[0][1] and OPENING[1][0] < z < OPENING[1][1]
                         else "arch" if ARCH[0][0] < x < ARCH[0][1] and z < ARCH[1][1] else "?"
                         for x, _, z in where]
    assert through["CAM"] == ["arch", "arch"]
    scouts = [v for k, v in through.items() if k != "CAM"]
    assert all(w != "?" for v in scouts for w in v)
    assert sum(v.count("opening") for v in scouts) >= 6, through  # most scout crossings take the short way


@pytest.mark.slow
def test_viaduct_plan_keeps_the_shifted_pair_rule_on_dense_samples(viaduct):
    """Independent of the verifier's sampling: every pair on 6 000 instants, with the pair
    half-axes and each drone's clearance centre (position − downwash_shift · e_z) computed here
    from the scene's own numbers."""
    scene, result = viaduct
    types = {t.name: t for t in scene.fleet.types}
    kinds = [types[d.type] for d in scene.fleet.drones]
    shift = np.array([[0.0, 0.0, -t.downwash_shift] for t in kinds])
    table = {frozenset(p.types): p for p in scene.fleet.pairs}
    times = np.linspace(0.0, result.trajectory.duration, 6000)
    centres = result.trajectory.evaluate(times) + shift
    worst = np.inf
    for i in range(len(kinds)):
        for j in range(i + 1, len(kinds)):
            a, b = kinds[i], kinds[j]
            margins = a.tracking_margin + b.tracking_margin
            if a.name == b.name:  # equal shapes: the Minkowski sum is the ellipsoid of doubled half-axes
                r = 2.0 * a.semi_axes
            else:  # the sample gives every mixed pair in its table
                given = table[frozenset((a.name, b.name))]
                r = np.array([given.radius_xy, given.radius_xy, given.radius_z]) + margins
            worst = min(worst, float(np.linalg.norm((centres[:, i] - centres[:, j]) / r, axis=1).min()))
    assert worst >= 1.0


@pytest.mark.slow
def test_scouts_take_the_slot_and_camera_drones_the_door(tmp_path):
    """mixed_slot(1, 3): every scout crosses the wall inside its slot (|x| < 1 m, 3.0 < z < 4.6 m),
    the camera drone inside the door (12 < x < 16 m); smoothed and verified."""
    path = write_scene(mixed_slot(1, 3), tmp_path, "slot")
    scene = load_scene(path)
    result = plan(scene, base_dir=path.parent, executor=InlineExecutor())
    assert result.report.ok and all(t.method is TransitionMethod.SMOOTHED for t in result.transitions)
    for d, drone in enumerate(scene.fleet.drones):
        (x, _, z), = _crossings(result, d)
        if drone.type == "scout":
            assert abs(x) < 1.0 and 3.0 < z < 4.6, (drone.id, x, z)
        else:
            assert 12.0 < x < 16.0, (drone.id, x, z)
