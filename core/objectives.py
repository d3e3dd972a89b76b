"""The smoothing objectives users can name (scene ``planner.objective``, ``--objective``): the
vocabulary only, so that the scene model can check it without importing the smoothing stage."""

from __future__ import annotations

import math

#: Derivative order of each objective term (m/s² … m/s⁴).
TERM_ORDER = {"acceleration": 2, "jerk": 3, "snap": 4}
#: Named objectives: weights of ∫‖acceleration‖², ∫‖jerk‖², ∫‖snap‖² dt. "energy" is a common
#: acceleration-dominated mix (common practice, no source).
OBJECTIVES = {
    "snap": {"snap": 1.0},
    "jerk": {"jerk": 1.0},
    "acceleration": {"acceleration": 1.0},
    "energy": {"acceleration": 1.0, "jerk": 0.1, "snap": 0.01},
}
#: Largest weight of one term (weights are relative; this only keeps the arithmetic finite).
MAX_WEIGHT = 1e6


def parse_objective(text: str) -> dict[str, float]:
    """An objective from a name (``snap``, ``jerk``, ``acceleration``, ``energy``) or weights such as
    ``acceleration=1,snap=0.01``. Raises ``ValueError`` saying what is wrong."""
    text = text.strip()
    if text in OBJECTIVES:
        return dict(OBJECTIVES[text])
    weights = {}
    for part in filter(None, (p.strip() for p in text.split(","))):
        name, sep, value = part.partition("=")
        if not sep or name.strip() not in TERM_ORDER:
            raise ValueError(f"objective {text!r}: expected one of {', '.join(OBJECTIVES)} or weights like "
                             "'acceleration=1,snap=0.01' (terms: acceleration, jerk, snap)")
        try:
            weights[name.strip()] = float(value)
        except ValueError:
            raise ValueError(f"objective {text!r}: {value.strip()!r} is not a number") from None
    if not weights or not all(math.isfinite(w) and 0 <= w <= MAX_WEIGHT for w in weights.values()) \
            or not any(w > 0 for w in weights.values()):
        raise ValueError(f"objective {text!r}: weights must be finite, between 0 and {MAX_WEIGHT:g}, and at least "
                         "one above 0")
    return weights
