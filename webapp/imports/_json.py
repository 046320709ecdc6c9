"""JSON in two shapes, as one document or as JSON Lines (one object per line).

Records: ``[{"timestamp": ..., "metric": ..., "labels": {...}, "unit": ..., "value": ...}]``;
other keys of a record are labels too, as other columns are in a long CSV. A series has one
unit: records of one series that give two units are refused.
Series: ``{"metric": ..., "labels": {...}, "unit": ..., "points": [[ts, value], ...]}`` or a
list of such objects. Timestamps are ISO 8601 strings or epoch numbers; a value of null or
NaN is a gap.

The document is decoded in one go; where each element sits in the text (its line) is only
worked out when a problem has to name it.
"""

from __future__ import annotations

import json
import re
from collections.abc import Callable
from functools import lru_cache
from typing import Any

import numpy as np
import pandas as pd
import pyarrow as pa

from webapp.imports._assemble import assemble, series_problem
from webapp.imports._long import METRIC_NAMES, TIMESTAMP_NAMES, VALUE_NAMES
from webapp.imports._problems import ProblemLog
from webapp.imports._text import decode_utf8
from webapp.imports._timestamps import NaiveTimes, parse_timestamps
from webapp.imports._types import ParsedImport, SeriesMeta
from webapp.imports._values import parse_values

_WS = re.compile(r"\s*")
_POINT = re.compile(r"\[[^\[\]{}]*\]")
_RECORD = '{"timestamp", "metric", "labels", "value"}'
_SERIES = '{"metric", "labels", "points": [[ts, value], ...]}'


class _Document:
    """The decoded top-level elements, and where each one starts in the text."""

    def __init__(self, text: str, log: ProblemLog):
        self.text = text
        self.log = log
        self.breaks = np.array([m.start() for m in re.finditer("\n", text)], dtype=np.int64)
        self._offsets: list[int] | None = None
        self._point_offsets: dict[int, list[int] | None] = {}
        self.elements = self._decode()

    def line_at(self, offset: int) -> int:
        return int(np.searchsorted(self.breaks, offset, side="right")) + 1

    def _decode(self) -> list[Any]:
        try:
            document = json.loads(self.text)
        except json.JSONDecodeError as exc:
            if exc.msg == "Extra data" and self.text.lstrip().startswith("{"):
                return [obj for obj, _ in self._scan()]  # JSON Lines
            if exc.msg == "Extra data":
                self.log.reject(
                    "unexpected content after the end of the JSON value", line=exc.lineno
                )
            self.log.reject(f"not valid JSON: {exc.msg} (character {exc.colno})", line=exc.lineno)
        if isinstance(document, list):
            return document
        if isinstance(document, dict):
            return [document]
        self.log.reject("expected a JSON array or object", line=1)

    def offsets(self) -> list[int]:
        if self._offsets is None:
            self._offsets = [offset for _, offset in self._scan()]
        return self._offsets

    def element_line(self, index: int) -> int:
        return self.line_at(self.offsets()[index])

    def _scan(self) -> list[tuple[Any, int]]:
        """Decode element by element to learn where each starts: an array's items, or
        objects one after another (JSON Lines)."""
        decoder, text = json.JSONDecoder(), self.text
        pos = _WS.match(text, 0).end()
        in_array = text.startswith("[", pos)
        pos = _WS.match(text, pos + 1).end() if in_array else pos
        items = []
        try:
            while pos < len(text) and not (in_array and text.startswith("]", pos)):
                obj, end = decoder.raw_decode(text, pos)
                items.append((obj, pos))
                pos = _WS.match(text, end).end()
                if in_array and text.startswith(",", pos):
                    pos = _WS.match(text, pos + 1).end()
                elif in_array and not text.startswith("]", pos):
                    self.log.reject("expected ',' or ']' between elements", line=self.line_at(pos))
                elif not in_array and pos < len(text) and not text.startswith("{", pos):
                    self.log.reject(
                        "unexpected content after a JSON object", line=self.line_at(pos)
                    )
        except json.JSONDecodeError as exc:
            self.log.reject(f"not valid JSON: {exc.msg} (character {exc.colno})", line=exc.lineno)
        return items

    def point_offsets(self, index: int) -> list[int] | None:
        """Where each [ts, value] pair of series ``index`` starts, found after its "points"
        key; None when the text does not show one pair per point there."""
        if index not in self._point_offsets:
            self._point_offsets[index] = self._find_points(index)
        return self._point_offsets[index]

    def _find_points(self, index: int) -> list[int] | None:
        count = len(self.elements[index]["points"])
        key = self.text.find('"points"', self.offsets()[index])
        found = []
        for match in _POINT.finditer(self.text, self.text.find("[", key) + 1):
            if len(found) == count:
                break
            found.append(match.start())
        return found if len(found) == count else None

    def point_line(self, index: int, point: int) -> int:
        starts = self.point_offsets(index)
        return self.element_line(index) if starts is None else self.line_at(starts[point])


def _roles(keys: tuple[str, ...]) -> tuple[str | None, str | None, str | None, tuple[str, ...]]:
    """For one set of record keys: the timestamp, metric and value keys, and the keys that
    are labels. Records of one export share their keys, so this is cached."""
    lowered = {k.lower(): k for k in keys}

    def pick(aliases: tuple[str, ...]) -> str | None:
        return next((lowered[a] for a in aliases if a in lowered), None)

    roles = (pick(TIMESTAMP_NAMES), pick(METRIC_NAMES), pick(VALUE_NAMES))
    flat = tuple(k for k in keys if k not in roles and k not in ("labels", "unit"))
    return (*roles, flat)


_cached_roles = lru_cache(maxsize=256)(_roles)


def _labels(raw: Any, log: ProblemLog, line: Callable[[], int]) -> dict[str, str] | None:
    """Label values as strings; ``line`` is asked only when there is a problem to place."""
    if raw is None:
        return {}
    if not isinstance(raw, dict):
        log.error("labels must be an object of name: value strings", line=line(), column="labels")
        return None
    out = {}
    for name, value in raw.items():
        if isinstance(value, dict | list):
            log.error(
                f"label {name!r} must be a string, found {type(value).__name__}",
                line=line(),
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

    def code(
        self, metric: Any, labels: dict[str, str], unit: Any, line: Callable[[], int]
    ) -> int | None:
        ident = (metric, tuple(sorted(labels.items())), unit)
        found = self.codes.get(ident)
        if found is not None:
            return found
        if unit is not None and not isinstance(unit, str):
            self.log.error(
                f"unit must be a string, found {type(unit).__name__}", line=line(), column="unit"
            )
            return None
        if not isinstance(metric, str):
            self.log.error("expected a metric name (a string)", line=line(), column="metric")
            return None
        problem = series_problem(metric.strip(), labels)
        if problem:
            self.log.error(problem, line=line(), column="metric")
            return None
        self.codes[ident] = len(self.metas)
        self.metas.append(SeriesMeta(metric.strip(), labels, (unit or "").strip() or None))
        return self.codes[ident]


class _Rows:
    """The points read so far, each remembering its element (and point) for its line."""

    def __init__(self) -> None:
        self.codes: list[int] = []
        self.stamps: list[Any] = []
        self.values: list[Any] = []
        self.elements: list[int] = []
        self.points: list[int] = []

    def add(self, code: int, stamp: Any, value: Any, element: int, point: int = -1) -> None:
        self.codes.append(code)
        self.stamps.append(stamp)
        self.values.append(value)
        self.elements.append(element)
        self.points.append(point)


def _timestamp_array(stamps: list[Any]) -> pa.Array:
    """Numbers stay numbers (integers exactly); anything else is text for the timestamp
    parser to judge."""
    if not stamps:
        return pa.array([], type=pa.null())
    if all(type(s) is int for s in stamps):
        try:
            return pa.array(stamps, type=pa.int64())
        except (pa.ArrowInvalid, OverflowError):
            pass
    if all(isinstance(s, int | float) and not isinstance(s, bool) for s in stamps):
        return pa.array([float(s) for s in stamps], type=pa.float64())
    return pa.array([None if s is None else str(s) for s in stamps], type=pa.string())


def _finish(
    data: bytes | memoryview,
    file_name: str,
    format: str,
    times: NaiveTimes,
    log: ProblemLog,
    doc: _Document,
    index: _SeriesIndex,
    rows: _Rows,
) -> ParsedImport:
    def line_of(positions: np.ndarray) -> np.ndarray:
        return np.array(
            [
                doc.element_line(rows.elements[p])
                if rows.points[p] < 0
                else doc.point_line(rows.elements[p], rows.points[p])
                for p in positions.tolist()
            ],
            dtype=np.int64,
        )

    timestamps = parse_timestamps(
        _timestamp_array(rows.stamps), times=times, column="timestamp", log=log, line_of=line_of
    )
    numbers = parse_values(
        pd.Series(rows.values, dtype=object), column="value", log=log, line_of=line_of
    )
    return assemble(
        data=data,
        file_name=file_name,
        format=format,
        codes=np.array(rows.codes, dtype=np.int64),
        metas=index.metas,
        timestamps=timestamps,
        values=numbers,
        log=log,
        line_of=line_of,
        tz=times.tz,
        rows_read=len(rows.values),
    )


def parse_json_records(
    data: bytes | memoryview, file_name: str, times: NaiveTimes, log: ProblemLog
) -> ParsedImport:
    doc = _Document(decode_utf8(data, log), log)
    index, rows = _SeriesIndex(log), _Rows()
    for number, record in enumerate(doc.elements):
        if not isinstance(record, dict):
            log.error(f"expected a record {_RECORD}", line=doc.element_line(number))
            continue
        ts_key, metric_key, value_key, flat = _cached_roles(tuple(record))
        if ts_key is None or metric_key is None or value_key is None:
            absent = [
                role
                for role, key in (
                    ("timestamp", ts_key),
                    ("metric", metric_key),
                    ("value", value_key),
                )
                if key is None
            ]
            log.error(
                f"the record has no {' or '.join(absent)} field", line=doc.element_line(number)
            )
            continue
        nested = record.get("labels")
        if flat and (nested is None or isinstance(nested, dict)):
            nested = {**{k: record[k] for k in flat}, **(nested or {})}
        line = lambda number=number: doc.element_line(number)  # noqa: E731
        labels = _labels(nested, log, line)
        if labels is None:
            continue
        code = index.code(record[metric_key], labels, record.get("unit"), line)
        if code is None:
            continue
        rows.add(code, record[ts_key], record[value_key], number)
    return _finish(data, file_name, "json-records", times, log, doc, index, rows)


def parse_json_series(
    data: bytes | memoryview, file_name: str, times: NaiveTimes, log: ProblemLog
) -> ParsedImport:
    doc = _Document(decode_utf8(data, log), log)
    index, rows = _SeriesIndex(log), _Rows()
    for number, series in enumerate(doc.elements):
        if not isinstance(series, dict) or not isinstance(series.get("points"), list):
            log.error(f"expected a series {_SERIES}", line=doc.element_line(number))
            continue
        _, metric_key, _, _ = _cached_roles(tuple(series))
        line = lambda number=number: doc.element_line(number)  # noqa: E731
        labels = _labels(series.get("labels"), log, line)
        if labels is None:
            continue
        metric = series.get(metric_key) if metric_key else None
        code = index.code(metric, labels, series.get("unit"), line)
        if code is None:
            continue
        for point_number, point in enumerate(series["points"]):
            if not isinstance(point, list) or len(point) != 2:
                log.error(
                    f"point {point_number + 1} must be a pair [timestamp, value]",
                    line=doc.point_line(number, point_number),
                    column="points",
                )
                continue
            rows.add(code, point[0], point[1], number, point_number)
    return _finish(data, file_name, "json-series", times, log, doc, index, rows)
