"""A list of incidents as a CSV file: ``start,end,title,metric,labels``, one incident a line.

``start`` is required and ``end`` may be empty (still open): ISO 8601 times, UTC unless
they carry an offset. ``metric`` may be empty when the caller gives a default (the rule's
metric); ``labels`` reads ``host=api-4;zone=b`` (empty: every series of the metric).
Every problem is reported with its file, line and column; a file with any problem gives no
rows at all, so an import of a list is all or nothing.
"""

from __future__ import annotations

import csv
import io
from typing import Any

from webapp.analysis.times import to_utc
from webapp.imports._types import Problem

COLUMNS = ("start", "end", "title", "metric", "labels")
REQUIRED = ("start",)
MAX_PROBLEMS = 20


def parse_labels(text: str) -> dict[str, str]:
    """``host=api-4;zone=b`` to a dict; raises ValueError saying what is expected."""
    labels: dict[str, str] = {}
    for part in (text or "").split(";"):
        if not part.strip():
            continue
        name, sep, value = part.partition("=")
        if not sep or not name.strip():
            raise ValueError(f"expected name=value pairs separated by ';', got {part.strip()!r}")
        labels[name.strip()] = value.strip()
    return labels


def parse_incident_list(
    data: bytes, file: str, default_metric: str | None = None
) -> tuple[list[dict[str, Any]], list[Problem]]:
    """The incidents of a CSV list and the problems found; rows only when there are none."""
    problems: list[Problem] = []
    try:
        text = data.decode("utf-8-sig")
    except UnicodeDecodeError:
        return [], [Problem(file, "expected a UTF-8 text file (CSV)")]
    reader = csv.reader(io.StringIO(text))
    header = [h.strip().lower() for h in next(reader, [])]
    missing = [c for c in REQUIRED if c not in header]
    unknown = [h for h in header if h and h not in COLUMNS]
    if missing or unknown:
        wanted = ",".join(COLUMNS)
        what = f"no {missing[0]!r} column" if missing else f"unknown column {unknown[0]!r}"
        return [], [Problem(file, f"{what}; expected the header {wanted}", 1)]
    rows = []
    for line, values in enumerate(reader, start=2):
        if not any(v.strip() for v in values):
            continue
        if len(values) > len(header):
            problems.append(Problem(file, f"expected {len(header)} fields", line))
            continue
        row = dict(zip(header, (v.strip() for v in values), strict=False))
        parsed = _row(row, file, line, default_metric, problems)
        if parsed is not None:
            rows.append(parsed)
        if len(problems) >= MAX_PROBLEMS:
            break
    if not rows and not problems:
        problems.append(Problem(file, "the list holds no incident"))
    return ([] if problems else rows), problems


def _row(
    row: dict[str, str], file: str, line: int, default: str | None, problems: list[Problem]
) -> dict[str, Any] | None:
    before = len(problems)
    out: dict[str, Any] = {"title": row.get("title", "")}
    for name in ("start", "end"):
        raw = row.get(name, "")
        if not raw and name == "end":
            out["end"] = None
            continue
        try:
            out[name] = to_utc(raw, name) if raw else None
        except ValueError:
            out[name] = None
        if out[name] is None:
            problems.append(
                Problem(file, f"expected an ISO 8601 time, got {raw!r}", line, column=name)
            )
    if out.get("start") is not None and out.get("end") is not None and out["end"] < out["start"]:
        problems.append(Problem(file, "the incident ends before it starts", line, column="end"))
    out["metric"] = row.get("metric") or default
    if not out["metric"]:
        problems.append(Problem(file, "expected a metric name", line, column="metric"))
    try:
        out["labels"] = parse_labels(row.get("labels", ""))
    except ValueError as err:
        problems.append(Problem(file, str(err), line, column="labels"))
    return out if len(problems) == before else None
