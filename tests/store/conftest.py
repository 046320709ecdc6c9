"""Fixtures for the store tests: parsed imports built from plain lists."""

from __future__ import annotations

import hashlib
from collections.abc import Callable, Sequence

import numpy as np
import pandas as pd
import pytest

from webapp.imports._types import ParsedImport, SeriesMeta
from webapp.imports.keys import parse_series_key

MakeParsed = Callable[..., ParsedImport]


def _make_parsed(
    keys: Sequence[str],
    ts_ms: Sequence[int],
    values: Sequence[float],
    file_name: str = "synthetic.csv",
    unit: str | None = None,
) -> ParsedImport:
    table = pd.DataFrame(
        {
            "series_key": pd.Series(list(keys), dtype=object),
            "ts_utc": np.asarray(ts_ms, dtype=np.int64),
            "value": np.asarray(values, dtype=np.float64),
        }
    )
    content = table.to_csv(index=False).encode()
    series = {}
    for key in dict.fromkeys(keys):
        metric, labels = parse_series_key(key)
        series[key] = SeriesMeta(metric=metric, labels=labels, unit=unit)
    return ParsedImport(
        file_name=file_name,
        format="csv-long",
        sha256=hashlib.sha256(content).hexdigest(),
        size_bytes=len(content),
        table=table,
        series=series,
        timestamp_unit="epoch milliseconds",
        rows_read=len(table),
    )


@pytest.fixture
def make_parsed() -> MakeParsed:
    """Build a ParsedImport (synthetic data) from keys, epoch-ms timestamps and values."""
    return _make_parsed
