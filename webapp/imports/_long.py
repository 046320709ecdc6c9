"""The long layout (one row per point: timestamp, metric, value, an optional unit, label
columns), shared by CSV long and Parquet once their reader has produced an Arrow table."""

from __future__ import annotations

import numpy as np
import pandas as pd
import pyarrow as pa

from webapp.imports._assemble import assemble, series_problem
from webapp.imports._problems import LineMap, ProblemLog
from webapp.imports._timestamps import NaiveTimes, parse_timestamps
from webapp.imports._types import ParsedImport, SeriesMeta
from webapp.imports._values import parse_values

TIMESTAMP_NAMES = ("timestamp", "time", "ts", "datetime", "date", "timestamp_utc", "time_utc")
METRIC_NAMES = ("metric", "name", "metric_name")
VALUE_NAMES = ("value", "val")
UNIT_NAMES = ("unit",)
_PACKED_LIMIT = 2**40
LONG_NEEDS = (
    "a long file needs columns named timestamp (or time/ts), metric (or name) and value, "
    "with an optional unit column and any other column a label"
)


def find_column(names: list[str], aliases: tuple[str, ...]) -> str | None:
    """The first column whose name (any case, spaces trimmed) is one of ``aliases``."""
    lowered = {name.strip().lower(): name for name in names}
    for alias in aliases:
        if alias in lowered:
            return lowered[alias]
    return None


def long_roles(names: list[str], log: ProblemLog, line: int | None) -> tuple[str, str, str]:
    """The timestamp, metric and value columns, or a rejection naming what is missing."""
    roles = {
        "timestamp": find_column(names, TIMESTAMP_NAMES),
        "metric": find_column(names, METRIC_NAMES),
        "value": find_column(names, VALUE_NAMES),
    }
    missing = [role for role, name in roles.items() if name is None]
    if missing:
        log.reject(
            f"no {' or '.join(missing)} column; {LONG_NEEDS}; found {', '.join(names)}",
            line=line,
        )
    return roles["timestamp"], roles["metric"], roles["value"]  # type: ignore[return-value]


def parse_long_table(
    table: pa.Table,
    *,
    data: bytes | memoryview,
    file_name: str,
    format: str,
    times: NaiveTimes,
    log: ProblemLog,
    line_of: LineMap,
    header_line: int | None,
    decimal_comma: bool = False,
) -> ParsedImport:
    names = table.column_names
    ts_name, metric_name, value_name = long_roles(names, log, header_line)
    unit_name = find_column(names, UNIT_NAMES)
    label_names = [n for n in names if n not in (ts_name, metric_name, value_name, unit_name)]
    timestamps = parse_timestamps(
        table.column(ts_name), times=times, column=ts_name, log=log, line_of=line_of
    )
    values = parse_values(
        table.column(value_name),
        column=value_name,
        log=log,
        line_of=line_of,
        decimal_comma=decimal_comma,
    )
    codes, metas = series_codes(table, metric_name, label_names, unit_name, log, line_of)
    return assemble(
        data=data,
        file_name=file_name,
        format=format,
        codes=codes,
        metas=metas,
        timestamps=timestamps,
        values=values,
        log=log,
        line_of=line_of,
        tz=times.tz,
        rows_read=table.num_rows,
        unit_column=unit_name,
    )


def series_codes(
    table: pa.Table,
    metric: str,
    label_names: list[str],
    unit: str | None,
    log: ProblemLog,
    line_of: LineMap,
) -> tuple[np.ndarray, list[SeriesMeta]]:
    """One integer per row naming its (metric, labels, unit) combination.

    Each column is dictionary-encoded, the per-row dictionary indices are packed into one
    integer, and only the distinct combinations are turned into SeriesMeta: the per-row
    work stays in numpy. Rows of one series that give different units become metas with
    one key, which ``assemble`` reports."""
    columns = [metric, *label_names, *([unit] if unit else [])]
    packed = np.zeros(table.num_rows, dtype=np.int64)
    span = 1
    dictionaries, indices = [], []
    for name in columns:
        encoded = table.column(name).combine_chunks()
        if not pa.types.is_dictionary(encoded.type):
            encoded = encoded.dictionary_encode()
        dictionary = ["" if v is None else str(v).strip() for v in encoded.dictionary.to_pylist()]
        dictionaries.append(dictionary + [""])  # the extra entry stands for null
        index = encoded.indices.fill_null(len(dictionary)).to_numpy(zero_copy_only=False)
        indices.append(index)
        packed = packed * (len(dictionary) + 1) + index
        span *= len(dictionary) + 1
        if span >= _PACKED_LIMIT:
            packed, span = _compact(packed, span)
            span = int(packed.max()) + 1
    codes, count = _compact(packed, span)
    first_of_code = np.full(count, table.num_rows, dtype=np.int64)
    np.minimum.at(first_of_code, codes, np.arange(table.num_rows))
    metas, reasons = [], {}
    for code, row in enumerate(first_of_code.tolist()):
        parts = [d[int(i[row])] for d, i in zip(dictionaries, indices, strict=True)]
        label_parts = parts[1 : 1 + len(label_names)]
        labels = {k: v for k, v in zip(label_names, label_parts, strict=True) if v != ""}
        unit_text = parts[-1] if unit else ""
        # an empty label is an absent label, an empty unit cell no unit
        metas.append(SeriesMeta(metric=parts[0], labels=labels, unit=unit_text or None))
        problem = series_problem(parts[0], labels)
        if problem:
            reasons[code] = problem
    if reasons:
        bad = np.isin(codes, list(reasons))
        log.rows(bad, metric, lambda r: reasons[int(codes[r])], line_of)
    return codes, metas


def _compact(packed: np.ndarray, span: int) -> tuple[np.ndarray, int]:
    """Renumber packed values 0..k-1: by counting when their range is small (the usual
    case), by hashing otherwise. Returns the codes and k."""
    if span <= 4 * len(packed) + 1024:
        present = np.bincount(packed, minlength=span) > 0
        renumber = np.cumsum(present) - 1
        return renumber[packed], int(present.sum())
    codes, uniques = pd.factorize(packed)
    return codes.astype(np.int64), len(uniques)
