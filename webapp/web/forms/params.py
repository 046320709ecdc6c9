"""Reading the Explain screen's parameters from a request, with a clear 400 for bad ones."""

from __future__ import annotations

import math
from collections.abc import Mapping
from typing import Any
from zoneinfo import ZoneInfo, ZoneInfoNotFoundError

import pandas as pd
from flask import abort, current_app
from werkzeug.datastructures import MultiDict
from werkzeug.exceptions import BadRequest

from webapp.analysis import times
from webapp.analysis.times import TIME_FORMAT_HELP
from webapp.services.explain import ExplainQuery, Span

MIN_TOLERANCE = 0.5
MAX_TOLERANCE = 20.0
MIN_WEEKS, MAX_WEEKS = 1, 8
# Times the store and the weeks of history before a window can both hold.
EARLIEST, LATEST = pd.Timestamp("1900-01-01", tz="UTC"), pd.Timestamp("2200-01-01", tz="UTC")


class FieldRefused(BadRequest):
    """A 400 about one form field; an htmx form shows its message beside that field."""

    def __init__(self, field: str, description: str):
        super().__init__(description=description)
        self.field = field


def bad_request(message: str) -> None:
    abort(400, description=message)


def parse_tz(text: str | None, default: str = "UTC") -> str:
    name = (text or "").strip() or default
    try:
        ZoneInfo(name)
    except (ZoneInfoNotFoundError, ValueError):
        bad_request(f"Unknown time zone {name!r}: use an IANA name such as UTC or Europe/Berlin.")
    return name


def parse_time(text: str | None, tz: str, what: str, field: str | None = None) -> pd.Timestamp:
    """A form time as a UTC Timestamp; a time without an offset is wall-clock time in ``tz``."""

    def refuse(message: str) -> None:
        raise FieldRefused(field, message) if field else BadRequest(description=message)

    raw = (text or "").strip()
    if not raw:
        refuse(f"The {what} is missing: give {TIME_FORMAT_HELP}.")
    try:
        ts = times.parse_time(raw, tz)
    except (ValueError, TypeError, OverflowError):
        refuse(f"The {what} {raw!r} is not a time: give {TIME_FORMAT_HELP}.")
    if not EARLIEST <= ts < LATEST:
        refuse(
            f"The {what} {raw!r} is out of range: give a time from {EARLIEST.year} "
            f"to {LATEST.year - 1}."
        )
    return ts


def parse_window(start: str | None, end: str | None, tz: str) -> Span:
    first = parse_time(start, tz, "window start", "start")
    last = parse_time(end, tz, "window end", "end")
    if first >= last:
        bad_request("The window must start before it ends.")
    weeks = int(current_app.config["MAX_WINDOW_WEEKS"])
    if last - first > pd.Timedelta(weeks=weeks):
        bad_request(
            f"The window may span at most {weeks} weeks; history before it is read separately."
        )
    return first, last


def parse_tolerance(text: str | None, default: float) -> float:
    if text is None or not str(text).strip():
        return default
    try:
        value = float(text)
    except ValueError:
        value = math.nan
    if not math.isfinite(value) or not MIN_TOLERANCE <= value <= MAX_TOLERANCE:
        bad_request(
            f"The band width {text!r} is not usable: give a number of robust standard "
            f"deviations from {MIN_TOLERANCE:g} to {MAX_TOLERANCE:g}."
        )
    return value


def parse_weeks(text: str | None, default: int) -> int:
    if text is None or not str(text).strip():
        return default
    try:
        value = int(text)
    except ValueError:
        value = 0
    if not MIN_WEEKS <= value <= MAX_WEEKS:
        bad_request(
            f"The history {text!r} is not usable: give a whole number of weeks "
            f"from {MIN_WEEKS} to {MAX_WEEKS}."
        )
    return value


def parse_int(text: str | None, what: str) -> int | None:
    if text is None or not str(text).strip():
        return None
    try:
        return int(text)
    except ValueError:
        bad_request(f"The {what} {text!r} is not a number.")
    return None


def parse_spans(values: list[str], tz: str) -> list[Span]:
    """Excluded periods given as ``START/END`` strings."""
    spans = []
    for text in values:
        if not text.strip():
            continue
        start, sep, end = text.partition("/")
        if not sep:
            bad_request(f"The excluded period {text!r} must be written START/END.")
        first = parse_time(start, tz, "excluded period start")
        last = parse_time(end, tz, "excluded period end")
        if first >= last:
            bad_request(f"The excluded period {text!r} must start before it ends.")
        spans.append((first, last))
    return spans


def read_query(
    args: Mapping[str, Any] | MultiDict,
    series_id: int,
    default_window: Span | None,
    defaults: Mapping[str, Any],
) -> ExplainQuery:
    """An :class:`ExplainQuery` from request args; aborts with 400 on any bad value."""
    multi = args if isinstance(args, MultiDict) else MultiDict(args)
    tz = parse_tz(multi.get("tz"))
    if multi.get("start") or multi.get("end") or default_window is None:
        window = parse_window(multi.get("start"), multi.get("end"), tz)
    else:
        window = default_window
    exclude = parse_spans(multi.getlist("exclude"), tz)
    if multi.get("exclude_start") or multi.get("exclude_end"):
        exclude.append(parse_window_pair(multi.get("exclude_start"), multi.get("exclude_end"), tz))
    return ExplainQuery(
        series_id=series_id,
        window=window,
        tolerance=parse_tolerance(multi.get("tolerance"), float(defaults["DEFAULT_TOLERANCE"])),
        weeks=parse_weeks(multi.get("weeks"), int(defaults["DEFAULT_HISTORY_WEEKS"])),
        tz=tz,
        exclude=tuple(dict.fromkeys(exclude)),
        page_id=parse_int(multi.get("page"), "page number"),
        second=parse_int(multi.get("second"), "second series number"),
    )


def parse_window_pair(start: str | None, end: str | None, tz: str) -> Span:
    first = parse_time(start, tz, "excluded period start", "exclude_start")
    last = parse_time(end, tz, "excluded period end", "exclude_end")
    if first >= last:
        bad_request("The excluded period must start before it ends.")
    return first, last
