"""Frozen explanations: the analysis of one series around one window, kept as it was.

Frames are stored as Parquet bytes (pyarrow) and read back exactly: same values, dtypes,
index (with its time zone and frequency) and column order.
"""

from __future__ import annotations

import datetime as dt
import io
import math
from typing import Any

import numpy as np
import pandas as pd
import pyarrow as pa
import pyarrow.parquet as pq
from sqlalchemy import select
from sqlalchemy.orm import Session

from webapp.store._sql import delete_by_id, require
from webapp.store.models import Explanation, Series
from webapp.store.times import utc

_FREQ_KEY = b"whyfired.index_freq"


def frame_to_parquet(frame: pd.DataFrame) -> bytes:
    table = pa.Table.from_pandas(frame, preserve_index=True)
    freq = getattr(frame.index, "freqstr", None)
    if freq:
        table = table.replace_schema_metadata({**table.schema.metadata, _FREQ_KEY: freq.encode()})
    buffer = io.BytesIO()
    pq.write_table(table, buffer, compression="zstd")
    return buffer.getvalue()


def frame_from_parquet(data: bytes) -> pd.DataFrame:
    table = pq.read_table(io.BytesIO(data))
    frame = table.to_pandas()
    freq = (table.schema.metadata or {}).get(_FREQ_KEY)
    if freq and isinstance(frame.index, pd.DatetimeIndex):
        frame.index.freq = freq.decode()
    return frame


def jsonable(value: Any) -> Any:
    """``value`` with numpy scalars, timestamps and durations turned into JSON types;
    NaN and infinities become None."""
    if isinstance(value, dict):
        return {str(k): jsonable(v) for k, v in value.items()}
    if isinstance(value, list | tuple):
        return [jsonable(v) for v in value]
    if isinstance(value, np.generic):
        value = value.item()
    if isinstance(value, float) and not math.isfinite(value):
        return None
    if isinstance(value, pd.Timestamp | dt.datetime):
        return value.isoformat()
    if isinstance(value, pd.Timedelta | dt.timedelta):
        return pd.Timedelta(value).total_seconds()
    return value


def save_explanation(
    session: Session,
    exp: Any,
    series_id: int,
    *,
    overlay: pd.DataFrame | None = None,
    title: str = "",
    page_id: int | None = None,
) -> Explanation:
    """Freeze ``exp`` (a ``webapp.analysis.Explanation``) for one stored series."""
    series = require(session, Series, series_id, "series")
    start, end = exp.window
    row = Explanation(
        series_id=series_id,
        series_key=series.key,
        page_id=page_id,
        title=title,
        window_start=utc(start),
        window_end=utc(end),
        parameters=jsonable(dict(exp.parameters)),
        engine_version=str(exp.engine_version),
        frame=frame_to_parquet(exp.frame),
        overlay=frame_to_parquet(overlay) if overlay is not None else None,
        facts=jsonable(dict(exp.facts)),
        summary=[str(s) for s in exp.summary],
    )
    session.add(row)
    session.flush()
    return row


def load_frame(row: Explanation) -> pd.DataFrame:
    return frame_from_parquet(row.frame)


def load_overlay(row: Explanation) -> pd.DataFrame | None:
    return frame_from_parquet(row.overlay) if row.overlay is not None else None


def list_explanations(session: Session, series_id: int | None = None) -> list[Explanation]:
    """Saved explanations, newest first, optionally of one series."""
    stmt = select(Explanation).order_by(Explanation.created_at.desc(), Explanation.id.desc())
    if series_id is not None:
        stmt = stmt.where(Explanation.series_id == series_id)
    return list(session.scalars(stmt))


def get_explanation(session: Session, explanation_id: int) -> Explanation | None:
    return session.get(Explanation, explanation_id)


def delete_explanation(session: Session, explanation_id: int) -> None:
    """Remove a saved explanation; it is also detached from any review that showed it."""
    delete_by_id(session, Explanation, explanation_id, "explanation")
