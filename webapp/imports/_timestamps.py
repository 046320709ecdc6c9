"""Timestamps to UTC epoch milliseconds, vectorised.

Accepted: ISO 8601 with an offset or ``Z``; naive ISO 8601 (read in ``tz``, UTC when no
zone is named); naive dates written with slashes, dots or dashes (``31/12/2026 23:00``)
once the user has said whether the day or the month comes first, which no file can say
reliably; epoch numbers, whose unit is chosen by magnitude (see ``epoch_unit``); typed
timestamps (Parquet, or what the CSV reader recognised). Sub-millisecond parts are
rounded to the nearest millisecond.
"""

from __future__ import annotations

import datetime as dt
from dataclasses import dataclass

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.compute as pc

from webapp.imports._problems import LineMap, ProblemLog

ISO = "ISO 8601"
EPOCH_UNITS = ("seconds", "milliseconds", "microseconds", "nanoseconds")
_MS_PER_UNIT = {"seconds": 1000.0, "milliseconds": 1.0, "microseconds": 1e-3, "nanoseconds": 1e-6}
_ARROW_UNITS = {"s": "seconds", "ms": "milliseconds", "us": "microseconds", "ns": "nanoseconds"}
_INT_DIVISOR = {"microseconds": 1000, "nanoseconds": 1_000_000}
# Below 1e11 an epoch is seconds (1e11 s is the year 5138; 1e11 ms is 1973), and each unit
# after that is 1000 times finer.
_MAGNITUDE_EDGES = (1e11, 1e14, 1e17)
MAX_MS = 9_223_372_036_854  # the end of pandas' nanosecond range (year 2262)
RANGE = "1970-01-01..2262-04-11"
EXPECTED = "expected ISO 8601 (e.g. 2026-11-30T08:00:00Z) or epoch seconds/ms/us/ns"
_SLASHED = (
    r"^(?P<first>\d{1,2})[/.-](?P<second>\d{1,2})[/.-](?P<year>\d{4})"
    r"(?:[ T]+(?P<hour>\d{1,2}):(?P<minute>\d{2})(?::(?P<second_of_minute>\d{2}(?:[.,]\d+)?))?)?$"
)
_SLASHED_UNIT = {True: "dates with the day first (31/12/2026 23:00)",
                 False: "dates with the month first (12/31/2026 23:00)"}  # fmt: skip
_OFFSET_AT_END = r"\d\d:\d\d(?::\d\d(?:[.,]\d+)?)?\s*(?:[Zz]|[+-]\d\d(?::?\d\d)?)$"


@dataclass(frozen=True)
class NaiveTimes:
    """How to read times the file writes without an offset: the zone they are in (UTC
    when None) and, for dates with slashes, whether the day comes first (None: not said)."""

    tz: str | None = None
    day_first: bool | None = None


@dataclass
class Timestamps:
    ms: np.ndarray  # int64 UTC epoch milliseconds; meaningless where ``bad``
    bad: np.ndarray  # bool: the row's timestamp could not be used (already reported)
    unit: str  # what was understood, e.g. "ISO 8601" or "epoch seconds"


def epoch_unit(magnitude: float) -> str:
    """The epoch unit a number of this size is taken to be in."""
    for unit, edge in zip(EPOCH_UNITS, _MAGNITUDE_EDGES, strict=False):
        if magnitude < edge:
            return unit
    return EPOCH_UNITS[-1]


def parse_timestamps(
    values: pa.Array | pa.ChunkedArray,
    *,
    times: NaiveTimes,
    column: str,
    log: ProblemLog,
    line_of: LineMap,
) -> Timestamps:
    """Parse one column; every unusable row is reported to ``log`` with its line."""
    if isinstance(values, pa.ChunkedArray):
        values = values.combine_chunks()
    kind = values.type
    if pa.types.is_dictionary(kind):
        values = values.cast(kind.value_type)
        kind = values.type
    empty = values.is_null()
    if pa.types.is_string(kind) or pa.types.is_large_string(kind):
        empty = pc.or_(empty, pc.equal(pc.utf8_trim_whitespace(values), "")).fill_null(True)
    missing = np.asarray(empty.to_numpy(zero_copy_only=False), dtype=bool)
    if missing.any():
        log.rows(missing, column, lambda _row: f"missing timestamp; {EXPECTED}", line_of)
    if pa.types.is_null(kind):  # every cell empty, each one already reported
        return Timestamps(np.zeros(len(values), np.int64), missing, ISO)
    if pa.types.is_string(kind) or pa.types.is_large_string(kind):
        parsed = _parse_text(values, missing, times, column, log, line_of)
    elif pa.types.is_integer(kind) or pa.types.is_floating(kind):
        parsed = _parse_epoch(values, missing, column, log, line_of)
    elif pa.types.is_timestamp(kind) or pa.types.is_date(kind):
        parsed = _parse_typed(values, missing, times.tz, column, log, line_of)
    else:
        log.reject(f"column holds {kind} values; {EXPECTED}", column=column)
    _check_range(parsed, values, column, log, line_of)
    return parsed


def _check_range(
    parsed: Timestamps, values: pa.Array, column: str, log: ProblemLog, line_of: LineMap
) -> None:
    """Times before 1970 or past pandas' range, quoted as the file writes them."""
    out = ~parsed.bad & ((parsed.ms < 0) | (parsed.ms > MAX_MS))
    if out.any():
        read_as = f" when read as {parsed.unit}" if parsed.unit != ISO else ""

        def message(row: int) -> str:
            return f"timestamp {_as_written(values[row].as_py())} is outside {RANGE}{read_as}"

        log.rows(out, column, message, line_of)
        parsed.bad |= out


def _as_written(cell: object) -> str:
    """A cell as the file gives it: text quoted, a number as is, a typed time in ISO 8601."""
    if isinstance(cell, str):
        return repr(cell.strip())
    if isinstance(cell, dt.datetime):
        return pd.Timestamp(cell).isoformat().replace("+00:00", "Z")
    if isinstance(cell, float):
        return np.format_float_positional(cell, trim="-")  # not 1e+20
    return str(cell)


def _parse_epoch(
    values: pa.Array,
    missing: np.ndarray,
    column: str,
    log: ProblemLog,
    line_of: LineMap,
) -> Timestamps:
    """Epoch numbers in the unit their size shows; rows of another size are reported."""
    raw = values.to_numpy(zero_copy_only=False)
    is_float = raw.dtype.kind == "f"
    bad = missing.copy()
    if is_float:
        bad |= ~np.isfinite(np.where(missing, 0.0, raw))
        if (bad & ~missing).any():
            log.rows(bad & ~missing, column, lambda r: f"{raw[r]} is not a timestamp", line_of)
    valid = raw[~bad] if bad.any() else raw
    if valid.size == 0:
        return Timestamps(np.zeros(len(raw), np.int64), bad, "epoch seconds")
    low, high = float(valid.min()), float(valid.max())
    unit = epoch_unit(abs(low))
    if low < 0 or epoch_unit(high) != unit:
        unit = epoch_unit(float(np.median(np.abs(valid))))
        _report_odd_magnitudes(raw, bad, unit, column, log, line_of)
    filled = np.where(bad, 0, raw) if bad.any() else raw
    if is_float:
        scaled = np.rint(filled * _MS_PER_UNIT[unit])
        scaled[np.abs(scaled) > MAX_MS] = MAX_MS + 1  # reported by the range check
        ms = scaled.astype(np.int64)
    else:
        ms = _scale_to_ms(filled.astype(np.int64, copy=False), unit)
    return Timestamps(ms, bad, f"epoch {unit}")


def _report_odd_magnitudes(
    raw: np.ndarray, bad: np.ndarray, unit: str, column: str, log: ProblemLog, line_of: LineMap
) -> None:
    """Rows whose size puts them in another epoch unit than the column's are errors."""
    bands = np.searchsorted(_MAGNITUDE_EDGES, np.abs(np.where(bad, 0, raw)), side="right")
    odd = ~bad & (bands != EPOCH_UNITS.index(unit))
    log.rows(
        odd,
        column,
        lambda r: (
            f"epoch value {raw[r]} looks like epoch {epoch_unit(abs(float(raw[r])))}, "
            f"but this column is in epoch {unit}"
        ),
        line_of,
    )
    bad |= odd


def _scale_to_ms(raw: np.ndarray, unit: str) -> np.ndarray:
    """Integer epoch in ``unit`` to milliseconds, rounding to the nearest millisecond."""
    if unit in _INT_DIVISOR:
        div = _INT_DIVISOR[unit]
        return (raw + div // 2) // div
    return raw * int(_MS_PER_UNIT[unit])


def _parse_text(
    values: pa.Array,
    missing: np.ndarray,
    times: NaiveTimes,
    column: str,
    log: ProblemLog,
    line_of: LineMap,
) -> Timestamps:
    """Text cells: epoch numbers when most cells are numbers, otherwise ISO 8601; the
    cells of the other form are reported."""
    stripped = pc.utf8_trim_whitespace(values)
    for number_type in (pa.int64(), pa.float64()):
        try:
            numbers = stripped.cast(number_type)
        except (pa.ArrowInvalid, pa.ArrowNotImplementedError):
            continue
        return _parse_epoch(numbers, missing, column, log, line_of)
    text = pd.Series(stripped.to_pandas(), dtype=object)
    numeric = pd.to_numeric(text, errors="coerce").to_numpy(dtype=np.float64, na_value=np.nan)
    is_number = ~np.isnan(numeric)
    if is_number.sum() > (~missing & ~is_number).sum():
        words = ~missing & ~is_number
        parsed = _parse_epoch(
            pa.array(numeric, mask=~is_number), missing | words, column, log, line_of
        )
        log.rows(
            words,
            column,
            lambda r: f"{text.iloc[r]!r} is not a timestamp; this column holds {parsed.unit}",
            line_of,
        )
        return parsed
    return _parse_iso(
        text.str.replace(r"z$", "Z", regex=True), missing, is_number, times, column, log, line_of
    )


def _parse_iso(
    text: pd.Series,
    missing: np.ndarray,
    is_number: np.ndarray,
    times: NaiveTimes,
    column: str,
    log: ProblemLog,
    line_of: LineMap,
) -> Timestamps:
    """ISO 8601 text; times with an offset and naive times (read in ``times.tz``) apart.
    Naive dates with slashes are read in the order the user chose, or refused if none."""
    aware = text.str.contains(_OFFSET_AT_END, regex=True, na=False).to_numpy(dtype=bool)
    ms = np.zeros(len(text), dtype=np.int64)
    unparsed = np.zeros(len(text), dtype=bool)
    local_bad = np.zeros(len(text), dtype=bool)
    if aware.any():
        parsed = pd.to_datetime(text[aware], format="ISO8601", utc=True, errors="coerce")
        ms[aware] = _to_ms(parsed)
        unparsed[aware] = parsed.isna().to_numpy()
    naive = ~aware & ~missing
    slashed = np.zeros(len(text), dtype=bool)
    unit = ISO
    if naive.any():
        parsed = pd.to_datetime(text[naive], format="ISO8601", errors="coerce")
        rows = np.flatnonzero(naive)
        slashed[rows] = (parsed.isna() & text[naive].str.match(_SLASHED)).to_numpy(dtype=bool)
        if slashed.any() and times.day_first is not None:
            parsed = parsed.dt.as_unit("us")  # one resolution for both forms
            parsed[slashed[rows]] = _slashed_dates(text[slashed], times.day_first).dt.as_unit("us")
            unit = _SLASHED_UNIT[times.day_first]
        ms[naive], local_bad[naive] = _localize(parsed, times.tz, column, log, line_of, rows)
        unparsed[rows[parsed.isna().to_numpy()]] = True
    local_bad &= ~unparsed
    mixed = unparsed & is_number
    unordered = unparsed & slashed if times.day_first is None else np.zeros_like(slashed)
    log.rows(
        unordered,
        column,
        lambda r: (
            f"{text.iloc[r]!r} could be day first or month first; choose the date order "
            "(day first as in 31/12/2026, or month first as in 12/31/2026) and import again"
        ),
        line_of,
    )
    log.rows(
        unparsed & slashed & ~unordered,
        column,
        lambda r: f"{text.iloc[r]!r} is not a date when read as {unit}",
        line_of,
    )
    log.rows(
        unparsed & ~mixed & ~slashed,
        column,
        lambda r: f"{text.iloc[r]!r} is not a timestamp; {EXPECTED}",
        line_of,
    )
    log.rows(
        mixed,
        column,
        lambda r: (
            f"{text.iloc[r]!r} is an epoch number, but other rows of "
            "this column are ISO 8601 text; use one form of timestamp throughout the file"
        ),
        line_of,
    )
    return Timestamps(ms, missing | unparsed | local_bad, unit)


def _slashed_dates(text: pd.Series, day_first: bool) -> pd.Series:
    """Dates like ``31/12/2026 23:00`` rewritten as ISO 8601 and parsed (NaT where the day
    or month is out of range)."""
    parts = text.str.extract(_SLASHED)
    day, month = (parts.first, parts.second) if day_first else (parts.second, parts.first)
    iso = (
        parts.year + "-" + month.str.zfill(2) + "-" + day.str.zfill(2)
        + "T" + parts.hour.fillna("0").str.zfill(2) + ":" + parts.minute.fillna("00")
        + ":" + parts.second_of_minute.fillna("00").str.replace(",", ".")
    )  # fmt: skip
    return pd.to_datetime(iso, format="ISO8601", errors="coerce")


def _to_ms(parsed: pd.Series | pd.DatetimeIndex) -> np.ndarray:
    """Datetimes of any resolution to int64 epoch ms, rounding to the nearest ms (NaT -> 0)."""
    index = pd.DatetimeIndex(parsed)
    if index.tz is not None:
        index = index.tz_convert("UTC").tz_localize(None)
    nanos = index.as_unit("ns").asi8
    result = (nanos + 500_000) // 1_000_000
    result[index.isna()] = 0
    return result


def _localize(
    parsed: pd.Series,
    tz: str | None,
    column: str,
    log: ProblemLog,
    line_of: LineMap,
    positions: np.ndarray,
) -> tuple[np.ndarray, np.ndarray]:
    """Naive wall-clock times read in ``tz``; times that don't exist or occur twice there
    (daylight-saving changes) are reported, not guessed."""
    index = pd.DatetimeIndex(parsed)
    if tz is None or tz == "UTC":
        return _to_ms(index), np.zeros(len(index), dtype=bool)
    gap_free = index.tz_localize(tz, ambiguous=np.ones(len(index), bool), nonexistent="NaT")
    fold_free = index.tz_localize(tz, ambiguous="NaT", nonexistent="shift_forward")
    nonexistent = gap_free.isna() & ~index.isna()
    ambiguous = fold_free.isna() & ~index.isna()
    local_of_row = np.full(int(positions.max()) + 1, -1, dtype=np.int64)
    local_of_row[positions] = np.arange(len(positions))
    for mask, why in (
        (nonexistent, "does not exist there (the clocks jump forward at that hour)"),
        (ambiguous, "occurs twice there (the clocks go back at that hour)"),
    ):
        if mask.any():
            full = np.zeros(len(local_of_row), dtype=bool)
            full[positions[mask]] = True
            log.rows(
                full,
                column,
                lambda r, why=why: (
                    f"local time {index[local_of_row[r]]} in {tz} {why}; "
                    "give the time with an offset (e.g. +02:00) or in UTC"
                ),
                line_of,
            )
    return _to_ms(fold_free), nonexistent | ambiguous


def _parse_typed(
    values: pa.Array,
    missing: np.ndarray,
    tz: str | None,
    column: str,
    log: ProblemLog,
    line_of: LineMap,
) -> Timestamps:
    if pa.types.is_date(values.type):
        values = values.cast(pa.timestamp("s"))
    if values.type.tz is None and tz not in (None, "UTC"):
        index = pd.DatetimeIndex(values.to_pandas())
        ms, bad = _localize(pd.Series(index), tz, column, log, line_of, np.arange(len(index)))
        return Timestamps(ms, missing | bad, ISO)
    raw = values.cast(pa.int64()).fill_null(0).to_numpy()
    return Timestamps(_scale_to_ms(raw, _ARROW_UNITS[values.type.unit]), missing, ISO)
