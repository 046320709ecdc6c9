"""Frozen explanations: the analysis of one series around one window, kept as it was.

Frames are stored as compact Parquet bytes (``webapp.store.frames``) and read back exactly:
same bits, dtypes, index (with its time zone and frequency) and column order.
"""

from __future__ import annotations

import datetime as dt
import math
from typing import Any

import numpy as np
import pandas as pd
from sqlalchemy import select
from sqlalchemy.orm import Session

from webapp.store._sql import delete_by_id, require
from webapp.store.frames import decode_frame, encode_frame
from webapp.store.models import Explanation, Series
from webapp.store.times import utc


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
    peers: dict[str, Any] | None = None,
    screening: dict[str, Any] | None = None,
) -> Explanation:
    """Freeze ``exp`` (a ``webapp.analysis.Explanation``) for one stored series, with its
    peer comparison and screening as JSON objects when given.

    The frames are encoded (a fraction of a second of CPU) before the first statement, so a
    SQLite store's write lock is not held while they are: other writers wait only for the
    insert."""
    frame = encode_frame(exp.frame)
    overlay_bytes = encode_frame(overlay) if overlay is not None else None
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
        frame=frame,
        overlay=overlay_bytes,
        facts=jsonable(dict(exp.facts)),
        summary=[str(s) for s in exp.summary],
        peers=jsonable(peers) if peers is not None else None,
        screening=jsonable(screening) if screening is not None else None,
    )
    session.add(row)
    session.flush()
    return row


def load_frame(row: Explanation) -> pd.DataFrame:
    return decode_frame(row.frame)


def load_overlay(row: Explanation) -> pd.DataFrame | None:
    return decode_frame(row.overlay) if row.overlay is not None else None


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
