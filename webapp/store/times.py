"""Time conversions at the store's edge: everything stored is UTC."""

from __future__ import annotations

import datetime as dt
from typing import Any

import pandas as pd

_EPOCH = pd.Timestamp(0, tz="UTC")
_MS = pd.Timedelta(milliseconds=1)


def timestamp(when: Any) -> pd.Timestamp:
    """A UTC ``pd.Timestamp`` from anything it accepts; naive values are taken as UTC."""
    try:
        stamp = pd.Timestamp(when)
    except (TypeError, ValueError) as err:
        raise ValueError(f"expected a date and time, got {when!r}") from err
    if pd.isna(stamp):
        raise ValueError(f"expected a date and time, got {when!r}")
    if stamp.tzinfo is None:
        return stamp.tz_localize("UTC")
    return stamp.tz_convert("UTC")


def utc(when: Any) -> dt.datetime:
    """An aware UTC ``datetime`` for the UTC columns of the models."""
    return timestamp(when).to_pydatetime()


def to_ms(when: Any) -> int:
    """UTC epoch milliseconds, the unit of ``points.ts``."""
    return int((timestamp(when) - _EPOCH) // _MS)


def from_ms(ms: int) -> pd.Timestamp:
    return pd.Timestamp(int(ms), unit="ms", tz=dt.UTC).as_unit("ns")
