"""The seasonal clock: UTC grid timestamps read on a zone's wall clock.

Traffic that follows office hours keeps its shape across daylight-saving changes only when
its cycles are counted on the local wall clock. Every seasonal phase, hour-of-day and
hour-of-week in the analysis is computed from `wall_clock_ns`.
"""

from __future__ import annotations

from zoneinfo import ZoneInfo, ZoneInfoNotFoundError

import numpy as np
import pandas as pd

#: Monday 1970-01-05 00:00, the origin of every cycle count (weeks start on Monday).
MONDAY_ORIGIN_NS = pd.Timestamp("1970-01-05").value
HOUR_NS = 3_600_000_000_000
DAY_NS = 24 * HOUR_NS


def check_tz(tz: str | None) -> str:
    """The zone name, validated; None means UTC."""
    if tz is None:
        return "UTC"
    if not isinstance(tz, str) or not tz:
        raise ValueError(f"tz must be a time zone name such as 'Europe/Berlin', got {tz!r}")
    try:
        ZoneInfo(tz)
    except (ZoneInfoNotFoundError, ValueError):
        raise ValueError(f"unknown time zone {tz!r}; use an IANA name such as 'UTC'") from None
    return tz


def wall_clock_ns(index: pd.DatetimeIndex, tz: str) -> np.ndarray:
    """Nanoseconds since the Monday origin on the wall clock of `tz` (int64)."""
    index = index.as_unit("ns")
    local = index.tz_convert(tz).tz_localize(None) if tz != "UTC" else index.tz_localize(None)
    return np.asarray(local.asi8, dtype=np.int64) - MONDAY_ORIGIN_NS


def wall_clock_hour(index: pd.DatetimeIndex, tz: str) -> np.ndarray:
    """The hour of day, 0-23, on the wall clock of `tz` (int64)."""
    return (wall_clock_ns(index, tz) % DAY_NS // HOUR_NS).astype(np.int64)


def same_wall_clock_weeks_ago(index: pd.DatetimeIndex, weeks, tz: str) -> pd.DatetimeIndex:
    """UTC instants showing the same wall-clock time `weeks` weeks earlier (`weeks` may be an
    array as long as `index`).

    A wall-clock time that did not exist (the hour skipped in spring) gives NaT; one that
    existed twice (autumn) takes its first occurrence.
    """
    local = index.tz_convert(tz).tz_localize(None) - pd.to_timedelta(np.asarray(weeks) * 7, "D")
    local = pd.DatetimeIndex(local)
    if tz == "UTC":
        return local.tz_localize("UTC")
    first = np.ones(len(local), dtype=bool)
    return local.tz_localize(tz, ambiguous=first, nonexistent="NaT").tz_convert("UTC")
