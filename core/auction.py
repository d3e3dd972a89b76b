"""Large linear assignments: ε-scaling auction (Bertsekas) and a pairwise-swap repair.

Used for sum-of-squared-distance assignments too large for a dense Hungarian solve. The auction
ends ε-optimal: its total cost is within ``n·ε`` of the optimum (Bertsekas, "The auction
algorithm: a distributed relaxation method for the assignment problem", Ann. Oper. Res. 14, 1988).
"""

from __future__ import annotations

import numpy as np

from .progress import CancelToken, ProgressCallback, no_progress

_CHUNK = 1024  # rows per block when scanning n × n products


def auction_maximize(benefit: np.ndarray, eps_final: float, *, progress: ProgressCallback = no_progress,
                     cancel: CancelToken | None = None, scaling: float = 6.0) -> np.ndarray:
    """Assignment ``(n,)`` (row → column) maximising ``sum benefit[i, a[i]]`` to within ``n·eps_final``.

    Jacobi (all unassigned rows bid at once) forward auction with ε-scaling, vectorised.
    """
    n = benefit.shape[0]
    prices = np.zeros(n)
    span = float(benefit.max() - benefit.min()) or 1.0
    eps = max(span / 10, eps_final)
    phases = max(1, int(np.ceil(np.log(eps / eps_final) / np.log(scaling))) + 1)
    phase = 0
    while True:
        owner = np.full(n, -1)
        assigned = np.full(n, -1)
        bidders = np.arange(n)
        while len(bidders):
            if cancel is not None:
                cancel.check()
            values = benefit[bidders] - prices
            top = np.argpartition(-values, 1, axis=1)[:, :2]
            pair = np.take_along_axis(values, top, axis=1)
            first = (pair[:, 1] > pair[:, 0]).astype(np.intp)
            rows = np.arange(len(bidders))
            best = top[rows, first]
            bid = prices[best] + pair[rows, first] - pair[rows, 1 - first] + eps
            order = np.lexsort((bid, best))
            last = np.r_[best[order][1:] != best[order][:-1], True]
            winners = order[last]
            won = best[winners]
            outbid = owner[won]
            assigned[outbid[outbid >= 0]] = -1
            owner[won] = bidders[winners]
            assigned[bidders[winners]] = won
            prices[won] = bid[winners]
            bidders = np.nonzero(assigned < 0)[0]
        phase += 1
        progress("assignment", min(phase / phases, 1.0), f"auction phase {phase}/{phases}")
        if eps <= eps_final:
            return assigned
        eps = max(eps / scaling, eps_final)


def repair_pair_swaps(starts: np.ndarray, goals: np.ndarray, assignment: np.ndarray,
                      cancel: CancelToken | None = None) -> tuple[np.ndarray, int]:
    """Swap goals until no pair ``(i, j)`` has ``(x_i - x_j)·(g_i - g_j) < 0``.

    Each such swap lowers the sum of squared distances by ``-2 (x_i - x_j)·(g_i - g_j)``; the end
    state is the pairwise condition that the separation proof of Turpin, Michael & Kumar (IJRR
    2014) uses. Returns the repaired assignment and the number of swaps made.
    """
    a = assignment.copy()
    n = len(a)
    swaps = 0
    while True:
        if cancel is not None:
            cancel.check()
        y = goals[a]
        s = np.einsum("ij,ij->i", starts, y)
        tol = 1e-12 * max(1.0, float(np.abs(s).max()))
        found_i, found_j, found_v = [], [], []
        for lo in range(0, n, _CHUNK):
            r = slice(lo, min(lo + _CHUNK, n))
            v = s[r, None] + s[None, :] - starts[r] @ y.T - y[r] @ starts.T
            bad = np.argwhere(v < -tol)
            found_i.append(bad[:, 0] + lo)
            found_j.append(bad[:, 1])
            found_v.append(v[bad[:, 0], bad[:, 1]])
        bi, bj, bv = (np.concatenate(x) for x in (found_i, found_j, found_v))
        if len(bi) == 0:
            return a, swaps
        used = np.zeros(n, dtype=bool)
        for k in np.argsort(bv):
            i, j = bi[k], bj[k]
            if not (used[i] or used[j]):
                a[i], a[j] = a[j], a[i]
                used[i] = used[j] = True
                swaps += 1
