"""CSV in two layouts.

Long: one row per point, with a timestamp column, a metric column, a value column, and
every other column a label. Wide: a timestamp column and one column per series, whose
header is the series key (``checkout.latency_p95{host=api-3}``).
"""

from __future__ import annotations

import csv
from dataclasses import dataclass

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc
import pyarrow.csv as pcsv

from webapp.imports._assemble import assemble
from webapp.imports._csvlines import CsvLines
from webapp.imports._long import (
    LONG_NEEDS,
    TIMESTAMP_NAMES,
    find_column,
    long_roles,
    parse_long_table,
)
from webapp.imports._problems import LineMap, ProblemLog
from webapp.imports._text import first_line, reject_bad_encoding, without_bom
from webapp.imports._timestamps import NaiveTimes, Timestamps, parse_timestamps
from webapp.imports._types import ParsedImport, SeriesMeta
from webapp.imports._values import parse_values
from webapp.imports.keys import parse_series_key

DELIMITERS = (",", ";", "\t")
WIDE_NEEDS = (
    "a wide file needs a timestamp column (or time/ts) and one column of numbers per "
    "series, headed by its key, e.g. checkout.latency_p95{host=api-3}"
)
CSV_SHAPES = f"{LONG_NEEDS[0].upper()}{LONG_NEEDS[1:]}; {WIDE_NEEDS}"
"""What each CSV shape needs, for the messages that could not tell the shape."""
_TEXT = pa.dictionary(pa.int32(), pa.string())


@dataclass(frozen=True)
class Header:
    names: list[str]
    delimiter: str
    length: int  # bytes on line 1


def header_fields(header: str, delimiter: str) -> list[str]:
    """Line 1 split into trimmed column names, quotes respected. A field longer than the
    csv module's limit cannot be a column name; the line is then one field."""
    try:
        return [f.strip() for f in next(csv.reader([header], delimiter=delimiter))]
    except csv.Error:
        return [header]


def sniff_delimiter(header: str) -> str:
    """The delimiter under which the header names a timestamp column (every layout has
    one), quotes respected; failing that, the one giving the most fields. Commas win ties."""

    def fields(delimiter: str) -> list[str]:
        return [f.lower() for f in header_fields(header, delimiter)]

    return max(
        DELIMITERS,
        key=lambda d: (bool(set(fields(d)) & set(TIMESTAMP_NAMES)), len(fields(d))),
    )


def read_header(data: bytes | memoryview, log: ProblemLog) -> Header:
    """The first line: column names, the delimiter, and which columns play which role."""
    body = without_bom(data)
    first = first_line(body)
    try:
        text = first.decode("utf-8")
    except UnicodeDecodeError:
        reject_bad_encoding(body, log)
    if not text.strip():
        log.reject("line 1 is empty; expected a header row naming the columns", line=1)
    delimiter = sniff_delimiter(text)
    names = header_fields(text, delimiter)
    if len(names) < 2:
        log.reject(
            "expected a header row with at least a timestamp and a value column, "
            f"separated by commas, semicolons or tabs; found {text[:80]!r}",
            line=1,
        )
    seen: set[str] = set()
    for name in names:
        if not name:
            log.error("a column in the header has no name", line=1)
        elif name in seen:
            log.error(f"column {name!r} appears twice in the header", line=1, column=name)
        seen.add(name)
    if looks_like_data(names):
        log.error(
            "expected a header row naming the columns (e.g. timestamp,metric,host,value); "
            f"line 1 holds data: {text[:80]!r}",
            line=1,
        )
    log.check()
    return Header(names=names, delimiter=delimiter, length=len(first))


def looks_like_data(names: list[str]) -> bool:
    numbers = pd.to_numeric(pd.Series(names, dtype=object), errors="coerce").notna()
    dates = pd.to_datetime(
        pd.Series(names, dtype=object), format="ISO8601", errors="coerce", utc=True
    )
    return bool(numbers.any() or dates.notna().any())


def _read_table(
    body: memoryview, header: Header, column_types: dict[str, pa.DataType], log: ProblemLog
) -> pa.Table:
    """Arrow's multi-threaded reader; wrong field counts and bad bytes become problems."""
    short_or_long: list[tuple[int, int, str]] = []

    def on_invalid_row(row: pcsv.InvalidRow) -> str:
        short_or_long.append((row.expected_columns, row.actual_columns, row.text))
        return "skip"

    try:
        table = pcsv.read_csv(
            pa.BufferReader(pa.py_buffer(body)),
            read_options=pcsv.ReadOptions(
                column_names=header.names, skip_rows=1, block_size=_block_size(header)
            ),
            parse_options=pcsv.ParseOptions(
                delimiter=header.delimiter, invalid_row_handler=on_invalid_row
            ),
            convert_options=pcsv.ConvertOptions(
                column_types=column_types, strings_can_be_null=False
            ),
        )
    except pa.ArrowInvalid as exc:
        if "UTF8" in str(exc) or "utf8" in str(exc).lower():
            reject_bad_encoding(body, log)
        raise
    raw = bytes(body) if short_or_long else b""
    for expected, actual, text in short_or_long:
        position = raw.find(text.encode("utf-8")) if text else -1
        line = raw.count(b"\n", 0, position) + 1 if position >= 0 else None
        log.error(
            f"expected {expected} fields separated by {header.delimiter!r}, found {actual}",
            line=line,
        )
    log.check()
    return table


def _block_size(header: Header) -> int:
    """Arrow's reader needs each row to fit in one block; a wide file's rows are about as
    long as its header."""
    return max(1 << 20, 4 * header.length)


def _read_with_fallback(
    body: memoryview, header: Header, typed: dict[str, pa.DataType], log: ProblemLog
) -> pa.Table:
    """Read with numeric types; if a cell does not convert, read those columns as text so
    each bad cell can be named."""
    try:
        return _read_table(body, header, typed, log)
    except pa.ArrowInvalid:
        as_text = {name: (_TEXT if kind == _TEXT else pa.string()) for name, kind in typed.items()}
        for name in header.names:
            as_text.setdefault(name, pa.string())
        return _read_table(body, header, as_text, log)


def _without_blank_rows(
    table: pa.Table, ts_name: str, line_of: LineMap
) -> tuple[pa.Table, LineMap]:
    """Rows whose every cell is empty (spreadsheets write them as ``,,,``) are skipped like
    blank lines; line numbers keep pointing at the file's lines."""
    if table.column(ts_name).null_count == 0 and not pa.types.is_string(
        table.schema.field(ts_name).type
    ):
        return table, line_of
    blank = np.ones(table.num_rows, dtype=bool)
    for column in table.columns:
        empty = column.is_null()
        if pa.types.is_string(column.type) or pa.types.is_dictionary(column.type):
            text = column.cast(pa.string()) if pa.types.is_dictionary(column.type) else column
            empty = pc.or_kleene(empty, pc.equal(pc.utf8_trim_whitespace(text), ""))
        blank &= np.asarray(empty.to_numpy(), dtype=bool)
    if not blank.any():
        return table, line_of
    kept = np.flatnonzero(~blank)
    return table.take(kept), lambda rows: line_of(kept[rows])


def parse_csv_long(
    data: bytes | memoryview, file_name: str, times: NaiveTimes, log: ProblemLog
) -> ParsedImport:
    header = read_header(data, log)
    ts_name, metric_name, value_name = long_roles(header.names, log, line=1)
    texts = [n for n in header.names if n not in (ts_name, value_name)]  # metric, unit, labels
    typed = {value_name: pa.float64()} | {n: _TEXT for n in texts}
    body = without_bom(data)
    table, line_of = _without_blank_rows(
        _read_with_fallback(body, header, typed, log), ts_name, CsvLines(body, header.delimiter)
    )
    if table.num_rows == 0:
        log.reject("the file has no data rows below the header")
    return parse_long_table(
        table,
        data=data,
        file_name=file_name,
        format="csv-long",
        times=times,
        log=log,
        line_of=line_of,
        header_line=1,
        decimal_comma=header.delimiter != ",",
    )


def _report_text_columns(
    table: pa.Table, names: list[str], decimal_comma: bool, log: ProblemLog
) -> None:
    """A column of a wide file with no number in it is a label or metric column, which
    means the file was meant as a long one: one error for the column says so and stops,
    rather than one per cell."""
    for name in names:
        column = table.column(name)
        if not (pa.types.is_string(column.type) or pa.types.is_dictionary(column.type)):
            continue
        scratch = ProblemLog(log.file, limit=1)
        numbers = parse_values(
            column, column=name, log=scratch, line_of=lambda rows: rows, decimal_comma=decimal_comma
        )
        if scratch.error_total and np.isnan(numbers).all():
            example = str(column[scratch.errors[0].line].as_py()).strip()  # the row, 0-based
            log.error(
                f"holds text such as {example!r}, not the numbers of a series; the file "
                f"was read as wide, having no metric and value columns. {CSV_SHAPES}",
                line=1,
                column=name,
            )
    log.check()


def parse_csv_wide(
    data: bytes | memoryview, file_name: str, times: NaiveTimes, log: ProblemLog
) -> ParsedImport:
    header = read_header(data, log)
    ts_name = find_column(header.names, TIMESTAMP_NAMES)
    if ts_name is None:
        log.reject(
            f"the header has no timestamp column; {WIDE_NEEDS}; found {', '.join(header.names)}",
            line=1,
        )
    series_columns = [n for n in header.names if n != ts_name]
    metas = []
    for name in series_columns:
        try:
            metric, labels = parse_series_key(name)
        except ValueError as exc:
            log.error(
                f"{exc}; expected a series key like metric{{label=value}}", line=1, column=name
            )
            continue
        metas.append(SeriesMeta(metric=metric, labels=labels))
    log.check()
    body = without_bom(data)
    table, line_of = _without_blank_rows(
        _read_with_fallback(body, header, {n: pa.float64() for n in series_columns}, log),
        ts_name,
        CsvLines(body, header.delimiter),
    )
    if table.num_rows == 0:
        log.reject("the file has no data rows below the header")
    decimal_comma = header.delimiter != ","
    _report_text_columns(table, series_columns, decimal_comma, log)
    timestamps = parse_timestamps(
        table.column(ts_name), times=times, column=ts_name, log=log, line_of=line_of
    )
    columns = [
        parse_values(
            table.column(n),
            column=n,
            log=log,
            line_of=line_of,
            decimal_comma=decimal_comma,
        )
        for n in series_columns
    ]
    n_rows, n_series = table.num_rows, len(series_columns)
    values = np.column_stack(columns).reshape(-1) if columns else np.zeros(0)
    cells = Timestamps(
        timestamps.ms.repeat(n_series), timestamps.bad.repeat(n_series), timestamps.unit
    )
    return assemble(
        data=data,
        file_name=file_name,
        format="csv-wide",
        codes=np.tile(np.arange(n_series), n_rows),
        metas=metas,
        timestamps=cells,
        values=values,
        log=log,
        line_of=lambda cells: line_of(cells // max(n_series, 1)),
        tz=times.tz,
        rows_read=n_rows,
    )
