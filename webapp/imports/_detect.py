"""Which format a file is in, from its first bytes; an override is checked against it."""

from __future__ import annotations

import re

from webapp.imports._csv import CSV_SHAPES, header_fields, looks_like_data, sniff_delimiter
from webapp.imports._long import METRIC_NAMES, TIMESTAMP_NAMES, VALUE_NAMES
from webapp.imports._problems import ProblemLog
from webapp.imports._text import first_line, without_bom
from webapp.imports.formats import FORMATS

FAMILIES = {
    "csv-long": "csv",
    "csv-wide": "csv",
    "json-records": "json",
    "json-series": "json",
    "openmetrics": "openmetrics",
    "parquet": "parquet",
}
PARQUET_MAGIC = b"PAR1"
_HEAD = 65536  # bytes read to tell the format
_NUMBER = r"[+-]?(?:\d+\.?\d*(?:[eE][+-]?\d+)?|\.\d+|Inf|NaN)"
_SAMPLE = re.compile(
    rf"^[A-Za-z_:][A-Za-z0-9_:]*(\{{.*\}})?[ ]+{_NUMBER}([ ]+{_NUMBER})?([ ]+#.*)?$"
)
_OPENMETRICS_COMMENT = re.compile(r"^#[ \t]+(TYPE|HELP|UNIT|EOF)\b")


class UnknownFormat(ValueError):
    """The first bytes fit none of the formats; the message says what was looked for."""

    def __init__(self, message: str, line: int | None = None):
        super().__init__(message)
        self.line = line


def detect_format(data: bytes | memoryview, file_name: str = "") -> str:
    """One of FORMATS; raises UnknownFormat with a readable reason."""
    if data[:4] == PARQUET_MAGIC:
        return "parquet"
    head = bytes(without_bom(data[:_HEAD])).decode("utf-8", errors="replace").lstrip()
    if not head:
        raise UnknownFormat("the file is empty")
    if head[0] in "[{":
        return _json_kind(head)
    first = head.splitlines()[0]
    if first == head.rstrip() and len(data) > _HEAD:  # a first line longer than the head
        first = first_line(without_bom(data)).decode("utf-8", errors="replace").strip()
    if _OPENMETRICS_COMMENT.match(first) or (
        _SAMPLE.match(first) and not any(d in first.split("{")[0] for d in ",;")
    ):
        return "openmetrics"
    return _csv_kind(first)


def _json_kind(head: str) -> str:
    lowered = head.lower()
    points = lowered.find('"points"')
    value = max(lowered.find(f'"{name}"') for name in VALUE_NAMES)
    if points >= 0 and (value < 0 or points < value):
        return "json-series"
    if value >= 0:
        return "json-records"
    raise UnknownFormat(
        "unknown format: "
        'JSON without "value" or "points" keys near the start; expected records '
        '[{"timestamp", "metric", "labels", "value"}, ...] or series '
        '{"metric", "labels", "points": [[ts, value], ...]}'
    )


def _csv_kind(first: str) -> str:
    delimiter = sniff_delimiter(first)
    if delimiter not in first:
        raise UnknownFormat(
            "unknown format: "
            "not CSV (no commas, semicolons or tabs on line 1), JSON, OpenMetrics text "
            f"or Parquet; line 1 reads {first[:80]!r}"
        )
    fields = header_fields(first, delimiter)
    if looks_like_data(fields):
        raise UnknownFormat(
            "unknown format: "
            "line 1 holds data, not a header; expected a CSV header row naming the columns, "
            f"e.g. timestamp,metric,host,value; line 1 reads {first[:80]!r}"
        )
    names = {n.lower() for n in fields}
    has_metric, has_value = bool(names & set(METRIC_NAMES)), bool(names & set(VALUE_NAMES))
    if has_metric and has_value:
        return "csv-long"
    if names & set(TIMESTAMP_NAMES) and not has_metric and not has_value:
        return "csv-wide"
    if not names & set(TIMESTAMP_NAMES):
        why = "it names no timestamp column"
    elif has_value:
        why = "it has a value column but no metric column"
    else:
        why = "it has a metric column but no value column"
    found = ", ".join(fields)
    raise UnknownFormat(
        f"the CSV header fits neither shape, as {why}. {CSV_SHAPES}. "
        f"Found: {found if len(found) <= 200 else found[:200] + '…'}",
        line=1,
    )


def check_override(chosen: str, data: bytes | memoryview, file_name: str, log: ProblemLog) -> None:
    """A format named by the user must at least be of the family the bytes show."""
    if chosen not in FORMATS:
        log.reject(f"unknown format {chosen!r}; expected one of {', '.join(FORMATS)}")
    try:
        seen = detect_format(data, file_name)
    except UnknownFormat:
        return
    if FAMILIES[seen] != FAMILIES[chosen]:
        log.reject(
            f"the format was given as {chosen}, but the file looks like {seen}; "
            "choose the matching format or leave it to detection"
        )
