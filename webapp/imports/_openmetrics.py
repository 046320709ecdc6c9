"""OpenMetrics text exposition with sample timestamps.

Reads ``# TYPE``, ``# UNIT`` and ``# HELP`` lines, samples ``name{label="value"} value
timestamp`` (label values may escape ``\\"``, ``\\\\`` and ``\\n``; exemplars after `` # ``
are ignored), and requires the closing ``# EOF`` line the standard ends every exposition
with. Sample timestamps are seconds since the epoch in the standard, possibly fractional;
some exporters write milliseconds, so the unit is told by size as in CSV, and a unit other
than seconds is said in a warning. Each sample name
(``checkout_requests_total``, ``..._bucket``) is its own metric; ``_created`` samples hold
creation times, not values, and are skipped.
"""

from __future__ import annotations

import re

import numpy as np
import pyarrow as pa

from webapp.imports._assemble import assemble, series_problem
from webapp.imports._problems import ProblemLog
from webapp.imports._text import decode_utf8
from webapp.imports._timestamps import NaiveTimes, parse_timestamps
from webapp.imports._types import ParsedImport, SeriesMeta
from webapp.imports._values import parse_values

_NAME = re.compile(r"[a-zA-Z_:][a-zA-Z0-9_:]*")
_LABEL_NAME = re.compile(r"[a-zA-Z_][a-zA-Z0-9_]*")
_DESCRIPTOR = re.compile(r"#[ ]+(TYPE|UNIT|HELP)[ ]+([a-zA-Z_:][a-zA-Z0-9_:]*)(?:[ ]+(.*))?$")
_SUFFIXES = ("_total", "_created", "_count", "_sum", "_bucket", "_gcount", "_gsum", "_info")
_PAIR = re.compile(r'([a-zA-Z_][a-zA-Z0-9_]*)="((?:[^"\\]|\\.)*)"(,?)')
_ESCAPE = re.compile(r"\\(.?)")
_ESCAPES = {"\\": "\\", '"': '"', "n": "\n"}
_TYPES = {
    "counter",
    "gauge",
    "histogram",
    "gaugehistogram",
    "summary",
    "info",
    "stateset",
    "unknown",
}


class _LineError(ValueError):
    """A sample line that does not follow the grammar; the message says what was expected."""


def _parse_labels(line: str, pos: int) -> tuple[dict[str, str], int]:
    """Labels from the ``{`` at ``pos``; returns them and the position after ``}``."""
    labels: dict[str, str] = {}
    pos += 1
    while not line.startswith("}", pos):
        pair = _PAIR.match(line, pos)
        if pair is None:
            raise _LineError(_label_error(line, pos))
        name, raw, comma = pair.groups()
        if name in labels:
            raise _LineError(f"label {name!r} appears twice")
        labels[name] = _unescape(raw, name) if "\\" in raw else raw
        pos = pair.end()
        if not comma and not line.startswith("}", pos):
            raise _LineError(f"expected ',' or '}}' after label {name!r}")
    return labels, pos + 1


def _label_error(line: str, pos: int) -> str:
    """What is wrong with the label that starts at ``pos``."""
    name = _LABEL_NAME.match(line, pos)
    if name is None:
        return f"expected a label name or '}}' at character {pos + 1}"
    if not line.startswith('="', name.end()):
        return f'expected =" after label {name.group()!r}'
    return f"the value of label {name.group()!r} is not closed with a quote"


def _unescape(raw: str, name: str) -> str:
    def replace(match: re.Match[str]) -> str:
        escaped = match.group(1)
        if escaped not in _ESCAPES:
            raise _LineError(f"unknown escape \\{escaped} in label {name!r}")
        return _ESCAPES[escaped]

    return _ESCAPE.sub(replace, raw)


def _parse_sample(line: str) -> tuple[str, dict[str, str], str, str | None]:
    match = _NAME.match(line)
    if not match:
        raise _LineError("expected a metric name at the start of the sample")
    name, pos = match.group(), match.end()
    labels: dict[str, str] = {}
    if line.startswith("{", pos):
        labels, pos = _parse_labels(line, pos)
    rest = line[pos:].split(" # ", 1)[0]
    if not rest.startswith(" "):
        raise _LineError("expected a space and the value after the metric name and labels")
    parts = rest.split()
    if len(parts) > 2:
        raise _LineError("expected 'name{labels} value timestamp', found extra fields")
    return name, labels, parts[0], parts[1] if len(parts) == 2 else None


def _family(name: str, units: dict[str, str]) -> str:
    if name in units:
        return name
    for suffix in _SUFFIXES:
        if name.endswith(suffix) and name[: -len(suffix)] in units:
            return name[: -len(suffix)]
    return name


def parse_openmetrics(
    data: bytes | memoryview, file_name: str, times: NaiveTimes, log: ProblemLog
) -> ParsedImport:
    text = decode_utf8(data, log)
    lines = text.split("\n")
    if lines and lines[-1] == "":
        lines.pop()
    units: dict[str, str] = {}
    series: dict[tuple, int] = {}
    metas: list[SeriesMeta] = []
    codes: list[int] = []
    stamps: list[str | None] = []
    values: list[str] = []
    line_numbers: list[int] = []
    skipped_created = 0
    eof_line = None
    for number, raw in enumerate(lines, start=1):
        line = raw.rstrip("\r")
        if eof_line is not None:
            log.error("nothing may follow '# EOF'", line=number)
            break
        if line == "# EOF":
            eof_line = number
            continue
        if not line.strip():
            continue
        if line.startswith("#"):
            described = _DESCRIPTOR.match(line)
            if described and described.group(1) == "UNIT" and described.group(3):
                units[described.group(2)] = described.group(3).strip()
            elif (
                described
                and described.group(1) == "TYPE"
                and (described.group(3) or "").strip() not in _TYPES
            ):
                log.error(
                    f"unknown metric type {described.group(3)!r}; expected one of "
                    f"{', '.join(sorted(_TYPES))}",
                    line=number,
                )
            continue
        try:
            name, labels, value, stamp = _parse_sample(line)
        except _LineError as exc:
            log.error(str(exc), line=number)
            continue
        if name.endswith("_created"):
            skipped_created += 1
            continue
        if stamp is None:
            log.error(
                "the sample has no timestamp; expected 'name{labels} value timestamp' "
                "with the timestamp in seconds since the epoch",
                line=number,
            )
            continue
        ident = (name, tuple(sorted(labels.items())))
        code = series.get(ident)
        if code is None:
            problem = series_problem(name, labels)
            if problem:
                log.error(problem, line=number)
                continue
            code = series[ident] = len(metas)
            metas.append(SeriesMeta(name, labels, None))
        codes.append(code)
        stamps.append(stamp)
        values.append(value)
        line_numbers.append(number)
    if eof_line is None:
        log.error(
            "the file does not end with '# EOF'; an OpenMetrics exposition must close "
            "with that line (was the export cut short?)",
            line=len(lines) or None,
        )
    if skipped_created:
        log.warning(
            f"{skipped_created} _created samples were skipped: they hold creation times, not values"
        )
    metas = [SeriesMeta(m.metric, m.labels, units.get(_family(m.metric, units))) for m in metas]
    where = np.array(line_numbers, dtype=np.int64)

    def line_of(rows: np.ndarray) -> np.ndarray:
        return where[rows]

    timestamps = parse_timestamps(
        pa.array(stamps, type=pa.string()),
        times=times,
        column="timestamp",
        log=log,
        line_of=line_of,
    )
    if timestamps.unit != "epoch seconds" and not log.error_total:
        log.warning(
            f"sample timestamps read as {timestamps.unit}, told by their size; "
            "OpenMetrics writes seconds since the epoch"
        )
    numbers = parse_values(
        pa.array(values, type=pa.string()), column="value", log=log, line_of=line_of
    )
    return assemble(
        data=data,
        file_name=file_name,
        format="openmetrics",
        codes=np.array(codes, np.int64),
        metas=metas,
        timestamps=timestamps,
        values=numbers,
        log=log,
        line_of=line_of,
        tz=times.tz,
        rows_read=len(values),
    )
