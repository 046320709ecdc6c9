"""Point blocks: each series' points packed per UTC day, the layout series are read from.

Why two tables. ``points`` keeps one row per sample, keyed by (series, ts): imports upsert
into it (the last writer wins) and undoing an import deletes exactly the rows it wrote, both
of which need a row per sample. But a row per sample is slow to read back: the driver builds
a tuple per row, and eight weeks of 1-minute data are 80,640 of them, an order of magnitude
slower than reading the same points from a Parquet file. So each (series, UTC day) also
has one ``point_blocks`` row holding that day's timestamps and values as two compressed
arrays; reading a series is one query returning a row per day and a few ``frombuffer``
calls. The blocks are derived data: the store rebuilds the days an import or an undo
touched (``webapp.store.stats.refresh``), from the new points themselves for a series an
import has just created, otherwise from ``points``.

Encoding: timestamps as int64 steps from the previous one (a regular grid is one repeated
number), values as float64; both as zstd frames (the ``zstandard`` package: its per-call cost
is a few microseconds, and a read decodes two frames per day), decoded straight into the
arrays of the whole read. A block costs a few bytes per point on top of the rows in
``points`` (about 2.5 for values with a decimal or two, as text exports give them;
``benchmarks/bench_store.py``).
"""

from __future__ import annotations

import threading
from collections.abc import Iterable, Iterator, Sequence
from typing import Any

import numpy as np
import zstandard
from sqlalchemy import delete, insert, select
from sqlalchemy.orm import Session

from webapp.store._sql import driver_cursor, placeholder
from webapp.store.models import PointBlock

DAY_MS = 86_400_000
_LEVEL = 1
_contexts = threading.local()  # a zstandard context must not be shared between threads


def pack(ts: np.ndarray, values: np.ndarray) -> tuple[bytes, bytes]:
    """One block's (ts, value) columns as compressed bytes."""
    steps = np.diff(ts.astype("<i8"), prepend=np.int64(0))
    return _compress(steps.tobytes()), _compress(values.astype("<f8").tobytes())


def unpack(n: int, ts: bytes, value: bytes) -> tuple[np.ndarray, np.ndarray]:
    return unpack_all([(n, ts, value)])


def unpack_all(found: Sequence[tuple[int, bytes, bytes]]) -> tuple[np.ndarray, np.ndarray]:
    """The (ts, values) of consecutive blocks, decoded together: each block's frames written
    straight into the read's two arrays, then one running sum over all the steps, less what
    the blocks before each one added (each block starts absolute)."""
    counts = np.array([row[0] for row in found], dtype=np.int64)
    total = int(counts.sum())
    steps, values = np.empty(total, dtype="<i8"), np.empty(total, dtype="<f8")
    step_bytes, value_bytes = memoryview(steps).cast("B"), memoryview(values).cast("B")
    decompressor = _context("decompressor", zstandard.ZstdDecompressor)
    at = 0
    for n, ts, value in found:
        size = n * 8
        step_bytes[at : at + size] = decompressor.decompress(ts, max_output_size=size)
        value_bytes[at : at + size] = decompressor.decompress(value, max_output_size=size)
        at += size
    running = np.cumsum(steps, out=steps)
    before = np.concatenate([[0], running[np.cumsum(counts)[:-1] - 1]])
    running -= np.repeat(before, counts)
    return running, values.astype(np.float64, copy=False)


def _compress(data: bytes) -> bytes:
    compressor = _context("compressor", lambda: zstandard.ZstdCompressor(level=_LEVEL))
    return compressor.compress(data)


def _context(name: str, make: Any) -> Any:
    context = getattr(_contexts, name, None)
    if context is None:
        context = make()
        setattr(_contexts, name, context)
    return context


def read(
    session: Session, series_id: int, start_ms: int | None = None, end_ms: int | None = None
) -> tuple[np.ndarray, np.ndarray]:
    """Sorted (ts, values) of one series between ``start_ms`` and ``end_ms`` (inclusive)."""
    stmt = select(PointBlock.n, PointBlock.ts, PointBlock.value).where(
        PointBlock.series_id == series_id
    )
    if start_ms is not None:
        stmt = stmt.where(PointBlock.day >= start_ms // DAY_MS)
    if end_ms is not None:
        stmt = stmt.where(PointBlock.day <= end_ms // DAY_MS)
    found = session.execute(stmt.order_by(PointBlock.day)).all()
    if not found:
        return np.empty(0, dtype=np.int64), np.empty(0, dtype=np.float64)
    ts, values = unpack_all(found)
    keep = np.ones(len(ts), dtype=bool)
    if start_ms is not None:
        keep &= ts >= start_ms
    if end_ms is not None:
        keep &= ts <= end_ms
    if keep.all():
        return ts, values
    return ts[keep], values[keep]


def write(session: Session, series_id: int, ts: np.ndarray, values: np.ndarray) -> None:
    """Insert the blocks of points sorted by ts (their days must hold no block yet)."""
    rows = block_rows(series_id, ts, values)
    if rows:
        session.execute(insert(PointBlock), rows)


def block_rows(series_id: int, ts: np.ndarray, values: np.ndarray) -> list[dict[str, Any]]:
    """The ``point_blocks`` rows of one series' points, sorted by ts."""
    rows = []
    for day, day_ts, day_values in _days(ts, values):
        packed_ts, packed_values = pack(day_ts, day_values)
        rows.append(
            {
                "series_id": series_id,
                "day": day,
                "n": len(day_ts),
                "ts": packed_ts,
                "value": packed_values,
            }
        )
    return rows


def rebuild(session: Session, series_ids: Iterable[int], span: tuple[int, int] | None) -> None:
    """Rebuild the blocks of ``series_ids`` over the days of ``span`` (ts in ms, inclusive;
    None: every day) from their rows in ``points``."""
    for series_id in series_ids:
        first_day, last_day = (span[0] // DAY_MS, span[1] // DAY_MS) if span else (None, None)
        stmt = delete(PointBlock).where(PointBlock.series_id == series_id)
        if span is not None:
            stmt = stmt.where(PointBlock.day.between(first_day, last_day))
        session.execute(stmt.execution_options(synchronize_session=False))
        lo = first_day * DAY_MS if first_day is not None else None
        hi = (last_day + 1) * DAY_MS - 1 if last_day is not None else None
        ts, values = read_rows(session, series_id, lo, hi)
        write(session, series_id, ts, values)


def read_rows(
    session: Session, series_id: int, start_ms: int | None, end_ms: int | None
) -> tuple[np.ndarray, np.ndarray]:
    """(ts, values) from the ``points`` rows, through the driver's cursor."""
    connection = session.connection()
    p = placeholder(connection.dialect.paramstyle)
    sql = f"SELECT ts, value FROM points WHERE series_id = {p}"
    params: list[int] = [series_id]
    if start_ms is not None:
        sql += f" AND ts >= {p}"
        params.append(start_ms)
    if end_ms is not None:
        sql += f" AND ts <= {p}"
        params.append(end_ms)
    sql += " ORDER BY ts"
    with driver_cursor(connection, sql) as cursor:
        cursor.execute(sql, params)
        return rows_to_arrays(cursor.fetchall())


def rows_to_arrays(rows: list[Any]) -> tuple[np.ndarray, np.ndarray]:
    """(ts, value) rows as int64 and float64 arrays; a NULL value is NaN."""
    ts = np.fromiter((r[0] for r in rows), dtype=np.int64, count=len(rows))
    values = np.fromiter((r[1] for r in rows), dtype=np.float64, count=len(rows))
    return ts, values


def _days(ts: np.ndarray, values: np.ndarray) -> Iterator[tuple[int, np.ndarray, np.ndarray]]:
    if not len(ts):
        return
    days = ts // DAY_MS
    cuts = np.flatnonzero(np.diff(days)) + 1
    for lo, hi in zip(np.r_[0, cuts], np.r_[cuts, len(ts)], strict=True):
        yield int(days[lo]), ts[lo:hi], values[lo:hi]
