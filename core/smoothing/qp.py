"""One drone's piecewise-Bézier QP, built directly as sparse matrices and solved with Clarabel or OSQP.

Variables are the control points of the drone's ``K`` pieces, ``x[(k (n+1) + i) 3 + d]`` (metres).
Constraints: rest at both ends, continuity at joins, every control point inside its piece's corridor
(half-spaces) and the flight volume, and the velocity/acceleration control points inside the limit
balls. By the Bézier convex-hull property the whole curve then satisfies them.

The norm limits (horizontal speed, acceleration) are second-order cones for Clarabel, which takes
them as they are, and inscribed polytopes for OSQP, which takes only linear rows (a smaller feasible
set: what OSQP finds satisfies the cones too). On 60 drones through a two-gap wall the norm limits
took 6 240 + 2 160 one-sided rows as polytopes against 1 770 cone rows (DEVELOPERS.md, "Passages and scale").
"""

from __future__ import annotations

import time
from dataclasses import dataclass, field

import clarabel
import numpy as np
import osqp
import scipy.sparse as sp
import scipy.sparse.linalg as spla

from .limits import ACCELERATION_DIRECTIONS, HORIZONTAL_DIRECTIONS, inscribed_scale
from .terms import continuity_order, difference_operator, piece_cost_matrix, rest_order

_AXES = np.eye(3)
_VERTICAL = np.array([[0.0, 0.0, 1.0]])
#: OSQP tolerances and iteration cap. Polishing is off: on these degenerate active sets it mostly
#: fails, and once it returned a worse point (1.5e-4 above the Clarabel optimum) as "solved".
#: Equalities are made exact afterwards by projection (:func:`_project_onto_equalities`).
SOLVER_OPTIONS = {"eps_abs": 1e-5, "eps_rel": 1e-5, "max_iter": 40_000, "polishing": False, "alpha": 1.8,
                  "warm_starting": True, "verbose": False}
#: A solution may overstep an inequality row (scaled to unit ∞-norm; metres for corridors) by this
#: much: 20× below the corridor slack (:data:`core.smoothing.corridors.PLANE_SLACK`, scaled units)
#: and half the volume's.
FEASIBILITY_TOLERANCE = 5e-4
#: Control points other than those the rest conditions pin to the start and goal keep this far (m)
#: inside the flight volume, so solver round-off cannot carry them out of it. The pinned ones are
#: set to the start and goal exactly, which may lie on the volume's boundary (pads on its floor):
#: every control point is then inside the closed volume and, by the convex hull, so is the curve.
VOLUME_SLACK = 1e-3


@dataclass(frozen=True, eq=False)
class DroneProblem:
    """Everything one drone's QP needs (picklable, so it can travel to a worker process).

    durations : (K,) s; start, goal : (3,) m; normals : (R, 3) unit world normals with offsets
    (R,) m — row ``r`` requires ``normals[r] · p ≤ offsets[r]`` for every control point ``p`` of
    piece ``pieces[r]``; partners : (R,) index of the other drone of a pair plane, -1 for obstacle
    rows; volume : (2, 3) m; limits : (3,) max horizontal speed, vertical speed (m/s), acceleration
    norm (m/s²); weights : objective term weights; initial : (K, n + 1, 3) warm start or None;
    cost_reference : objective value scaled to 1 inside the solver (default: that of ``initial``).
    """

    drone: int
    degree: int
    durations: np.ndarray
    start: np.ndarray
    goal: np.ndarray
    normals: np.ndarray
    offsets: np.ndarray
    pieces: np.ndarray
    partners: np.ndarray
    volume: np.ndarray
    limits: np.ndarray
    weights: dict[str, float]
    initial: np.ndarray | None = None
    cost_reference: float | None = None
    #: ``(transition token, drone)``: the parts of the QP that stay the same within a transition are
    #: built once per worker process under this key (None: always built afresh).
    fixed_key: tuple[str, int] | None = None
    #: Solvers tried in turn until one succeeds ("OSQP", "Clarabel"); the smoother puts Clarabel
    #: first (:data:`core.smoothing.smoother.SOLVER_ORDER`).
    solvers: tuple[str, ...] = ("OSQP", "Clarabel")
    #: ``(K,)`` True for pieces whose corridor rows already keep every control point inside the
    #: flight volume (its tube lies inside it); their volume rows are left out. None: keep all.
    inside_volume: np.ndarray | None = None


@dataclass(frozen=True, eq=False)
class DroneSolution:
    """Outcome of :func:`solve_drone`: ``points`` ``(K, n + 1, 3)`` when ``ok``; otherwise ``culprit``
    names the piece and the constraint family that blocks it (from OSQP's infeasibility certificate)."""

    drone: int
    ok: bool
    status: str
    points: np.ndarray | None
    objective: float
    iterations: int
    seconds: float
    culprit: tuple[int, str] | None = None
    facts: dict = field(default_factory=dict)


@dataclass(frozen=True, eq=False)
class NormCones:
    """Second-order cones ``‖D_c x‖₂ ≤ bound[c]``, one per derivative control point and limit:
    ``D`` ``(C · dim, vars)`` stacks cone ``c``'s ``dim`` rows at ``c · dim …``; ``piece`` ``(C,)``;
    rows and bounds are scaled alike (to unit ∞-norm rows), which leaves each cone's meaning."""

    dim: int
    D: sp.csr_matrix
    bound: np.ndarray
    piece: np.ndarray
    family: str

    def overstep(self, x: np.ndarray) -> np.ndarray:
        """``(C,)`` ``‖D_c x‖ − bound[c]`` (≤ 0 where the cone holds)."""
        return np.linalg.norm((self.D @ x).reshape(-1, self.dim), axis=1) - self.bound


@dataclass(frozen=True, eq=False)
class QPMatrices:
    """``min xᵀPx`` (the objective integral / ``cost_scale``) s.t. ``l ≤ Ax ≤ u`` and the ``cones``
    (empty for OSQP, which gets the norm limits as rows of ``A``); each row of ``A`` has a piece
    index and a constraint family name."""

    P: sp.csc_matrix
    A: sp.csc_matrix
    lower: np.ndarray
    upper: np.ndarray
    row_piece: np.ndarray
    row_family: list[str]
    cost_scale: float
    cones: tuple[NormCones, ...] = ()


@dataclass(frozen=True, eq=False)
class FixedRows:
    """What a drone's QP keeps through every round of a transition: the unscaled cost ``P``, the
    rows before the corridors (rest, continuity) and after them (flight volume, vertical speed),
    and the norm limits both ways: as inscribed polytope rows (``polytopes``) and as ``cones``."""

    P: sp.csc_matrix
    head: _CollectedRows
    tail: _CollectedRows
    polytopes: _CollectedRows
    cones: tuple[NormCones, ...]


def fixed_rows(problem: DroneProblem) -> FixedRows:
    """The round-independent parts of ``problem``'s QP (they depend on its durations, ends,
    volume, limits, objective and ``inside_volume``, never on its corridors or warm start)."""
    n, h = problem.degree, np.asarray(problem.durations, dtype=float)
    head = _RowBuilder(n, len(h))
    _rest_rows(head, problem)
    _join_rows(head, n, h)
    tail = _RowBuilder(n, len(h))
    free = ~_rest_fixed(len(h), n, rest_order(problem.weights))
    if problem.inside_volume is not None:
        free &= ~np.repeat(np.asarray(problem.inside_volume, dtype=bool), n + 1)
    pieces_all, cps_all = np.divmod(np.nonzero(free)[0], n + 1)
    low, high = problem.volume[0] + VOLUME_SLACK, problem.volume[1] - VOLUME_SLACK
    for d in range(3):
        tail.add(pieces_all, cps_all, np.ones((len(cps_all), 1)), np.tile(_AXES[d], (len(cps_all), 1)),
                 low[d], high[d], "flight volume")
    vh, vv, acc = problem.limits
    _limit_rows(tail, h, n, [-1.0, 1.0], _VERTICAL, vv / n, 1, "vertical speed")
    polytopes = _RowBuilder(n, len(h))
    _limit_rows(polytopes, h, n, [-1.0, 1.0], HORIZONTAL_DIRECTIONS,
                vh * inscribed_scale(HORIZONTAL_DIRECTIONS) / n, 1, "horizontal speed")
    cones = [_norm_cones(h, n, [-1.0, 1.0], (0, 1), vh / n, 1, "horizontal speed")]
    if n >= 2:
        _limit_rows(polytopes, h, n, [1.0, -2.0, 1.0], ACCELERATION_DIRECTIONS,
                    acc * inscribed_scale(ACCELERATION_DIRECTIONS) / (n * (n - 1)), 2, "acceleration")
        cones.append(_norm_cones(h, n, [1.0, -2.0, 1.0], (0, 1, 2), acc / (n * (n - 1)), 2, "acceleration"))
    return FixedRows(_cost_matrix(n, h, problem.weights), head.collected(), tail.collected(), polytopes.collected(),
                     tuple(cones))


def _cost_matrix(n: int, h: np.ndarray, weights: dict[str, float]) -> sp.csc_matrix:
    """Block-diagonal ``P`` ``(3 K (n + 1),)²``: each piece's :func:`piece_cost_matrix` on every axis."""
    q = np.stack([piece_cost_matrix(n, float(hk), weights) for hk in h])  # (K, n+1, n+1)
    width = 3 * (n + 1)
    i, j, d = np.meshgrid(np.arange(n + 1), np.arange(n + 1), np.arange(3), indexing="ij")
    base = np.arange(len(h))[:, None] * width
    rows = (base + (3 * i + d).ravel()).ravel()
    cols = (base + (3 * j + d).ravel()).ravel()
    vals = np.broadcast_to(q[:, :, :, None], (len(h), n + 1, n + 1, 3)).ravel()
    size = len(h) * width
    return sp.csc_matrix((vals, (rows, cols)), shape=(size, size))


def _norm_cones(h: np.ndarray, n: int, stencil: list[float], axes: tuple[int, ...], bound_per_h: float, order: int,
                family: str) -> NormCones:
    """``‖(Δ^order b_j)[axes]‖ ≤ bound_per_h · h**order`` for every piece and start ``j``."""
    count = n + 1 - order
    piece, first = np.divmod(np.arange(len(h) * count), count)
    cones, dim = len(piece), len(axes)
    scale = float(np.max(np.abs(stencil)))
    cone, axis, t = np.meshgrid(np.arange(cones), np.arange(dim), np.arange(len(stencil)), indexing="ij")
    rows = cone * dim + axis
    cols = ((piece[cone] * (n + 1) + first[cone] + t) * 3 + np.asarray(axes)[axis])
    vals = np.asarray(stencil)[t] / scale
    D = sp.csr_matrix((vals.ravel(), (rows.ravel(), cols.ravel())), shape=(cones * dim, len(h) * (n + 1) * 3))
    return NormCones(dim, D, bound_per_h * h[piece] ** order / scale, piece, family)


#: This process's fixed rows of the transition it is smoothing, per drone (see :func:`_fixed_rows_for`).
_FIXED_CACHE: dict[tuple[str, int], FixedRows] = {}


def _fixed_rows_for(problem: DroneProblem) -> FixedRows:
    """:func:`fixed_rows`, built once per ``fixed_key`` in this process; the cache holds only the
    latest transition (a process smooths one transition at a time)."""
    if problem.fixed_key is None:
        return fixed_rows(problem)
    if problem.fixed_key not in _FIXED_CACHE:
        if any(key[0] != problem.fixed_key[0] for key in _FIXED_CACHE):
            _FIXED_CACHE.clear()
        _FIXED_CACHE[problem.fixed_key] = fixed_rows(problem)
    return _FIXED_CACHE[problem.fixed_key]


def build_matrices(problem: DroneProblem, conic: bool = False) -> QPMatrices:
    """The sparse QP of ``problem``; rows are scaled to unit ∞-norm, the cost to 1 at the warm start.
    ``conic``: the norm limits as second-order cones (for Clarabel), else as polytope rows."""
    n, h = problem.degree, np.asarray(problem.durations, dtype=float)
    k_count = len(h)
    n_vars = k_count * (n + 1) * 3
    fixed = _fixed_rows_for(problem)
    P = fixed.P
    # Cost scaled to 1 at a reference point (the smoother passes the stop-at-every-waypoint cost in
    # every round): OSQP's dual residual test is relative, and at this scale it stopped within ~2 %
    # of the optimum, against up to ~50 % with P scaled to unit peak (bench_smoothing.py).
    reference = problem.cost_reference
    if reference is None and problem.initial is not None:
        reference = float(problem.initial.ravel() @ (P @ problem.initial.ravel()))
    cost_scale = reference if reference else (float(abs(P).max()) or 1.0)
    rows = _RowBuilder(n, k_count)
    rows.extend(fixed.head)
    if len(problem.pieces):
        rows.add(np.repeat(problem.pieces, n + 1), np.tile(np.arange(n + 1), len(problem.pieces)),
                 np.ones((len(problem.pieces) * (n + 1), 1)), np.repeat(problem.normals, n + 1, axis=0),
                 -np.inf, np.repeat(problem.offsets, n + 1),
                 [f"corridor ({'obstacles' if p < 0 else f'drone #{p}'})" for p in np.repeat(problem.partners, n + 1)])
    rows.extend(fixed.tail)
    if not conic:
        rows.extend(fixed.polytopes)
    A, lower, upper, piece, family = rows.finish(n_vars)
    return QPMatrices(P / cost_scale, A, lower, upper, piece, family, cost_scale, fixed.cones if conic else ())


def solve_drone(problem: DroneProblem, options: dict | None = None, *, retry: bool = True) -> DroneSolution:
    """Build and solve ``problem`` (top-level so process pools can run it) with the solvers of
    ``problem.solvers`` in turn: the next one runs when the one before fails (iteration cap, a
    constraint overstepped, infeasibility), unless ``retry`` is False. ``options`` override
    :data:`SOLVER_OPTIONS` for OSQP (tests use tighter tolerances)."""
    t0 = time.perf_counter()
    first: DroneSolution | None = None
    for name in problem.solvers[: len(problem.solvers) if retry else 1]:
        m = build_matrices(problem, conic=name == "Clarabel")
        facts = {"rows": m.A.shape[0] + sum(c.D.shape[0] + len(c.bound) for c in m.cones), "variables": m.A.shape[1],
                 "nonzeros": m.A.nnz + m.P.nnz + sum(c.D.nnz for c in m.cones)}
        outcome = (_solve_with_osqp(problem, m, options, t0, facts) if name == "OSQP"
                   else _solve_with_clarabel(problem, m, t0, facts))
        if outcome.ok:
            if first is not None:
                outcome.facts["retried_after"] = first.status
            return outcome
        if first is None:
            first = outcome
        else:
            first = DroneSolution(problem.drone, False, f"{first.status}; {name}: {outcome.status}", None,
                                  float("nan"), first.iterations + outcome.iterations, time.perf_counter() - t0,
                                  first.culprit or outcome.culprit, outcome.facts)
    return first


def _solve_with_osqp(problem: DroneProblem, m: QPMatrices, options: dict | None, t0: float,
                     facts: dict) -> DroneSolution:
    """``m`` by OSQP (Stellato et al. 2020), warm-started at ``problem.initial``."""
    solver = osqp.OSQP()
    solver.setup(m.P, np.zeros(m.P.shape[0]), m.A, m.lower, m.upper, **{**SOLVER_OPTIONS, **(options or {})})
    if problem.initial is not None:
        solver.warm_start(x=np.asarray(problem.initial, dtype=float).ravel())
    result = solver.solve(raise_error=False)
    facts = {**facts, "solver": "OSQP"}
    if result.info.status_val in (osqp.SolverStatus.OSQP_SOLVED, osqp.SolverStatus.OSQP_SOLVED_INACCURATE):
        return _accept(problem, m, result.x, result.info.status, result.info.iter, t0, facts)
    certificate = result.prim_inf_cert
    worst = int(np.argmax(np.abs(certificate))) if certificate is not None and np.any(certificate) else -1
    return _failed(problem, result.info.status, _row_culprit(m, worst), result.info.iter, t0, facts)


def _accept(problem: DroneProblem, m: QPMatrices, x: np.ndarray | None, status: str, iterations: int, t0: float,
            facts: dict) -> DroneSolution:
    """A solver's point ``x`` made exact on the equalities and the pinned rest points, accepted when
    no row or cone is overstepped by more than :data:`FEASIBILITY_TOLERANCE` (None: the solver failed)."""
    if x is None:
        return _failed(problem, status, None, iterations, t0, facts)
    x = _project_onto_equalities(m, x)
    k_count, n = len(problem.durations), problem.degree
    points = x.reshape(k_count, n + 1, 3)
    pinned = rest_order(problem.weights) + 1
    points[0, :pinned], points[-1, n + 1 - pinned:] = problem.start, problem.goal
    ax = m.A @ x
    rows = np.maximum(m.lower - ax, ax - m.upper)
    overstep, culprit = float(np.max(rows, initial=0.0)), _row_culprit(m, int(np.argmax(rows)) if len(rows) else -1)
    for cones in m.cones:
        over = cones.overstep(x)
        if len(over) and over.max() > overstep:
            worst = int(np.argmax(over))
            overstep, culprit = float(over[worst]), (int(cones.piece[worst]), cones.family)
    if overstep <= FEASIBILITY_TOLERANCE:
        return DroneSolution(problem.drone, True, status, points, float(x @ (m.P @ x)) * m.cost_scale, iterations,
                             time.perf_counter() - t0, facts=facts)
    return _failed(problem, f"{status}, but a constraint is overstepped by {overstep:.1e}", culprit, iterations, t0,
                   facts)


def _row_culprit(m: QPMatrices, row: int) -> tuple[int, str] | None:
    """Piece and constraint family of row ``row`` of ``m.A`` (None for -1)."""
    return (int(m.row_piece[row]), m.row_family[row]) if row >= 0 else None


def _failed(problem: DroneProblem, status: str, culprit: tuple[int, str] | None, iterations: int, t0: float,
            facts: dict) -> DroneSolution:
    return DroneSolution(problem.drone, False, status, None, float("nan"), iterations, time.perf_counter() - t0,
                         culprit, facts)


#: Clarabel's gap and feasibility tolerances (its defaults: 1e-8) and static KKT regularisation
#: (default 1e-8). Measured on the 32 cold-start QPs of the courtyard sample: at the defaults 9 of
#: 16 ended in "NumericalError"; with regularisation 1e-7 all 32 solved (bench_flight_quality.py).
#: Every result is checked against :data:`FEASIBILITY_TOLERANCE` all the same.
CLARABEL_TOLERANCE = 1e-7
CLARABEL_REGULARIZATION = 1e-7


def _solve_with_clarabel(problem: DroneProblem, m: QPMatrices, t0: float, facts: dict) -> DroneSolution:
    """``m`` by Clarabel's interior-point method (Goulart & Chen, "Clarabel: an interior-point
    solver for conic programs with quadratic objectives", 2024) through its own API: equality rows
    in the zero cone, each finite side of the other rows in the non-negative cone, each norm limit
    ``‖D_c x‖ ≤ β_c`` as ``s = (β_c, D_c x)`` in a second-order cone (``A x + s = b``)."""
    equal = m.lower == m.upper
    upper = ~equal & np.isfinite(m.upper)
    lower = ~equal & np.isfinite(m.lower)
    blocks = [m.A[equal], m.A[upper], -m.A[lower]]
    b = [m.lower[equal], m.upper[upper], -m.lower[lower]]
    second_order = []
    for c in m.cones:
        block, rhs = _cone_rows(c)
        blocks.append(block)
        b.append(rhs)
        second_order += [clarabel.SecondOrderConeT(c.dim + 1)] * len(c.bound)
    A = sp.vstack(blocks, format="csc")
    b = np.concatenate(b)
    settings = clarabel.DefaultSettings()
    settings.verbose = False
    settings.tol_gap_abs = settings.tol_gap_rel = settings.tol_feas = CLARABEL_TOLERANCE
    settings.static_regularization_constant = CLARABEL_REGULARIZATION
    cones = [clarabel.ZeroConeT(int(equal.sum())), clarabel.NonnegativeConeT(int(upper.sum() + lower.sum())),
             *second_order]
    solution = clarabel.DefaultSolver(sp.triu(2.0 * m.P, format="csc"), np.zeros(m.P.shape[0]), A, b, cones,
                                      settings).solve()
    status = str(solution.status)
    x = np.asarray(solution.x) if status in ("Solved", "AlmostSolved") else None
    return _accept(problem, m, x, status, int(solution.iterations), t0, {**facts, "solver": "Clarabel"})


def _cone_rows(cones: NormCones) -> tuple[sp.csr_matrix, np.ndarray]:
    """Clarabel rows ``(C (dim + 1), vars)`` and right-hand side for ``s = b − A x = (β_c, D_c x)``."""
    coo = cones.D.tocoo()
    cone, axis = np.divmod(coo.row, cones.dim)
    rows = cone * (cones.dim + 1) + 1 + axis
    size = len(cones.bound) * (cones.dim + 1)
    A = sp.csr_matrix((-coo.data, (rows, coo.col)), shape=(size, cones.D.shape[1]))
    b = np.zeros(size)
    b[:: cones.dim + 1] = cones.bound
    return A, b


def _project_onto_equalities(m: QPMatrices, x: np.ndarray) -> np.ndarray:
    """``x`` moved the least (2-norm) to satisfy every equality row exactly (rest, continuity):
    ``x − Aₑᵀ (Aₑ Aₑᵀ)⁻¹ (Aₑ x − bₑ)``; inequalities move by about the solver tolerance."""
    equal = m.lower == m.upper
    a_eq = m.A[equal]
    residual = a_eq @ x - m.lower[equal]
    normal = (a_eq @ a_eq.T).tocsc()
    correction = spla.spsolve(normal, residual)
    if not np.all(np.isfinite(correction)):  # dependent rows: least-squares instead
        correction = spla.lsqr(normal, residual)[0]
    return x - a_eq.T @ correction


@dataclass(frozen=True, eq=False)
class _CollectedRows:
    """Rows gathered by a :class:`_RowBuilder`, ids from 0, in COO form (see :meth:`_RowBuilder.extend`)."""

    rows: np.ndarray
    cols: np.ndarray
    vals: np.ndarray
    lower: np.ndarray
    upper: np.ndarray
    piece: np.ndarray
    family: list[str]
    count: int


class _RowBuilder:
    """Collects constraint rows ``l ≤ Σ_t w_t (dir · b_{piece, first + t}) ≤ u`` in COO form."""

    def __init__(self, degree: int, n_pieces: int):
        self.width, self.n_pieces = degree + 1, n_pieces
        self.rows, self.cols, self.vals = [], [], []
        self.lower, self.upper, self.piece, self.family = [], [], [], []
        self.count = 0

    def add(self, piece, first, weights, directions, lower, upper, family: str | list[str],
            row_ids: np.ndarray | None = None) -> np.ndarray:
        """Rows ``(M,)``: stencil ``weights`` ``(M, L)`` over control points ``first … first + L - 1``
        of ``piece`` ``(M,)``, each projected on ``directions`` ``(M, 3)``. Passing ``row_ids`` adds
        terms to rows already made (their bounds are kept). Returns the row ids."""
        piece, first = np.asarray(piece), np.asarray(first)
        weights, directions = np.atleast_2d(weights), np.atleast_2d(directions)
        m, stencil = len(piece), weights.shape[1]
        if row_ids is None:
            row_ids = self.count + np.arange(m)
            self.count += m
            self.lower.append(np.broadcast_to(lower, (m,)).astype(float))
            self.upper.append(np.broadcast_to(upper, (m,)).astype(float))
            self.piece.append(piece)
            self.family += [family] * m if isinstance(family, str) else list(family)
        cp = first[:, None] + np.arange(stencil)[None, :]
        base = (piece[:, None] * self.width + cp) * 3
        self.rows.append(np.broadcast_to(row_ids[:, None, None], (m, stencil, 3)).ravel())
        self.cols.append((base[:, :, None] + np.arange(3)).ravel())
        self.vals.append((weights[:, :, None] * directions[:, None, :]).ravel())
        return row_ids

    def collected(self) -> _CollectedRows:
        """The rows added so far, as arrays."""
        return _CollectedRows(_joined(self.rows, int), _joined(self.cols, int), _joined(self.vals),
                              _joined(self.lower), _joined(self.upper), _joined(self.piece, int), list(self.family),
                              self.count)

    def extend(self, done: _CollectedRows) -> None:
        """Append rows collected by another builder (their ids follow the rows already here)."""
        self.rows.append(done.rows + self.count)
        self.cols.append(done.cols)
        self.vals.append(done.vals)
        self.lower.append(done.lower)
        self.upper.append(done.upper)
        self.piece.append(done.piece)
        self.family += done.family
        self.count += done.count

    def finish(self, n_vars: int):
        A = sp.coo_matrix((np.concatenate(self.vals), (np.concatenate(self.rows), np.concatenate(self.cols))),
                          shape=(self.count, n_vars)).tocsr()
        A.sum_duplicates()
        norm = np.asarray(abs(A).max(axis=1).todense()).ravel()
        norm[norm == 0] = 1.0
        scale = sp.diags(1.0 / norm)
        lower, upper = np.concatenate(self.lower) / norm, np.concatenate(self.upper) / norm
        return (scale @ A).tocsc(), lower, upper, np.concatenate(self.piece), self.family


def _joined(parts: list[np.ndarray], dtype=float) -> np.ndarray:
    return np.concatenate(parts) if parts else np.zeros(0, dtype)


def _rest_fixed(k_count: int, n: int, order: int) -> np.ndarray:
    """``(K (n + 1),)`` True for the control points the rest conditions pin to the start (the first
    ``order + 1`` of the first piece) and to the goal (the last ``order + 1`` of the last piece)."""
    pinned = np.zeros((k_count, n + 1), dtype=bool)
    pinned[0, : order + 1] = True
    pinned[-1, n - order:] = True
    return pinned.ravel()


def _rest_rows(rows: _RowBuilder, problem: DroneProblem) -> None:
    """Start and goal positions, and derivatives ``1 … rest_order`` zero there."""
    n, last = problem.degree, len(problem.durations) - 1
    for r in range(rest_order(problem.weights) + 1):
        d = difference_operator(n, r)
        for piece, stencil, first, target, family in ((0, d[0, : r + 1], 0, problem.start, "rest at start"),
                                                      (last, d[-1, n - r:], n - r, problem.goal, "rest at goal")):
            value = target if r == 0 else np.zeros(3)
            rows.add(np.full(3, piece), np.full(3, first), np.tile(stencil, (3, 1)), _AXES, value, value, family)


def _join_rows(rows: _RowBuilder, n: int, h: np.ndarray) -> None:
    """Derivatives ``0 … continuity_order`` equal on both sides of every join (time units)."""
    k = np.repeat(np.arange(len(h) - 1), 3)
    if len(k) == 0:
        return
    axes = np.tile(_AXES, (len(h) - 1, 1))
    for r in range(continuity_order(n) + 1):
        d = difference_operator(n, r)
        ids = rows.add(k, np.full(len(k), n - r), d[-1, n - r:][None, :] / h[k, None] ** r, axes, 0.0, 0.0,
                       "continuity at a join")
        rows.add(k + 1, np.zeros(len(k), dtype=int), -d[0, : r + 1][None, :] / h[k + 1, None] ** r, axes,
                 0.0, 0.0, "", row_ids=ids)


def _limit_rows(rows: _RowBuilder, h: np.ndarray, n: int, stencil: list[float], directions: np.ndarray,
                bound_per_h: float, order: int, family: str) -> None:
    """``|dir · Δ^order b_j| ≤ bound_per_h · h**order`` for every piece, start ``j`` and direction."""
    count = n + 1 - order
    piece, first, which = np.meshgrid(np.arange(len(h)), np.arange(count), np.arange(len(directions)),
                                      indexing="ij")
    piece, first, which = piece.ravel(), first.ravel(), which.ravel()
    bound = bound_per_h * h[piece] ** order
    rows.add(piece, first, np.tile(stencil, (len(piece), 1)), directions[which], -bound, bound, family)
