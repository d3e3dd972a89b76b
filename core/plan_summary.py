"""Plain-text summary of a plan (per transition: method, timing, search and smoothing figures),
shared by the terminal, the export's report and the GUI."""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:  # the summary reads a plan; it needs no planning code
    from .pipeline import PlanResult


def plan_summary_lines(result: PlanResult) -> list[str]:
    """Lines: warnings (meshes, cache), how each transition was planned, the roadmap, and the stage times."""
    lines = [f"warning: {w}" for w in result.warnings]
    for t in result.transitions:
        p = t.problem
        free = "" if t.free_space_ratio is None else \
            f", {t.free_space_ratio:.2f}× the free-space bound {t.free_space_bound:.2f} s"
        lines.append(f"{p.source} → {p.target}: {p.mode} ({t.assignment.method}), {t.method_text}, {t.duration:.2f} s "
                     f"(minimum {t.minimum_duration:.2f} s, {t.makespan_ratio:.2f}× the straight-line lower bound"
                     f"{free})")
        s, base = t.search, t.stop_and_go
        if s is None:
            continue
        bound = "" if s.w is None else f", w = {s.w:g}"
        effort = f"{s.nodes_expanded} nodes expanded ({s.low_level_expansions} low-level)" if s.w is not None else \
            f"{s.nodes_expanded} visits, {s.nodes_generated} configurations"
        lines.append(f"  search: {s.solver} ({s.reason}), {effort}, {s.seconds:.2f} s, {s.steps} steps, "
                     f"sum of costs {s.sum_of_costs} steps (lower bound {s.cost_lower_bound}{bound}), "
                     f"{len(t.durations)} pieces")
        if s.refinement:
            lines.append(f"  search refinement: {s.refinement}")
        lines.append(f"  paths: {base.roadmap_length_m:.1f} m on the roadmap, {base.flown_length_m:.1f} m after "
                     "straightening")
        lines.append(f"  stop-and-go: {base.duration_s:.2f} s, peak acceleration {base.peak_acceleration:.2f} "
                     f"m/s², ∫|snap|² {base.snap_integral:.4g} m²/s⁷")
        for h in t.smoothing.rounds if t.smoothing else ():
            if h.duration_s is None:
                lines.append(f"  smoothing round {h.iteration}: QP objective {h.qp_objective:.4g} did not "
                             "improve; stopped")
                continue
            verdict = "accepted" if h.accepted else \
                ("rejected (failed verification)" if not h.verified else "not kept: no shorter, re-allocation done")
            if h.retimed:
                verdict = "step durations re-allocated, " + verdict
            if h.fell_back:
                verdict += f"; kept their earlier curves: {_names(h.fell_back)}"
            if h.second_solver:
                verdict += f"; solved by the second QP solver: {_names(h.second_solver)}"
            lines.append(f"  smoothing round {h.iteration}: {h.duration_s:.2f} s "
                         f"({h.duration_s / base.duration_s:.2f}× stop-and-go), peak acceleration "
                         f"{h.peak_acceleration:.2f} m/s², peak snap {h.peak_snap:.3g} m/s⁴, ∫|snap|² "
                         f"{h.snap_integral:.4g} m²/s⁷, smallest separation ratio {h.min_separation_ratio:.3f}, "
                         f"{verdict}")
        if t.smoothing and t.smoothing.note:
            lines.append(f"  note: {t.smoothing.note}")
    if result.roadmap is not None:
        r = result.roadmap
        cached = " (from cache)" if r.cached else ""
        layers = f", one layer per drone shape ({r.layers})" if r.layers > 1 else ""
        lines.append(f"roadmap: {r.vertices} vertices, {r.edges} edges, {r.conflicts} conflicting action pairs"
                     f"{layers}{cached}")
    if result.reused:
        lines.append("taken over unchanged from the previous plan: transition(s) "
                     + ", ".join(str(k) for k in result.reused))
    lines.append("stage times: " + ", ".join(f"{k} {v:.2f} s" for k, v in result.stage_seconds.items()))
    return lines


def _names(ids: tuple[str, ...], shown: int = 5) -> str:
    """Drone ids, the first ``shown`` of them, with how many more."""
    more = f" and {len(ids) - shown} more" if len(ids) > shown else ""
    return ", ".join(ids[:shown]) + more
