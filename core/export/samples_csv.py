"""``samples.csv``: every drone's state on a regular time grid (SI units)."""

from __future__ import annotations

from typing import TextIO

import numpy as np

from ..errors import ExportError
from ..limits import MAX_SAMPLE_RATE_HZ, MAX_SAMPLE_ROWS
from ..trajectory import FleetTrajectory

HEADER = "drone,t,x,y,z,vx,vy,vz,ax,ay,az"
#: Rows formatted at once (bounds the memory of a large export: about 250 bytes a row).
CHUNK_ROWS = 200_000
#: Rows evaluated for the whole fleet at once on the shared time grid (80 bytes each); larger
#: exports evaluate drone by drone.
WHOLE_FLEET_ROWS = 4_000_000


def sample_times(duration: float, rate_hz: float) -> np.ndarray:
    """The grid ``(T,)`` in seconds: ``0, 1/rate, …`` up to ``duration``, which is always included."""
    steps = int(np.floor(duration * rate_hz + 1e-9))
    t = np.arange(steps + 1) / rate_hz
    return np.r_[t, [duration]] if t[-1] < duration - 1e-9 else t


def check_sample_rate(rate_hz: float, duration: float, n_drones: int) -> None:
    """Raise :class:`ExportError` unless ``0 < rate_hz ≤`` :data:`MAX_SAMPLE_RATE_HZ` and the file
    stays within :data:`MAX_SAMPLE_ROWS` rows."""
    if not (np.isfinite(rate_hz) and 0 < rate_hz <= MAX_SAMPLE_RATE_HZ):
        raise ExportError(f"--rate {rate_hz}: the samples.csv rate must be above 0 and at most "
                          f"{MAX_SAMPLE_RATE_HZ:g} Hz")
    rows = n_drones * (int(duration * rate_hz) + 2)
    if rows > MAX_SAMPLE_ROWS:
        raise ExportError(f"--rate {rate_hz:g}: samples.csv would hold {rows:,} rows ({n_drones} drones over "
                          f"{duration:.0f} s); at most {MAX_SAMPLE_ROWS:,} are written, so lower the rate")


def write_samples_csv(out: TextIO, traj: FleetTrajectory, rate_hz: float, comment: str) -> None:
    """Write the CSV to ``out``: ``comment`` lines (each prefixed ``#``), the header, then rows
    grouped by drone, sampled at ``rate_hz`` (see :func:`sample_times`)."""
    check_sample_rate(rate_hz, traj.duration, traj.n_drones)
    t = sample_times(traj.duration, rate_hz)
    for line in comment.splitlines():
        out.write(f"# {line}\n")
    out.write(HEADER + "\n")
    for drones, block in sample_blocks(traj, t):
        out.write(fixed_point_rows([traj.drone_ids[d] for d in drones], len(t), block).decode("ascii"))


def sample_blocks(traj: FleetTrajectory, t: np.ndarray):
    """``(drone indices, rows (len(drones) · T, 10))`` blocks of ``t, x…az`` grouped by drone.
    The fleet is evaluated on the shared grid at once when it fits :data:`WHOLE_FLEET_ROWS`
    (a basis per piece, not per row), else drone by drone."""
    per_chunk = max(1, CHUNK_ROWS // len(t))
    whole = traj.n_drones * len(t) <= WHOLE_FLEET_ROWS
    states = np.concatenate([traj.evaluate(t, order) for order in (0, 1, 2)], axis=-1) if whole else None  # (T, N, 9)
    for first in range(0, traj.n_drones, per_chunk):
        drones = np.arange(first, min(first + per_chunk, traj.n_drones))
        times = np.tile(t, len(drones))
        if whole:
            rows = states[:, drones].transpose(1, 0, 2).reshape(-1, 9)
        else:
            rows = np.column_stack([traj.evaluate_rows(np.repeat(drones, len(t)), times, order)
                                    for order in (0, 1, 2)])
        yield drones, np.column_stack([times, rows])


def fixed_point_rows(ids: list[str], run: int, values: np.ndarray) -> bytes:
    """CSV text of rows ``id,v0,…,v9`` (``ids[k]`` on the ``run`` rows from ``k · run``), every
    value as ``%.6f`` writes it (rounded to the
    nearest micro-unit, so a tie in the last digit may round the other way, and ``-0.000000`` is
    written ``0.000000``), built with numpy: each field goes into a fixed-width byte matrix padded
    with NUL bytes, which are then dropped. ``ids`` ``(M,)`` are ASCII without NUL (drone ids
    are, see the scene rules); ``values`` ``(len(ids) · run, C)`` are finite with ``|v| < 2e9``."""
    m, c = values.shape
    micro = np.rint(values * 1e6).astype(np.int64)
    negative = micro < 0
    whole, frac = np.divmod(np.abs(micro), 1_000_000)
    whole, frac = whole.astype(np.int32), frac.astype(np.int32)
    digits = max(1, len(str(int(whole.max())))) if m else 1
    width = 1 + digits + 1 + 6 + 1  # sign, integer digits, point, decimals, separator
    field = np.zeros((m, c, width), dtype=np.uint8)
    field[..., 0] = np.where(negative, ord("-"), 0)
    rest = whole.copy()
    for j in range(digits):  # units first; leading zeros stay NUL (dropped)
        rest, digit = np.divmod(rest, 10)
        column = (digit + ord("0")).astype(np.uint8)
        field[..., digits - j] = column if j == 0 else np.where(whole >= 10**j, column, 0)
    field[..., digits + 1] = ord(".")
    rest = frac
    for j in range(6):
        rest, digit = np.divmod(rest, 10)
        field[..., digits + 7 - j] = digit + ord("0")
    field[..., -1] = ord(",")
    field[:, -1, -1] = ord("\n")
    prefix = np.zeros((m, max(len(i) for i in ids) + 1), dtype=np.uint8)
    for k, text in enumerate(ids):
        prefix[k * run:(k + 1) * run, :len(text) + 1] = np.frombuffer(text.encode("ascii") + b",", dtype=np.uint8)
    table = np.concatenate([prefix, field.reshape(m, c * width)], axis=1).ravel()
    return table[table != 0].tobytes()


#: Columns of the columnar samples file (the CSV's columns, same units).
COLUMNS = HEADER.split(",")


def write_samples_parquet(path, traj: FleetTrajectory, rate_hz: float, status: dict) -> None:
    """``samples.parquet``: the rows of :func:`write_samples_csv` as columns (``drone`` dictionary-
    encoded, the rest float64), written in row groups; ``status`` goes into the file's key-value
    metadata under ``skyloom``. Needs pyarrow (``pip install 'skyloom[columnar]'``)."""
    try:
        import pyarrow as pa
        import pyarrow.parquet as pq
    except ImportError:
        raise ExportError("--samples parquet needs pyarrow: pip install 'skyloom[columnar]'") from None
    import json

    check_sample_rate(rate_hz, traj.duration, traj.n_drones)
    t = sample_times(traj.duration, rate_hz)
    schema = pa.schema([("drone", pa.dictionary(pa.int32(), pa.string())), *((c, pa.float64()) for c in COLUMNS[1:])],
                       metadata={"skyloom": json.dumps(status)})
    ids = pa.array(traj.drone_ids)
    with pq.ParquetWriter(path, schema) as writer:
        for drones, block in sample_blocks(traj, t):
            drone = pa.DictionaryArray.from_arrays(pa.array(np.repeat(drones, len(t)), pa.int32()), ids)
            writer.write_table(pa.table([drone, *(block[:, k] for k in range(10))], schema=schema))
