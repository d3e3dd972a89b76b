"""Plain-text summary of a plan (per transition: method, timing, search and smoothing figures),
shared by the terminal, the export's report and the GUI."""

from __future__ import annotations

from typing import TYPE_CHECKING

if TYPE_CHECKING:  # the summary reads a plan; it needs no planning code
    from .pipeline import PlanResult


def plan_summary_lines(result: PlanResult) -> list[str]:
    """Lines: warnings (meshes, cache), how each transition was planned, the roadmap, and the stage times."""
    lines = [f"warning: {w}" for w in result.stats.get("warnings", [])]
    for t in result.transitions:
        lines.append(f"{t.source} → {t.target}: {t.mode} ({t.assignment.method}), {t.method}, {t.duration:.2f} s "
                     f"(minimum {t.minimum_duration:.2f} s, {t.makespan_ratio:.2f}× the straight-line lower bound)")
        f = t.search
        if not f:
            continue
        lines.append(f"  search: {f['search_nodes']} nodes expanded ({f['low_level_expansions']} low-level), "
                     f"sum of costs {f['sum_of_costs']} steps (lower bound {f['cost_lower_bound']}, w = {f['w']:g}), "
                     f"{f['steps']} pieces")
        base = f["stop_and_go"]
        lines.append(f"  stop-and-go: {base['duration_s']:.2f} s, peak acceleration {base['peak_acceleration']:.2f} "
                     f"m/s², ∫|snap|² {base['snap_integral']:.4g} m²/s⁷")
        for h in f.get("smoothing", []):
            if "duration_s" not in h:
                lines.append(f"  smoothing round {h['iteration']}: QP objective {h['qp_objective']:.4g} did not "
                             "improve; stopped")
                continue
            verdict = "accepted" if h["accepted"] else "rejected (failed verification)"
            lines.append(f"  smoothing round {h['iteration']}: {h['duration_s']:.2f} s "
                         f"({h['duration_s'] / base['duration_s']:.2f}× stop-and-go), peak acceleration "
                         f"{h['peak_acceleration']:.2f} m/s², peak snap {h['peak_snap']:.3g} m/s⁴, ∫|snap|² "
                         f"{h['snap_integral']:.4g} m²/s⁷, smallest separation ratio {h['min_separation_ratio']:.3f}, "
                         f"{verdict}")
        if f.get("smoothing_note"):
            lines.append(f"  note: {f['smoothing_note']}")
    st = result.stats
    if "roadmap_vertices" in st:
        cached = " (from cache)" if st["roadmap_cached"] else ""
        lines.append(f"roadmap: {st['roadmap_vertices']} vertices, {st['roadmap_edges']} edges, "
                     f"{st['roadmap_conflicts']} conflicting action pairs{cached}")
    lines.append("stage times: " + ", ".join(f"{k} {v:.2f} s" for k, v in result.stage_seconds.items()))
    return lines
