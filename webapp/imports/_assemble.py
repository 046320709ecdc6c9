"""The step every format ends with: one unit per series checked, gaps dropped and counted,
duplicates resolved last-wins, series keys attached, and the ParsedImport built."""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
import pandas as pd
import pyarrow as pa

from webapp.imports._problems import LineMap, ProblemLog
from webapp.imports._timestamps import Timestamps
from webapp.imports._types import ParsedImport, SeriesMeta
from webapp.imports._units import report_unit_changes
from webapp.imports.keys import series_key

try:
    _STR = pd.StringDtype("pyarrow", na_value=np.nan)  # pandas' default "str" dtype
except TypeError:  # pandas before 2.3 has no NaN-valued string dtype
    _STR = pd.StringDtype("pyarrow")


def assemble(
    *,
    data: bytes | memoryview,
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
    unit_column: str | None = "unit",
) -> ParsedImport:
    """``codes[i]`` indexes ``metas`` for row i; rows with errors were already logged.

    Metas may repeat a key (other spellings of one series, or rows giving another unit);
    a series whose rows give two units is reported on ``unit_column``."""
    keys = [_key_or_none(m) for m in metas]
    report_unit_changes(codes, metas, keys, log, line_of, unit_column)
    log.check()
    if len(values) == 0:
        log.reject("the file has no data rows")
    codes, metas = _merge_equal_keys(codes, metas, keys)
    codes = codes.astype(_code_dtype(len(metas)), copy=False)
    ms = timestamps.ms
    rows = None  # positions of the kept rows in the file's order, built only when needed
    present = ~np.isnan(values)
    gap_count = int(len(values) - np.count_nonzero(present))
    if gap_count:
        rows = np.flatnonzero(present)
        codes, ms, values = codes[rows], ms[rows], values[rows]
    if len(values) == 0:
        log.reject("every value is empty or NaN; there is nothing to import")
    keep = _last_of_each_pair(codes, ms)
    duplicate_count = 0 if keep is None else int(len(keep) - np.count_nonzero(keep))
    if duplicate_count:
        dropped = np.flatnonzero(~keep)[:1]
        first = int(line_of(dropped if rows is None else rows[dropped])[0])
        log.warning(
            f"{duplicate_count} {'row repeats' if duplicate_count == 1 else 'rows repeat'} "
            "a (series, timestamp) pair that appears again later; the last value of each "
            f"pair was kept (first repeat at {log.place} {first})"
        )
        codes, ms, values = codes[keep], ms[keep], values[keep]
    used = np.flatnonzero(np.bincount(codes, minlength=len(metas)))
    keys = [m_key for m_key, _ in metas]
    table = pd.DataFrame(
        {
            "series_key": _key_column(keys, codes),
            "ts_utc": ms.astype(np.int64, copy=False),
            "value": values.astype(np.float64, copy=False),
        },
        copy=False,
    )
    return ParsedImport(
        file_name=file_name,
        format=format,
        sha256="",  # provenance is filled in by the entry point
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


def _key_or_none(meta: SeriesMeta) -> str | None:
    """The series key, or None where the metric or labels cannot make one (those rows
    were reported already)."""
    if not meta.metric:
        return None
    try:
        return series_key(meta.metric, meta.labels)
    except ValueError:
        return None


def _merge_equal_keys(
    codes: np.ndarray, metas: Sequence[SeriesMeta], keys: list[str | None]
) -> tuple[np.ndarray, list[tuple[str, SeriesMeta]]]:
    """Different spellings of one series (an empty label, label order) share one key."""
    keyed = list(zip(keys, metas, strict=True))
    unique_keys, inverse = np.unique(np.array(keys, dtype=object), return_inverse=True)
    if len(unique_keys) == len(keys):
        return codes, keyed
    first: dict[str, SeriesMeta] = {}
    for key, meta in keyed:
        first.setdefault(key, meta)
    return inverse[codes], [(k, first[k]) for k in unique_keys.tolist()]


def _code_dtype(n: int) -> type:
    """Small codes let numpy's stable sort use radix sort."""
    return np.int16 if n < 2**15 else np.int64


def _last_of_each_pair(codes: np.ndarray, ms: np.ndarray) -> np.ndarray | None:
    """Mask keeping the last row of every (series, timestamp) pair; None when no pair
    repeats. Exports usually list each series in time order, which is checked first in
    O(n); only files where that fails pay for hashing."""
    order = np.argsort(codes, kind="stable")
    sorted_codes, sorted_ms = codes[order], ms[order]
    same_series = sorted_codes[1:] == sorted_codes[:-1]
    if not np.any(same_series & (sorted_ms[1:] <= sorted_ms[:-1])):
        return None
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


def _key_column(keys: list[str], codes: np.ndarray) -> pd.Series:
    """A string column built in Arrow from the few distinct keys (no Python per row)."""
    encoded = pa.DictionaryArray.from_arrays(pa.array(codes.astype(np.int32)), pa.array(keys))
    strings = encoded.cast(pa.string())
    return pd.Series(strings.to_pandas(types_mapper={pa.string(): _STR}.get), name="series_key")
