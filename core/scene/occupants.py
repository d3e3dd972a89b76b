"""Which drone shapes can stand on each formation point, from the timeline's assignments.

The start formation's point ``i`` holds drone ``i``; a labeled transition puts drone ``i`` on the
target's point ``i``; a grouped one puts on a target point of group ``g`` one of the drones that
stood on the source's points of group ``g``; an unlabeled one may put any drone anywhere. A
formation the timeline visits several times collects every visit's occupants; one it never visits
(or whose points or groups do not match the fleet) may hold any drone — the envelope rule.

Formation checks then measure a point pair only against the pair shapes of drones that can really
stand there: 1.2 m apart is enough for two light scouts' pads even when the fleet's heavy drone
would need more, as long as the heavy one can never land on them.
"""

from __future__ import annotations

import numpy as np
from scipy.spatial import cKDTree

from ..clearance import ClearanceModel
from .model import Scene


def possible_shapes(scene: Scene) -> dict[str, np.ndarray]:
    """Per formation name, ``(P, K)`` booleans: whether a drone of shape ``k`` (the fleet's
    :attr:`ClearanceModel.kind_of` indices) can stand on point ``p``."""
    clearance = scene.fleet.clearance
    n, shapes = len(scene.fleet.drones), len(clearance.kind_pair_radii)
    own = np.zeros((n, shapes), dtype=bool)
    own[np.arange(n), clearance.kind_of] = True
    by_name = {f.name: f for f in scene.formations}
    seen: dict[str, np.ndarray] = {}

    def anyone(name: str) -> np.ndarray:
        return np.ones((len(by_name[name].points), shapes), dtype=bool)

    def visit(name: str, mask: np.ndarray) -> None:
        seen[name] = mask if name not in seen else seen[name] | mask

    current = scene.timeline.start
    if current not in by_name:
        return {f.name: anyone(f.name) for f in scene.formations}
    visit(current, own if len(by_name[current].points) == n else anyone(current))
    for tr in scene.timeline.transitions:
        if tr.to not in by_name:
            break
        source, target = by_name[current], by_name[tr.to]
        if len(target.points) == n and tr.assignment == "labeled":
            mask = own
        elif len(target.points) != n or len(source.points) != n or tr.assignment == "unlabeled":
            mask = anyone(tr.to)
        else:
            mask = _grouped(source.groups, target.groups, seen[current], shapes)
        visit(tr.to, mask)
        current = tr.to
    return {f.name: seen.get(f.name, anyone(f.name)) for f in scene.formations}


def _grouped(source_groups, target_groups, source_mask: np.ndarray, shapes: int) -> np.ndarray:
    """Occupant shapes of the target's points ``(P, K)`` when each group's drones move among its points."""
    n = len(source_mask)
    if source_groups is None or target_groups is None or len(source_groups) != n or len(target_groups) != n:
        return np.ones((n, shapes), dtype=bool)
    source_groups, target_groups = np.asarray(source_groups), np.asarray(target_groups)
    mask = np.ones((n, shapes), dtype=bool)  # a group the source lacks (a problem reported elsewhere): anyone
    for g in np.unique(target_groups):
        if np.any(source_groups == g):
            mask[target_groups == g] = source_mask[source_groups == g].any(axis=0)
    return mask


def crowded_pairs(points: np.ndarray, clearance: ClearanceModel, shapes: np.ndarray | None = None
                  ) -> tuple[np.ndarray, np.ndarray]:
    """Pairs ``(M, 2)`` of formation points ``(P, 3)`` closer than the pair shape of some two
    drones that can stand on them, with the smallest such ratio ``(M,)``.

    ``shapes`` ``(P, K)`` from :func:`possible_shapes`; None: any drone on any point. Ratios are
    exact for each pair of kinds (pair half-axes and clearance-centre shifts); candidates come from
    a KD-tree on the points in :attr:`ClearanceModel.pair_envelope` units, widened by the shifts'
    :attr:`~ClearanceModel.shift_slack`. The loader's rule, shared with the designer's layout view.
    """
    points = np.asarray(points, dtype=np.float64)
    reach = 1.0 + clearance.shift_slack
    pairs = cKDTree(points / clearance.pair_envelope).query_pairs(reach, output_type="ndarray").reshape(-1, 2)
    if not len(pairs):
        return pairs, np.empty(0)
    ratios = clearance.kind_ratios(points[pairs[:, 0]], points[pairs[:, 1]])  # (M, K, K)
    if shapes is not None:
        allowed = shapes[pairs[:, 0]][:, :, None] & shapes[pairs[:, 1]][:, None, :]
        ratios = np.where(allowed, ratios, np.inf)
    ratio = ratios.min(axis=(1, 2))
    keep = ratio < 1.0
    return pairs[keep], ratio[keep]
