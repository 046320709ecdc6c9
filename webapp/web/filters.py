"""Template filters: times in the reader's time zone, numbers and durations for people."""

from __future__ import annotations

import datetime as dt
import math
import re
from functools import cache
from typing import TYPE_CHECKING, Any
from zoneinfo import ZoneInfo, available_timezones

import pandas as pd

from webapp.analysis.times import local_time, long_duration, to_timestamp
from webapp.analysis.vocabulary import BAND_WIDTH_HELP, level_words

if TYPE_CHECKING:  # Flask only where a request needs it: the export writer uses these too
    from flask import Flask


def input_time(value: Any, tz: str = "UTC") -> str:
    """A time as typed into a 24-hour time field (``YYYY-MM-DD HH:MM``) in ``tz``."""
    ts = to_timestamp(value)
    if ts is None:
        return ""
    return ts.tz_convert(ZoneInfo(tz)).strftime("%Y-%m-%d %H:%M")


def number(value: Any, digits: int = 4) -> str:
    if value is None:
        return "—"
    if isinstance(value, bool) or not isinstance(value, int | float):
        return str(value)
    if isinstance(value, float) and not math.isfinite(value):
        return "—"
    if isinstance(value, int) or float(value).is_integer() and abs(value) < 1e15:
        return f"{int(value):,}"
    return f"{value:,.{digits}g}" if abs(value) >= 1 else f"{value:.{digits}g}"


def percent(value: Any) -> str:
    if value is None:
        return "—"
    return f"{100 * float(value):.0f}%"


ISO_TIME = re.compile(r"^\d{4}-\d{2}-\d{2}[T ]\d{2}:\d{2}(:\d{2}(\.\d+)?)?([+-]\d{2}:\d{2}|Z)$")


def fact_value(value: Any, tz: str = "UTC", name: str = "") -> str:
    """A fact from ``exp.facts`` (numbers, times, lists) as one short string; times in
    ``tz``, and a count of seconds (a name ending ``_seconds``) as a duration."""
    if isinstance(value, list | tuple):
        return ", ".join(fact_value(v, tz) for v in value) or "—"
    if isinstance(value, dict):
        return "; ".join(f"{k}: {fact_value(v, tz)}" for k, v in value.items()) or "—"
    if isinstance(value, dt.datetime | pd.Timestamp) or (
        isinstance(value, str) and ISO_TIME.match(value)
    ):
        return local_time(value, tz, with_zone=True)
    if name.endswith("_seconds") and isinstance(value, int | float) and not isinstance(value, bool):
        return long_duration(value)
    if value is None or value == "":
        return "—"
    return number(value)


def endpoint_url(endpoint: str, fallback: str) -> str:
    """``url_for(endpoint)``, or ``fallback`` while that screen has no index route yet."""
    from flask import url_for
    from werkzeug.routing import BuildError

    try:
        return url_for(endpoint)
    except BuildError:
        return fallback


@cache
def time_zones() -> list[str]:
    """IANA zone names for the time zone pickers, UTC first."""
    return ["UTC"] + sorted(z for z in available_timezones() if "/" in z and z != "UTC")


def init_app(app: Flask) -> None:
    app.add_template_global(time_zones, "time_zones")
    app.add_template_global(endpoint_url, "endpoint_url")
    app.add_template_global(level_words, "level_words")
    app.add_template_global(BAND_WIDTH_HELP, "band_width_help")
    for name, fn in {
        "local_time": local_time,
        "input_time": input_time,
        "number": number,
        "duration": long_duration,
        "percent": percent,
        "fact_value": fact_value,
    }.items():
        app.add_template_filter(fn, name)
