"""Validation of explain's parameters: a readable ValueError for each kind of bad input."""

from __future__ import annotations

import numpy as np
import pandas as pd

from ._grid import to_utc


def check_span(span, what: str) -> tuple[pd.Timestamp, pd.Timestamp]:
    """(start, end) as UTC timestamps; start must come before end."""
    try:
        start, end = span
    except (TypeError, ValueError):
        raise ValueError(f"{what} must be a (start, end) pair, got {span!r}") from None
    start, end = to_utc(start), to_utc(end)
    if start >= end:
        raise ValueError(f"{what} must start before it ends: {start} >= {end}")
    return start, end


def check_window(window) -> tuple[pd.Timestamp, pd.Timestamp]:
    return check_span(window, "the window")


def check_exclude(exclude) -> list[tuple[pd.Timestamp, pd.Timestamp]]:
    return [check_span(span, f"excluded period {i}") for i, span in enumerate(exclude or (), 1)]


def check_history(history) -> pd.Timedelta:
    try:
        value = pd.Timedelta(history)
    except (TypeError, ValueError):
        raise ValueError(f"history must be a duration such as '6W', got {history!r}") from None
    if value is pd.NaT or value < pd.Timedelta(0):
        raise ValueError(f"history must be a duration of zero or more, got {history!r}")
    return value


def check_tolerance(tolerance) -> float:
    try:
        value = float(tolerance)
    except (TypeError, ValueError):
        raise ValueError(f"tolerance must be a number, got {tolerance!r}") from None
    if not np.isfinite(value) or value <= 0:
        raise ValueError(f"tolerance must be a positive number of sds, got {tolerance!r}")
    return value
