"""``samples.csv``: every drone's state on a regular time grid (SI units)."""

from __future__ import annotations

from typing import TextIO

import numpy as np

from ..errors import ExportError
from ..limits import MAX_SAMPLE_RATE_HZ, MAX_SAMPLE_ROWS
from ..trajectory import FleetTrajectory

HEADER = "drone,t,x,y,z,vx,vy,vz,ax,ay,az"
#: Rows evaluated at once (bounds the memory of a large export: about 100 bytes a row).
CHUNK_ROWS = 200_000


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
    per_chunk = max(1, CHUNK_ROWS // len(t))
    for first in range(0, traj.n_drones, per_chunk):
        drones = np.arange(first, min(first + per_chunk, traj.n_drones))
        rows, times = np.repeat(drones, len(t)), np.tile(t, len(drones))
        block = np.column_stack([times, *(traj.evaluate_rows(rows, times, order) for order in (0, 1, 2))])
        for k, d in enumerate(drones):
            # Drone ids are checked at load (letters, digits, '_', '-', '.'): safe inside a format string.
            row_format = traj.drone_ids[d] + ",%.6f" * 10 + "\n"
            out.write("".join(row_format % tuple(r) for r in block[k * len(t):(k + 1) * len(t)]))


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
    per_chunk = max(1, CHUNK_ROWS // len(t))
    with pq.ParquetWriter(path, schema) as writer:
        for first in range(0, traj.n_drones, per_chunk):
            drones = np.arange(first, min(first + per_chunk, traj.n_drones))
            rows, times = np.repeat(drones, len(t)), np.tile(t, len(drones))
            block = np.column_stack([times, *(traj.evaluate_rows(rows, times, order) for order in (0, 1, 2))])
            drone = pa.DictionaryArray.from_arrays(pa.array(rows, pa.int32()), ids)
            writer.write_table(pa.table([drone, *(block[:, k] for k in range(10))], schema=schema))
