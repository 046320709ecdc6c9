"""Times and durations, read and written one way everywhere (pure: pandas only).

Every layer imports these: the core for rule texts and verdict sentences, the store for its
UTC columns, the forms for what a reader types, the screens and exports for what they show.
"""

from __future__ import annotations

import math
import re
from typing import Any
from zoneinfo import ZoneInfo

import pandas as pd

__all__ = [
    "to_utc",
    "to_timestamp",
    "local_time",
    "parse_time",
    "parse_duration",
    "short_duration",
    "long_duration",
    "rough_duration",
    "TIME_FORMAT_HELP",
    "DURATION_HELP",
    "is_number",
]

TIME_FORMAT_HELP = "a date and time, e.g. 2026-11-30 14:05 (or ISO 8601 with an offset)"
DURATION_HELP = "10min, 90s or 1h"


def to_utc(value: Any, what: str = "time") -> pd.Timestamp:
    """A UTC timestamp from anything pandas reads as one; naive values are taken as UTC.

    Raises ValueError naming ``what`` for anything that is not a time (NaT included)."""
    try:
        stamp = pd.Timestamp(value)
    except (TypeError, ValueError, OverflowError) as err:
        raise ValueError(f"{what}: expected a date and time, got {value!r}") from err
    if pd.isna(stamp):
        raise ValueError(f"{what}: expected a date and time, got {value!r}")
    return stamp.tz_localize("UTC") if stamp.tzinfo is None else stamp.tz_convert("UTC")


def parse_time(text: Any, tz: str = "UTC") -> pd.Timestamp | None:
    """A typed time as a UTC timestamp; a time without an offset is wall-clock time in
    ``tz``. Empty gives None; anything unreadable raises ValueError saying what is expected."""
    if text is None or (isinstance(text, str) and not text.strip()):
        return None
    try:
        stamp = pd.Timestamp(text.strip() if isinstance(text, str) else text)
    except (TypeError, ValueError, OverflowError):
        stamp = None
    if stamp is None or pd.isna(stamp):
        raise ValueError(f"{text!r} is not a date and time: give {TIME_FORMAT_HELP}")
    if stamp.tzinfo is None:
        stamp = stamp.tz_localize(tz, ambiguous=True, nonexistent="shift_forward")
    return stamp.tz_convert("UTC")


def parse_duration(text: Any) -> pd.Timedelta | None:
    """A duration from ``10min``, ``90s``, ``1h`` or a bare number of seconds; empty gives
    None. Raises ValueError for anything else, and for a negative duration."""
    raw = str(text if text is not None else "").strip()
    if not raw:
        return None
    try:
        # days as short_duration writes them ("3d"); pandas wants "3D"
        words = re.sub(r"(?<=\d)d(?![a-z])", "D", raw)
        delta = pd.Timedelta(float(raw), unit="s") if is_number(raw) else pd.Timedelta(words)
    except (TypeError, ValueError, OverflowError):
        delta = None
    if delta is None or pd.isna(delta):
        raise ValueError(f"{raw!r} is not a duration; write e.g. {DURATION_HELP}.")
    if delta < pd.Timedelta(0):
        raise ValueError(f"{raw!r} is negative; a duration cannot be.")
    return delta


def short_duration(delta: Any) -> str:
    """``0s``, ``90s``, ``10min``, ``2h``, ``3d``: exact, compact, and readable back by
    ``parse_duration`` (rule texts and form values)."""
    seconds = int(pd.Timedelta(delta).total_seconds())
    if seconds == 0:
        return "0s"
    for unit, size in (("d", 86400), ("h", 3600), ("min", 60)):
        if seconds % size == 0:
            return f"{seconds // size}{unit}"
    return f"{seconds}s"


def long_duration(value: Any) -> str:
    """``1 h 5 min``: the two largest units, for tables; a number counts seconds; None and
    NaT give a dash."""
    if value is None:
        return "—"
    td = pd.Timedelta(seconds=value) if isinstance(value, int | float) else pd.Timedelta(value)
    if pd.isna(td):
        return "—"
    seconds = int(td.total_seconds())
    parts = []
    for unit, size in (("d", 86400), ("h", 3600), ("min", 60), ("s", 1)):
        if seconds >= size:
            parts.append(f"{seconds // size} {unit}")
            seconds %= size
    return " ".join(parts[:2]) if parts else "0 s"


def rough_duration(delta: pd.Timedelta | None) -> str:
    """``40 s``, ``25 min``, ``3.5 h``: one rounded unit, for sentences; may be negative."""
    if delta is None or pd.isna(delta):
        return "n/a"
    sign = "-" if delta < pd.Timedelta(0) else ""
    seconds = abs(delta.total_seconds())
    if seconds < 60:
        return f"{sign}{seconds:.0f} s"
    if seconds < 3600 * 2:
        return f"{sign}{seconds / 60:.0f} min"
    return f"{sign}{seconds / 3600:.1f} h"


def to_timestamp(value: Any) -> pd.Timestamp | None:
    """A UTC Timestamp from a Timestamp, datetime, ISO string or epoch milliseconds."""
    if value is None or (isinstance(value, float) and math.isnan(value)):
        return None
    if isinstance(value, int | float) and not isinstance(value, bool):
        return pd.Timestamp(int(value), unit="ms", tz="UTC")
    ts = pd.Timestamp(value)
    if ts is pd.NaT:
        return None
    return ts.tz_localize("UTC") if ts.tzinfo is None else ts.tz_convert("UTC")


def local_time(value: Any, tz: str = "UTC", with_zone: bool = False) -> str:
    """``2026-11-30 14:05`` on the wall clock of ``tz`` (seconds only when not zero); a dash
    for no time."""
    ts = to_timestamp(value)
    if ts is None:
        return "—"
    local = ts.tz_convert(ZoneInfo(tz))
    text = local.strftime("%Y-%m-%d %H:%M")
    if local.second:
        text += local.strftime(":%S")
    return f"{text} {local.strftime('%Z')}" if with_zone else text


def is_number(text: str) -> bool:
    """Whether ``text`` reads as a number (a bare number of seconds, a form's level)."""
    try:
        float(text)
    except ValueError:
        return False
    return True
