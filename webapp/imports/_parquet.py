"""Parquet in the long layout: the same columns as a long CSV; the timestamp column may be a
Parquet timestamp (with or without a zone), an epoch number or ISO 8601 text."""

from __future__ import annotations

import numpy as np
import pyarrow as pa
import pyarrow.parquet as pq

from webapp.imports._long import TIMESTAMP_NAMES, find_column, parse_long_table
from webapp.imports._problems import ProblemLog
from webapp.imports._timestamps import NaiveTimes
from webapp.imports._types import ParsedImport


def parse_parquet(
    data: bytes | memoryview, file_name: str, times: NaiveTimes, log: ProblemLog
) -> ParsedImport:
    log.place = "row"
    try:
        table = pq.read_table(pa.BufferReader(pa.py_buffer(data)))
    except (pa.ArrowException, OSError) as exc:
        log.reject(f"not a readable Parquet file: {exc}")
    if table.num_rows == 0:
        log.reject("the Parquet file has no rows")
    parsed = parse_long_table(
        table,
        data=data,
        file_name=file_name,
        format="parquet",
        times=times,
        log=log,
        line_of=lambda rows: np.asarray(rows) + 1,
        header_line=None,
    )
    ts_name = find_column(table.column_names, TIMESTAMP_NAMES)
    if ts_name and pa.types.is_timestamp(table.schema.field(ts_name).type):
        parsed.timestamp_unit = "Parquet timestamp"
    return parsed
