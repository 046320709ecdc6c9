"""Bulk writes of points at the speed of each store.

SQLite: the driver's ``executemany`` on the session's own connection, in batches.
PostgreSQL: binary ``COPY`` (psycopg 3), straight into ``points`` for series the import has
just created (they cannot hold points yet), and for the others into a temporary staging
table followed by one ``INSERT … ON CONFLICT`` upsert. Either way the points share the
caller's transaction and no ORM objects are built.
"""

from __future__ import annotations

from collections.abc import Iterator

import numpy as np
from sqlalchemy import Connection
from sqlalchemy.orm import Session

from webapp.store._sql import driver_cursor, placeholder

BATCH_ROWS = 100_000
COLUMNS = "series_id, ts, value, import_id"
UPSERT = (
    " ON CONFLICT (series_id, ts) DO UPDATE"
    " SET value = excluded.value, import_id = excluded.import_id"
)

# PostgreSQL's binary COPY: a signature, flags and header-extension length, then per row a
# field count and (length, bytes) per field, big-endian; a length of -1 is NULL.
COPY_SIGNATURE = b"PGCOPY\n\xff\r\n\x00" + bytes(8)
COPY_TRAILER = b"\xff\xff"
COPY_ROW = np.dtype(
    [
        ("fields", ">i2"),
        ("sid_len", ">i4"),
        ("sid", ">i4"),
        ("ts_len", ">i4"),
        ("ts", ">i8"),
        ("value_len", ">i4"),
        ("value", ">f8"),
        ("import_len", ">i4"),
        ("import_id", ">i4"),
    ]
)


def write_points(
    session: Session,
    import_id: int,
    series_ids: np.ndarray,
    ts: np.ndarray,
    values: np.ndarray,
    *,
    upsert: bool,
) -> None:
    """Write points, sorted by (series, ts), as written by ``import_id``; with ``upsert``
    a point already stored is overwritten (only series the import created may skip it)."""
    if not len(ts):
        return
    connection = session.connection()
    if connection.dialect.name == "postgresql":
        _copy_points(connection, import_id, series_ids, ts, values, upsert=upsert)
    else:
        _insert_points(connection, import_id, series_ids, ts, values, upsert=upsert)


def _row_slices(n: int) -> Iterator[slice]:
    for start in range(0, n, BATCH_ROWS):
        yield slice(start, start + BATCH_ROWS)


def _insert_points(
    connection: Connection,
    import_id: int,
    series_ids: np.ndarray,
    ts: np.ndarray,
    values: np.ndarray,
    *,
    upsert: bool,
) -> None:
    p = placeholder(connection.dialect.paramstyle)
    # The import id is written into the statement (one integer we made): no binding per row.
    sql = f"INSERT INTO points ({COLUMNS}) VALUES ({p}, {p}, {p}, {int(import_id)})"
    sql += UPSERT if upsert else ""
    with driver_cursor(connection, sql) as cursor:
        for part in _row_slices(len(ts)):
            rows = zip(
                series_ids[part].tolist(), ts[part].tolist(), values[part].tolist(), strict=True
            )
            cursor.executemany(sql, rows)


def _copy_points(
    connection: Connection,
    import_id: int,
    series_ids: np.ndarray,
    ts: np.ndarray,
    values: np.ndarray,
    *,
    upsert: bool,
) -> None:
    target = "points_staging" if upsert else "points"
    copy_sql = f"COPY {target} ({COLUMNS}) FROM STDIN (FORMAT BINARY)"
    with driver_cursor(connection, copy_sql) as cursor:
        if upsert:
            cursor.execute(
                "CREATE TEMPORARY TABLE points_staging (series_id integer, ts bigint, "
                "value double precision, import_id integer) ON COMMIT DROP"
            )
        with cursor.copy(copy_sql) as copy:
            copy.write(COPY_SIGNATURE)
            for part in _row_slices(len(ts)):
                copy.write(copy_rows(import_id, series_ids[part], ts[part], values[part]))
            copy.write(COPY_TRAILER)
        if upsert:
            cursor.execute(
                f"INSERT INTO points ({COLUMNS}) SELECT {COLUMNS} FROM points_staging" + UPSERT
            )
            cursor.execute("DROP TABLE points_staging")


def copy_rows(import_id: int, series_ids: np.ndarray, ts: np.ndarray, values: np.ndarray) -> bytes:
    """The rows of a binary COPY into (series_id, ts, value, import_id)."""
    rows = np.empty(len(ts), dtype=COPY_ROW)
    rows["fields"] = 4
    rows["sid_len"], rows["sid"] = 4, series_ids
    rows["ts_len"], rows["ts"] = 8, ts
    rows["value_len"], rows["value"] = 8, values
    rows["import_len"], rows["import_id"] = 4, import_id
    return rows.tobytes()
