"""The verification report: verdict, violations, per-drone figures, and how sampling was bounded."""

from __future__ import annotations

from dataclasses import asdict, dataclass, field

import numpy as np


@dataclass(frozen=True)
class Violation:
    """One requirement broken (or not provable) around ``time`` seconds.

    kind : what was violated (``separation``, ``flight_volume``, ``keep_out``, ``obstacle``,
    ``speed_xy``, ``speed_z``, ``acceleration``); drones : ids involved; position : (x, y, z) metres of the first
    drone; measured / required : the figure and its bound (ratio, m/s, m/s² or metres);
    proven : False when the value is within tolerance but could not be proven safe.
    """

    kind: str
    drones: tuple[str, ...]
    time: float
    position: tuple[float, float, float]
    measured: float
    required: float
    detail: str
    proven: bool = True

    def describe(self) -> str:
        where = "(" + ", ".join(f"{c:.2f}" for c in self.position) + ")"
        return f"t={self.time:8.3f} s  {self.kind:<13} {' & '.join(self.drones):<24} at {where} m: {self.detail}"


@dataclass(frozen=True)
class DroneFigures:
    """Per-drone peaks over the whole flight (sampled maxima; speed/accel are certified) and the
    smallest separation ratio to any other drone (≥ 1 is clear)."""

    drone: str
    min_separation_ratio: float
    peak_speed_xy: float
    peak_speed_z: float
    peak_acceleration: float
    peak_jerk: float
    peak_snap: float


@dataclass
class VerificationReport:
    ok: bool
    duration: float
    n_drones: int
    violations: list[Violation]
    drones: list[DroneFigures]
    sampling: dict
    separation_timeline: dict = field(default_factory=dict)  # {"t": [...], "min_ratio": [...]}
    elapsed_s: float = 0.0

    @property
    def min_separation_ratio(self) -> float:
        return min((d.min_separation_ratio for d in self.drones), default=float("inf"))

    def to_dict(self) -> dict:
        data = asdict(self)
        data["min_separation_ratio"] = self.min_separation_ratio
        return _finite(data)

    def summary_lines(self) -> list[str]:
        peak = {k: max((getattr(d, k) for d in self.drones), default=0.0) for k in
                ("peak_speed_xy", "peak_speed_z", "peak_acceleration", "peak_jerk", "peak_snap")}
        verdict = "PASSED" if self.ok else f"FAILED ({len(self.violations)} violation(s))"
        return [
            f"Verification {verdict}: {self.n_drones} drones, {self.duration:.2f} s of flight",
            f"  smallest separation ratio {self.min_separation_ratio:.3f} (>= 1 required)",
            f"  peaks: horizontal speed {peak['peak_speed_xy']:.2f} m/s, "
            f"vertical speed {peak['peak_speed_z']:.2f} m/s, "
            f"acceleration {peak['peak_acceleration']:.2f} m/s², jerk {peak['peak_jerk']:.2f} m/s³, "
            f"snap {peak['peak_snap']:.2f} m/s⁴",
        ]

    def to_text(self, max_violations: int = 200) -> str:
        lines = self.summary_lines()
        lines += ["", "How the check is bounded:"] + [f"  {v}" for v in self.sampling.get("statement", [])]
        if self.violations:
            lines += ["", "Violations:"]
            lines += [f"  {v.describe()}" for v in self.violations[:max_violations]]
            if len(self.violations) > max_violations:
                lines.append(f"  ... and {len(self.violations) - max_violations} more (see report.json)")
        lines += ["", "Per drone (min separation ratio, peak speed xy / z, acceleration, jerk, snap):"]
        lines += [
            f"  {d.drone:<12} {d.min_separation_ratio:7.3f}  {d.peak_speed_xy:6.2f} {d.peak_speed_z:6.2f} "
            f"{d.peak_acceleration:6.2f} {d.peak_jerk:8.2f} {d.peak_snap:9.2f}"
            for d in self.drones
        ]
        return "\n".join(lines) + "\n"


def _finite(value):
    """Replace non-finite floats (JSON has none) by None, recursively."""
    if isinstance(value, dict):
        return {k: _finite(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [_finite(v) for v in value]
    if isinstance(value, float | np.floating):
        return float(value) if np.isfinite(value) else None
    if isinstance(value, np.integer):
        return int(value)
    return value
