"""Names for things the designer adds (boxes, meshes, drone types, drones) that the scene does
not use yet."""

from __future__ import annotations

import re


def fresh_name(stem: str, taken: set[str]) -> str:
    """``stem`` or ``stem_2``, ``stem_3``… whichever is not in ``taken``."""
    if stem not in taken:
        return stem
    k = 2
    while f"{stem}_{k}" in taken:
        k += 1
    return f"{stem}_{k}"


def next_ids(existing: list[str], count: int) -> list[str]:
    """``count`` new drone ids continuing the last id's pattern (``d07`` → ``d08``, ``d09``…;
    digits keep their width), skipping ids in ``existing``; ``drone1``… without a pattern."""
    match = re.fullmatch(r"(.*?)(\d+)", existing[-1]) if existing else None
    prefix, number, width = (match[1], int(match[2]), len(match[2])) if match else ("drone", 0, 1)
    taken, out = set(existing), []
    while len(out) < count:
        number += 1
        candidate = f"{prefix}{number:0{width}d}"
        if candidate not in taken:
            out.append(candidate)
    return out
