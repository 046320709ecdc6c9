"""Recorded incidents as a replay measures them: windows, merging, and which firings catch
them.

A rule *caught* an incident when a firing started between the incident's start minus
``lead`` and its end (see ``webapp.analysis._report``, which the what-if sweep shares).
"""

from __future__ import annotations

from collections.abc import Iterable, Sequence

import numpy as np
import pandas as pd

from webapp.analysis.times import to_utc

DEFAULT_LEAD = pd.Timedelta(minutes=15)
WEEK = pd.Timedelta(weeks=1)
_FAR = np.iinfo(np.int64).max


def incident_windows(
    incidents: Iterable[object] | None,
) -> list[tuple[pd.Timestamp, pd.Timestamp | None]]:
    """Normalise incidents: ``(start, end)`` pairs or dicts with ``start``/``end``; ``end``
    None means still open. Raises ValueError naming the incident that is malformed."""
    out = []
    for number, item in enumerate(incidents or [], start=1):
        if isinstance(item, dict):
            start, end = item.get("start"), item.get("end")
        else:
            try:
                start, end = item  # type: ignore[misc]
            except (TypeError, ValueError) as err:
                raise ValueError(f"incident {number}: expected (start, end), got {item!r}") from err
        begin = to_utc(start, f"incident {number} start")
        finish = None if end is None or pd.isna(end) else to_utc(end, f"incident {number} end")
        if finish is not None and finish < begin:
            raise ValueError(f"incident {number} ends ({finish}) before it starts ({begin})")
        out.append((begin, finish))
    return out


def bounds_ns(
    windows: Sequence[tuple[pd.Timestamp, pd.Timestamp | None]],
) -> tuple[np.ndarray, np.ndarray]:
    """Incident starts and ends as int64 nanoseconds; an open end is far in the future."""
    starts = np.array([int(s.value) for s, _ in windows], dtype=np.int64)
    ends = np.array([_FAR if e is None else int(e.value) for _, e in windows], dtype=np.int64)
    return starts, ends


def catches(
    fire_start_ns: np.ndarray,
    inc_start_ns: np.ndarray,
    inc_end_ns: np.ndarray,
    lead: pd.Timedelta = DEFAULT_LEAD,
) -> tuple[np.ndarray, np.ndarray]:
    """Per incident: caught (bool) and the first catching firing's start (ns; undefined when
    not caught). ``fire_start_ns`` must be sorted."""
    earliest = inc_start_ns - int(lead.value)
    j = np.searchsorted(fire_start_ns, earliest, side="left")
    if fire_start_ns.size == 0:
        return np.zeros(inc_start_ns.size, dtype=bool), np.zeros(inc_start_ns.size, np.int64)
    first = fire_start_ns[np.minimum(j, fire_start_ns.size - 1)]
    return (j < fire_start_ns.size) & (first <= inc_end_ns), first


def merge_incidents(records: Iterable[dict]) -> list[dict]:
    """Merge recorded incidents that overlap or touch into one, in time order.

    ``records``: dicts with ``start``, ``end`` (None: still open) and any other keys (an
    ``id``, a ``title``, ``source``...). Each merged incident is a dict with ``start``,
    ``end``, ``title`` (the first record's) and ``members``, the records it was made of, so a
    screen can say which were merged and drop them together."""
    spans = sorted(
        ((to_utc(r["start"], "incident start"), r) for r in records), key=lambda pair: pair[0]
    )
    merged: list[dict] = []
    for start, record in spans:
        end = record.get("end")
        end = None if end is None or pd.isna(end) else to_utc(end, "incident end")
        last = merged[-1] if merged else None
        if last is not None and (last["end"] is None or start <= last["end"]):
            last["end"] = None if end is None or last["end"] is None else max(last["end"], end)
            last["members"].append(record)
        else:
            merged.append({"start": start, "end": end, "title": record.get("title", ""),
                           "members": [record]})  # fmt: skip
    return merged
