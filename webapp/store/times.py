"""Time conversions at the store's edge: everything stored is UTC."""

from __future__ import annotations

import datetime as dt
from typing import Any

import pandas as pd

from webapp.analysis.times import parse_time, to_utc

_EPOCH = pd.Timestamp(0, tz="UTC")
_MS = pd.Timedelta(milliseconds=1)


def utc(when: Any) -> dt.datetime:
    """An aware UTC ``datetime`` for the UTC columns of the models."""
    return to_utc(when).to_pydatetime()


def to_ms(when: Any) -> int:
    """UTC epoch milliseconds, the unit of ``points.ts``."""
    return int((to_utc(when) - _EPOCH) // _MS)


def from_ms(ms: int) -> pd.Timestamp:
    return pd.Timestamp(int(ms), unit="ms", tz=dt.UTC).as_unit("ns")


def utc_datetime(value: Any, tz: str = "UTC") -> dt.datetime | None:
    """An aware UTC datetime for a UTC column from a datetime or an ISO 8601 string (naive
    means wall-clock time in ``tz``); empty gives None. Raises ValueError saying what is
    expected."""
    when = parse_time(value, tz)
    return None if when is None else when.to_pydatetime()
