"""Metric values to float64: numbers stay, empty cells and NaN become gaps (NaN),
infinities and text are reported."""

from __future__ import annotations

import re

import numpy as np
import pandas as pd
import pyarrow as pa

from webapp.imports._problems import LineMap, ProblemLog

_COMMA_DECIMAL = re.compile(r"^\s*([+-]?\d*),(\d+(?:[eE][+-]?\d+)?)\s*$")
GAP_WORDS = frozenset({"", "nan", "-nan", "na", "n/a", "null", "none"})
EXPECTED = "expected a number (an empty cell or NaN marks a gap)"


def parse_values(
    values: pa.Array | pa.ChunkedArray | pd.Series,
    *,
    column: str,
    log: ProblemLog,
    line_of: LineMap,
    decimal_comma: bool = False,
) -> np.ndarray:
    """One column of values as float64 with NaN for gaps; bad cells are reported.

    ``decimal_comma`` also reads ``183,4`` as 183.4 (files separated by semicolons or tabs,
    as spreadsheets in many locales write them)."""
    if isinstance(values, pa.ChunkedArray):
        values = values.combine_chunks()
    if isinstance(values, pa.Array):
        kind = values.type
        if pa.types.is_floating(kind) or pa.types.is_integer(kind) or pa.types.is_null(kind):
            numbers = values.cast(pa.float64()).to_numpy(zero_copy_only=False)
        else:
            numbers = _from_text(
                pd.Series(values.to_pandas(), dtype=object), column, log, line_of, decimal_comma
            )
    elif values.dtype.kind in "fiu":
        numbers = values.to_numpy(dtype=np.float64, na_value=np.nan)
    else:
        numbers = _from_text(values.astype(object), column, log, line_of, decimal_comma)
    infinite = np.isinf(numbers)
    if infinite.any():
        log.rows(
            infinite,
            column,
            lambda r: f"value {numbers[r]} is infinite; expected a finite number",
            line_of,
        )
    return numbers


def _from_text(
    cells: pd.Series, column: str, log: ProblemLog, line_of: LineMap, decimal_comma: bool
) -> np.ndarray:
    is_bool = cells.map(lambda c: isinstance(c, bool), na_action="ignore").fillna(False)
    readable = cells.where(~is_bool.astype(bool))
    if decimal_comma:
        readable = readable.astype("str").str.replace(_COMMA_DECIMAL, r"\1.\2", regex=True)
    numbers = pd.to_numeric(readable, errors="coerce")
    numbers = numbers.to_numpy(dtype=np.float64, na_value=np.nan)
    failed = np.isnan(numbers) & cells.notna().to_numpy()
    if failed.any():
        words = cells[failed].map(lambda c: str(c).strip().lower())
        failed[np.flatnonzero(failed)[words.isin(GAP_WORDS).to_numpy()]] = False
    if failed.any():
        log.rows(
            failed, column, lambda r: f"{cells.iloc[r]!r} is not a number; {EXPECTED}", line_of
        )
    return numbers
