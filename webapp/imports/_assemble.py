"""The step every format ends with: gaps dropped and counted, duplicates resolved last-wins,
series keys attached, and the ParsedImport built."""

from __future__ import annotations

import hashlib
from collections.abc import Sequence

import numpy as np
import pandas as pd

from webapp.imports._problems import LineMap, ProblemLog
from webapp.imports._timestamps import Timestamps
from webapp.imports._types import ParsedImport, SeriesMeta
from webapp.imports.keys import series_key


def assemble(
    *,
    data: bytes,
    file_name: str,
    format: str,
    codes: np.ndarray,
    metas: Sequence[SeriesMeta],
    timestamps: Timestamps,
    values: np.ndarray,
    log: ProblemLog,
    line_of: LineMap,
    tz: str | None,
    rows_read: int,
) -> ParsedImport:
    """``codes[i]`` indexes ``metas`` for row i; rows with errors were already logged."""
    log.check()
    if len(values) == 0:
        log.reject("the file has no data rows")
    codes, metas = _merge_equal_keys(codes, metas)
    present = ~np.isnan(values)
    gap_count = int(len(values) - present.sum())
    codes, ms, values = codes[present], timestamps.ms[present], values[present]
    lines = np.flatnonzero(present)
    if len(values) == 0:
        log.reject("every value is empty or NaN; there is nothing to import")
    keep = _last_of_each_pair(codes, ms)
    duplicate_count = int(len(keep) - keep.sum())
    if duplicate_count:
        first = int(line_of(lines[~keep][:1])[0])
        log.warning(
            f"{duplicate_count} rows repeat a (series, timestamp) pair seen earlier or later; "
            f"the last value of each pair was kept (first at line {first})"
        )
        codes, ms, values = codes[keep], ms[keep], values[keep]
    used = np.unique(codes)
    keys = np.array([m_key for m_key, _ in metas], dtype=object)
    table = pd.DataFrame(
        {
            "series_key": pd.array(keys[codes], dtype="str"),
            "ts_utc": ms.astype(np.int64, copy=False),
            "value": values.astype(np.float64, copy=False),
        }
    )
    return ParsedImport(
        file_name=file_name,
        format=format,
        sha256=hashlib.sha256(data).hexdigest(),
        size_bytes=len(data),
        table=table,
        series={metas[c][0]: metas[c][1] for c in used.tolist()},
        timestamp_unit=timestamps.unit,
        naive_tz=tz or "UTC",
        rows_read=rows_read,
        gap_count=gap_count,
        duplicate_count=duplicate_count,
        problems=log.warnings,
    )


def _merge_equal_keys(
    codes: np.ndarray, metas: Sequence[SeriesMeta]
) -> tuple[np.ndarray, list[tuple[str, SeriesMeta]]]:
    """Different spellings of one series (an empty label, label order) share one key."""
    keyed = [(series_key(m.metric, m.labels), m) for m in metas]
    keys = [k for k, _ in keyed]
    unique_keys, inverse = np.unique(np.array(keys, dtype=object), return_inverse=True)
    if len(unique_keys) == len(keys):
        return codes, keyed
    first: dict[str, SeriesMeta] = {}
    for key, meta in keyed:
        first.setdefault(key, meta)
    return inverse[codes], [(k, first[k]) for k in unique_keys.tolist()]


def _last_of_each_pair(codes: np.ndarray, ms: np.ndarray) -> np.ndarray:
    """Mask keeping the last row of every (series, timestamp) pair."""
    low, span = int(ms.min()), int(ms.max()) - int(ms.min()) + 1
    if (int(codes.max()) + 1) * span < 2**62:
        combined = codes.astype(np.int64) * span + (ms - low)
        return ~pd.Series(combined).duplicated(keep="last").to_numpy()
    frame = pd.DataFrame({"c": codes, "t": ms})
    return ~frame.duplicated(keep="last").to_numpy()


def series_problem(metric: str, labels: dict[str, str]) -> str | None:
    """Why this metric and label set cannot name a series, or None when they can."""
    if not metric:
        return "missing metric name"
    try:
        series_key(metric, labels)
    except ValueError as exc:
        return str(exc)
    return None
