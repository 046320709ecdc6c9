"""JSON in two shapes, as one document or as JSON Lines (one object per line).

Records: ``[{"timestamp": ..., "metric": ..., "labels": {...}, "value": ...}, ...]``; other
keys of a record are labels too, as other columns are in a long CSV.
Series: ``{"metric": ..., "labels": {...}, "unit": ..., "points": [[ts, value], ...]}`` or a
list of such objects. Timestamps are ISO 8601 strings or epoch numbers; a value of null or
NaN is a gap.
"""

from __future__ import annotations

import json
import re
from typing import Any

import numpy as np
import pandas as pd
import pyarrow as pa

from webapp.imports._assemble import assemble, series_problem
from webapp.imports._long import METRIC_NAMES, TIMESTAMP_NAMES, VALUE_NAMES
from webapp.imports._problems import ProblemLog
from webapp.imports._text import decode_utf8
from webapp.imports._timestamps import parse_timestamps
from webapp.imports._types import ParsedImport, SeriesMeta
from webapp.imports._values import parse_values

_WS = re.compile(r"\s*")
_POINT = re.compile(r"\[[^\[\]{}]*\]")


class _Lines:
    """Character offsets to 1-based line numbers."""

    def __init__(self, text: str):
        self.breaks = np.array([m.start() for m in re.finditer("\n", text)], dtype=np.int64)

    def __call__(self, offsets: np.ndarray) -> np.ndarray:
        return np.searchsorted(self.breaks, offsets, side="right") + 1


def _elements(text: str, log: ProblemLog, lines: _Lines) -> list[tuple[Any, int]]:
    """The top-level value's elements with the offset each starts at (a lone object is a
    list of one), decoded one by one so every problem can name its line."""
    decoder = json.JSONDecoder()
    pos = _WS.match(text, 0).end()
    try:
        if text.startswith("{", pos):
            return _object_sequence(text, pos, decoder, log, lines)
        if not text.startswith("[", pos):
            log.reject("expected a JSON array or object", line=int(lines(np.array([pos]))[0]))
        items: list[tuple[Any, int]] = []
        pos = _WS.match(text, pos + 1).end()
        if text.startswith("]", pos):
            _expect_end(text, pos + 1, log, lines)
            return items
        while True:
            obj, end = decoder.raw_decode(text, pos)
            items.append((obj, pos))
            pos = _WS.match(text, end).end()
            if text.startswith(",", pos):
                pos = _WS.match(text, pos + 1).end()
                continue
            if text.startswith("]", pos):
                _expect_end(text, pos + 1, log, lines)
                return items
            log.reject(
                "expected ',' or ']' between elements of the array",
                line=int(lines(np.array([pos]))[0]),
            )
    except json.JSONDecodeError as exc:
        log.reject(f"not valid JSON: {exc.msg} (character {exc.colno})", line=exc.lineno)


def _object_sequence(
    text: str, pos: int, decoder: json.JSONDecoder, log: ProblemLog, lines: _Lines
) -> list[tuple[Any, int]]:
    """One object, or objects one after another (JSON Lines)."""
    items = []
    while pos < len(text):
        if not text.startswith("{", pos):
            log.reject(
                "unexpected content after the end of the JSON value",
                line=int(lines(np.array([pos]))[0]),
            )
        obj, end = decoder.raw_decode(text, pos)
        items.append((obj, pos))
        pos = _WS.match(text, end).end()
    return items


def _expect_end(text: str, end: int, log: ProblemLog, lines: _Lines) -> None:
    rest = _WS.match(text, end).end()
    if rest < len(text):
        log.reject(
            "unexpected content after the end of the JSON value",
            line=int(lines(np.array([rest]))[0]),
        )


def _pick(obj: dict[str, Any], aliases: tuple[str, ...]) -> tuple[str | None, Any]:
    lowered = {str(k).lower(): k for k in obj}
    for alias in aliases:
        if alias in lowered:
            return lowered[alias], obj[lowered[alias]]
    return None, None


def _labels(raw: Any, log: ProblemLog, line: int) -> dict[str, str] | None:
    if raw is None:
        return {}
    if not isinstance(raw, dict):
        log.error("labels must be an object of name: value strings", line=line, column="labels")
        return None
    out = {}
    for name, value in raw.items():
        if isinstance(value, dict | list):
            log.error(
                f"label {name!r} must be a string, found {type(value).__name__}",
                line=line,
                column="labels",
            )
            return None
        if value is not None and str(value) != "":
            out[str(name)] = str(value)  # empty label = absent, as in every format
    return out


class _SeriesIndex:
    """Codes for (metric, labels, unit) sets, each validated once."""

    def __init__(self, log: ProblemLog):
        self.log = log
        self.codes: dict[tuple, int] = {}
        self.metas: list[SeriesMeta] = []

    def code(self, metric: Any, labels: dict[str, str], unit: Any, line: int) -> int | None:
        ident = (metric, tuple(sorted(labels.items())), unit)
        found = self.codes.get(ident)
        if found is not None:
            return found
        if not isinstance(metric, str):
            self.log.error("expected a metric name (a string)", line=line, column="metric")
            return None
        problem = series_problem(metric.strip(), labels)
        if problem:
            self.log.error(problem, line=line, column="metric")
            return None
        self.codes[ident] = len(self.metas)
        self.metas.append(
            SeriesMeta(metric.strip(), labels, unit if isinstance(unit, str) else None)
        )
        return self.codes[ident]


def _timestamp_array(stamps: list[Any]) -> pa.Array:
    """Numbers stay numbers; anything else is text for the timestamp parser to judge."""
    if all(isinstance(s, int | float) and not isinstance(s, bool) for s in stamps):
        try:
            return pa.array(stamps)
        except (pa.ArrowInvalid, OverflowError):
            pass
    return pa.array([None if s is None else str(s) for s in stamps], type=pa.string())


def _finish(
    data: bytes | memoryview,
    file_name: str,
    format: str,
    tz: str | None,
    log: ProblemLog,
    lines: _Lines,
    index: _SeriesIndex,
    codes: list[int],
    stamps: list[Any],
    values: list[Any],
    offsets: list[int],
) -> ParsedImport:
    where = np.array(offsets, dtype=np.int64)

    def line_of(rows: np.ndarray) -> np.ndarray:
        return lines(where[rows])

    timestamps = parse_timestamps(
        _timestamp_array(stamps), tz=tz, column="timestamp", log=log, line_of=line_of
    )
    numbers = parse_values(
        pd.Series(values, dtype=object), column="value", log=log, line_of=line_of
    )
    return assemble(
        data=data,
        file_name=file_name,
        format=format,
        codes=np.array(codes, dtype=np.int64),
        metas=index.metas,
        timestamps=timestamps,
        values=numbers,
        log=log,
        line_of=line_of,
        tz=tz,
        rows_read=len(values),
    )


def parse_json_records(
    data: bytes | memoryview, file_name: str, tz: str | None, log: ProblemLog
) -> ParsedImport:
    text = decode_utf8(data, log)
    lines = _Lines(text)
    index = _SeriesIndex(log)
    codes: list[int] = []
    stamps: list[Any] = []
    values: list[Any] = []
    offsets: list[int] = []
    elements = _elements(text, log, lines)
    element_lines = lines(np.array([o for _, o in elements], dtype=np.int64)).tolist()
    for (record, offset), line in zip(elements, element_lines, strict=True):
        if not isinstance(record, dict):
            log.error('expected a record {"timestamp", "metric", "labels", "value"}', line=line)
            continue
        fields = {
            role: _pick(record, names)
            for role, names in (
                ("timestamp", TIMESTAMP_NAMES),
                ("metric", METRIC_NAMES),
                ("value", VALUE_NAMES),
            )
        }
        absent = [role for role, (key, _) in fields.items() if key is None]
        if absent:
            log.error(f"the record has no {' or '.join(absent)} field", line=line)
            continue
        used = {key for key, _ in fields.values()} | {"labels", "unit"}
        flat = {k: v for k, v in record.items() if k not in used}
        nested = record.get("labels")
        if nested is None or isinstance(nested, dict):
            nested = {**flat, **(nested or {})}
        labels = _labels(nested, log, line)
        if labels is None:
            continue
        code = index.code(fields["metric"][1], labels, record.get("unit"), line)
        if code is None:
            continue
        codes.append(code)
        stamps.append(fields["timestamp"][1])
        values.append(fields["value"][1])
        offsets.append(offset)
    return _finish(
        data, file_name, "json-records", tz, log, lines, index, codes, stamps, values, offsets
    )


def parse_json_series(
    data: bytes | memoryview, file_name: str, tz: str | None, log: ProblemLog
) -> ParsedImport:
    text = decode_utf8(data, log)
    lines = _Lines(text)
    index = _SeriesIndex(log)
    codes: list[int] = []
    stamps: list[Any] = []
    values: list[Any] = []
    offsets: list[int] = []
    for series, offset in _elements(text, log, lines):
        line = int(lines(np.array([offset]))[0])
        if not isinstance(series, dict) or not isinstance(series.get("points"), list):
            log.error(
                'expected a series {"metric", "labels", "points": [[ts, value], ...]}', line=line
            )
            continue
        _, metric = _pick(series, METRIC_NAMES)
        labels = _labels(series.get("labels"), log, line)
        if labels is None:
            continue
        code = index.code(metric, labels, series.get("unit"), line)
        if code is None:
            continue
        points = series["points"]
        starts = _point_offsets(text, offset, len(points))
        for number, point in enumerate(points):
            at = offset if starts is None else starts[number]
            if not isinstance(point, list) or len(point) != 2:
                log.error(
                    f"point {number + 1} must be a pair [timestamp, value]",
                    line=int(lines(np.array([at]))[0]),
                    column="points",
                )
                continue
            codes.append(code)
            stamps.append(point[0])
            values.append(point[1])
            offsets.append(at)
    return _finish(
        data, file_name, "json-series", tz, log, lines, index, codes, stamps, values, offsets
    )


def _point_offsets(text: str, start: int, count: int) -> list[int] | None:
    """Where each [ts, value] pair of a series starts, found after its "points" key; None
    when the text does not show exactly ``count`` pairs there (then lines name the series)."""
    key = text.find('"points"', start)
    if key < 0:
        return None
    opening = text.find("[", key)
    found = []
    for match in _POINT.finditer(text, opening + 1):
        if len(found) == count:
            break
        found.append(match.start())
    return found if len(found) == count else None
