"""What ``skyloom check`` proves about an export besides the flight itself: that every number a
flight controller or show system reads agrees with the verified Bézier curves, that every file
is the one Skyloom wrote (SHA-256 digests in the manifest), and that every file carries the same
status and caution. Each mismatch is an :class:`ExportFinding` naming the file and the drone."""

from __future__ import annotations

import itertools
import json
from dataclasses import dataclass
from pathlib import Path

import numpy as np

from ..bezier import bernstein_basis
from ..reading import file_sha256
from .documents import STAMP_FIELDS, ExportStatus
from .load import LoadedExport
from .samples_csv import COLUMNS, HEADER, sample_times
from .target import MANIFEST
from .trajectory_json import piece_points

#: Largest accepted gap between a piece's power-basis polynomial and its Bézier curve, per metre of
#: the largest coordinate (at least 1 m): 1 µm/m. Both are written with full float precision, so
#: only an edited or damaged file comes near it.
MONOMIAL_TOLERANCE = 1e-6
#: samples.csv values are written with 6 decimals: rounding is 5e-7; accepted gap 2e-6 plus 1e-9
#: of the value.
SAMPLE_ABS_TOLERANCE, SAMPLE_REL_TOLERANCE = 2e-6, 1e-9
#: Rows of samples.csv compared at once (memory bound for large fleets).
SAMPLE_BLOCK_ROWS = 200_000
#: Findings listed per file before the rest are counted.
MAX_FINDINGS_PER_FILE = 10
_QUANTITIES = ("position", "velocity", "acceleration")


@dataclass(frozen=True)
class ExportFinding:
    """One mismatch: ``file`` relative to the export folder, the ``drone`` concerned (if any)."""

    file: str
    drone: str | None
    problem: str

    def describe(self) -> str:
        return f"{self.file}" + (f" (drone {self.drone})" if self.drone else "") + f": {self.problem}"


def audit_export(loaded: LoadedExport) -> list[ExportFinding]:
    """Every consistency problem of ``loaded`` (empty when the files agree with each other)."""
    findings = _digests(loaded) + _stamps(loaded) + _manifest_figures(loaded) + _monomials(loaded)
    findings += _samples(loaded)
    out, per_file = [], {}
    for f in findings:
        per_file[f.file] = per_file.get(f.file, 0) + 1
        if per_file[f.file] <= MAX_FINDINGS_PER_FILE:
            out.append(f)
    for name, count in per_file.items():
        if count > MAX_FINDINGS_PER_FILE:
            out.append(ExportFinding(name, None, f"... and {count - MAX_FINDINGS_PER_FILE} more problems"))
    return out


def _digests(loaded: LoadedExport) -> list[ExportFinding]:
    out = []
    m = loaded.manifest
    for name in m.files:
        if name != MANIFEST and name not in m.digests:
            out.append(ExportFinding(MANIFEST, None, f"lists {name} but records no digest for it"))
    for name, digest in m.digests.items():
        path = loaded.folder / name
        if not path.is_file():
            out.append(ExportFinding(name, None, "is missing (the manifest lists it)"))
        elif file_sha256(path) != digest:
            out.append(ExportFinding(name, None, "changed since it was exported (its SHA-256 digest differs)"))
    return out


def _stamp_problem(found: ExportStatus | None, expected: ExportStatus) -> str | None:
    if found is None:
        return "carries no status and caution"
    if found != expected:
        fields = [f for f in STAMP_FIELDS if getattr(found, f) != getattr(expected, f)]
        return f"its {', '.join(fields)} differ from plan.json's"
    return None


def _read_stamp(path: Path, pick) -> ExportStatus | None:
    if not path.is_file():  # missing or not a regular file: reported by the digest check
        return None
    try:
        return ExportStatus.model_validate(pick(json.loads(path.read_text(encoding="utf-8"))))
    except (OSError, ValueError, TypeError, KeyError):
        return None


def _parquet_stamp(path: Path) -> ExportStatus | None:
    try:
        import pyarrow.parquet as pq

        metadata = pq.read_schema(path).metadata or {}
        return ExportStatus.model_validate(json.loads(metadata[b"skyloom"]))
    except (ImportError, OSError, ValueError, KeyError, TypeError):
        return None


def _stamps(loaded: LoadedExport) -> list[ExportFinding]:
    expected = loaded.manifest.stamp()
    out = [ExportFinding(MANIFEST, None, p) for p in expected.problems()]
    if not expected.verified:
        out.append(ExportFinding(MANIFEST, None, "the export is marked UNVERIFIED: it failed verification when it "
                                 "was written; do not fly it"))
    stamps: list[tuple[str, str | None, ExportStatus | None]] = [("scene.json", None, loaded.scene_stamp)]
    stamps += [(e.file, e.id, d.stamp()) for e, d in zip(loaded.manifest.drones, loaded.documents, strict=True)]
    stamps.append(("report.json", None, _read_stamp(loaded.folder / "report.json",
                                                    lambda d: {k: d[k] for k in STAMP_FIELDS})))
    stamps.append(("paths.gltf", None, _read_stamp(loaded.folder / "paths.gltf", lambda d: d["asset"]["extras"])))
    if (loaded.folder / "samples.parquet").is_file():
        stamps.append(("samples.parquet", None, _parquet_stamp(loaded.folder / "samples.parquet")))
    for name, drone, found in stamps:
        problem = _stamp_problem(found, expected)
        if problem:
            out.append(ExportFinding(name, drone, problem))
    for name in ("report.txt", "samples.csv"):
        if name not in loaded.manifest.files or not (loaded.folder / name).is_file():
            continue
        try:
            with open(loaded.folder / name, encoding="utf-8") as f:
                head = [f.readline().rstrip("\n") for _ in range(2)]
        except (OSError, UnicodeDecodeError):
            continue  # reported by the digest check
        lines = expected.header.splitlines()
        if name == "samples.csv":
            lines = [f"# {line}" for line in lines]
        if head != lines:
            out.append(ExportFinding(name, None, "does not open with plan.json's status and caution"))
    return out


def _manifest_figures(loaded: LoadedExport) -> list[ExportFinding]:
    m, traj = loaded.manifest, loaded.trajectory
    out = []
    if len(m.breaks_s) != len(traj.breaks) or not np.allclose(m.breaks_s, traj.breaks, rtol=0, atol=1e-9):
        out.append(ExportFinding(MANIFEST, None, "breaks_s differ from the trajectory files' piece times"))
    if abs(m.duration_s - traj.duration) > 1e-9:
        out.append(ExportFinding(MANIFEST, None, f"duration_s {m.duration_s:g} differs from the trajectories' "
                                 f"{traj.duration:g} s"))
    if m.degree != traj.degree:
        out.append(ExportFinding(MANIFEST, None, f"degree {m.degree} differs from the trajectories' {traj.degree}"))
    return out


def _monomials(loaded: LoadedExport) -> list[ExportFinding]:
    """Each piece's power-basis polynomial against its Bézier curve at 2(n + 1) Chebyshev points."""
    traj, out = loaded.trajectory, []
    n = traj.degree
    m = 2 * (n + 1)
    tau = 0.5 - 0.5 * np.cos(np.pi * (np.arange(m) + 0.5) / m)
    basis = bernstein_basis(n, tau)  # (m, n + 1)
    for entry, doc, points in zip(loaded.manifest.drones, loaded.documents, traj.control_points, strict=True):
        try:
            mono = np.array(piece_points(doc, "monomial"))
        except ValueError as exc:
            out.append(ExportFinding(entry.file, entry.id, f"monomial: {exc}"))
            continue
        if mono.shape != points.shape:
            out.append(ExportFinding(entry.file, entry.id, f"monomial coefficients have shape {mono.shape[1:]} per "
                                     f"piece, the Bézier points {points.shape[1:]}"))
            continue
        local = tau[None, :] * traj.durations[:, None]  # (S, m) seconds from each piece start
        powers = local[..., None] ** np.arange(n + 1)  # (S, m, n + 1)
        from_mono = np.einsum("smk,skd->smd", powers, mono)
        from_bezier = np.einsum("mk,skd->smd", basis, points)
        gap = np.linalg.norm(from_mono - from_bezier, axis=-1).max(axis=1)  # (S,)
        allowed = MONOMIAL_TOLERANCE * max(1.0, float(np.abs(points).max()))
        for s in np.nonzero(~(gap <= allowed))[0][:3]:
            out.append(ExportFinding(entry.file, entry.id, f"piece {s} ({traj.breaks[s]:.3f} s): the monomial "
                                     f"coefficients are {gap[s]:.3g} m from the Bézier curve (allowed "
                                     f"{allowed:.1g} m)"))
    return out


def _sample_blocks(path: Path):
    """``(drone ids, values (M, 10))`` blocks of a samples file, in file order (CSV or Parquet).
    Raises ValueError with the reason when the file is malformed."""
    if path.suffix == ".parquet":
        import pyarrow.parquet as pq  # written only when pyarrow is installed

        parquet = pq.ParquetFile(path)
        if parquet.schema_arrow.names != COLUMNS:
            raise ValueError(f"the columns are not {','.join(COLUMNS)}")
        for batch in parquet.iter_batches(batch_size=SAMPLE_BLOCK_ROWS):
            ids = batch.column(0).to_pylist()
            yield ids, np.column_stack([batch.column(k).to_numpy(zero_copy_only=False) for k in range(1, 11)])
        return
    with open(path, encoding="utf-8") as f:
        lines = (line for line in f if not line.startswith("#"))
        if next(lines, "").rstrip("\n") != HEADER:
            raise ValueError(f"the column header is not {HEADER}")
        while block := list(itertools.islice(lines, SAMPLE_BLOCK_ROWS)):
            ids, values = zip(*(line.rstrip("\n").partition(",")[::2] for line in block), strict=True)
            data = np.loadtxt(values, delimiter=",", ndmin=2)
            if data.shape[1] != 10:
                raise ValueError(f"rows have {data.shape[1] + 1} columns, 11 expected")
            yield list(ids), data


def _samples(loaded: LoadedExport) -> list[ExportFinding]:
    """Every row of the samples file against the curves: the drone order, the time grid at the
    manifest's rate, and position, velocity and acceleration within the tolerance above."""
    traj = loaded.trajectory
    name = next((f for f in loaded.manifest.files if f.startswith("samples.")), "samples.csv")
    path = loaded.folder / name
    if not path.is_file():
        return []  # reported by the digest check
    t = sample_times(traj.duration, loaded.manifest.sample_rate_hz)
    expected_rows = traj.n_drones * len(t)
    out, bad_drones, seen = [], set(), 0
    try:
        for ids, data in _sample_blocks(path):
            index = np.arange(seen, seen + len(ids))
            seen += len(ids)
            if seen > expected_rows:
                return out + [ExportFinding(name, None, f"holds more than the {expected_rows} rows expected")]
            drone_of, step = index // len(t), index % len(t)
            want_ids = np.array(traj.drone_ids)[drone_of]
            wrong_id = np.nonzero(np.array(ids, dtype=object) != want_ids)[0]
            if len(wrong_id):
                k = wrong_id[0]
                return out + [ExportFinding(name, str(want_ids[k]), f"data row {index[k] + 1} names drone "
                                            f"{str(ids[k])[:20]!r} where {want_ids[k]!r} was expected")]
            curves = [traj.evaluate_rows(drone_of, t[step], order) for order in (0, 1, 2)]
            exact = np.column_stack([t[step], *curves])
            wrong = ~(np.abs(data - exact) <= SAMPLE_ABS_TOLERANCE + SAMPLE_REL_TOLERANCE * np.abs(exact))
            for r in np.nonzero(wrong.any(axis=1))[0]:
                drone = traj.drone_ids[drone_of[r]]
                if drone in bad_drones:
                    continue
                bad_drones.add(drone)
                col = int(np.argmax(wrong[r]))
                what = "t" if col == 0 else f"{_QUANTITIES[(col - 1) // 3]} {'xyz'[(col - 1) % 3]}"
                out.append(ExportFinding(name, drone, f"at t = {t[step[r]]:.3f} s, {what} is {data[r, col]:.6f} "
                                         f"but the curve gives {exact[r, col]:.6f}"))
    except ValueError as exc:
        return out + [ExportFinding(name, None, f"malformed after {seen} rows: {exc}")]
    except (OSError, UnicodeDecodeError) as exc:
        return out + [ExportFinding(name, None, f"cannot be read ({exc})")]
    if seen < expected_rows:
        out.append(ExportFinding(name, None, f"holds {seen} rows; {expected_rows} expected ({traj.n_drones} drones × "
                                 f"{len(t)} times at {loaded.manifest.sample_rate_hz:g} Hz)"))
    return out
