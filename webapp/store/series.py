"""Finding series and reading their points back as pandas objects."""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import dataclass
from typing import Any

import pandas as pd
from sqlalchemy import func, select
from sqlalchemy.orm import Session

from webapp.store import blocks
from webapp.store._sql import chunks, require
from webapp.store.models import Series
from webapp.store.times import from_ms, to_ms


@dataclass(frozen=True)
class SeriesInfo:
    """One row of the series list. Times are UTC; ``coverage`` is points / grid slots."""

    id: int
    key: str
    metric: str
    labels: dict[str, str]
    unit: str | None
    n_points: int
    first: pd.Timestamp | None
    last: pd.Timestamp | None
    step: pd.Timedelta | None
    coverage: float
    sparkline: list[float | None]


def info(row: Any) -> SeriesInfo:
    """The list row of a ``Series`` (or of a result row with the same columns)."""
    step = pd.Timedelta(milliseconds=row.step_ms) if row.step_ms else None
    coverage = 0.0
    if row.point_count:
        coverage = 1.0
        if step is not None and row.last_ts is not None and row.first_ts is not None:
            slots = (row.last_ts - row.first_ts) // row.step_ms + 1
            coverage = min(1.0, row.point_count / slots)
    return SeriesInfo(
        id=row.id,
        key=row.key,
        metric=row.metric,
        labels=dict(row.labels or {}),
        unit=row.unit,
        n_points=row.point_count,
        first=from_ms(row.first_ts) if row.first_ts is not None else None,
        last=from_ms(row.last_ts) if row.last_ts is not None else None,
        step=step,
        coverage=coverage,
        sparkline=list(getattr(row, "sparkline", None) or []),
    )


_LISTED = (
    Series.id,
    Series.key,
    Series.metric,
    Series.labels,
    Series.unit,
    Series.point_count,
    Series.first_ts,
    Series.last_ts,
    Series.step_ms,
)


def list_series(
    session: Session,
    q: str | None = None,
    *,
    sparklines: bool = False,
    limit: int | None = None,
) -> list[SeriesInfo]:
    """Every series ordered by key; ``q`` keeps those whose key holds every word of it
    (case-insensitive), so ``latency host=api-3`` finds ``checkout.latency_p95{host=api-3}``.
    One query of plain columns (no ORM objects); ``sparklines`` adds the stored sparkline;
    ``limit`` keeps the first so many."""
    columns = [*_LISTED, Series.sparkline] if sparklines else _LISTED
    stmt = _matching(select(*columns), q).order_by(Series.key).limit(limit)
    return [info(row) for row in session.execute(stmt)]


def count_series(session: Session, q: str | None = None) -> int:
    """How many series ``list_series`` would list for ``q``."""
    return int(session.scalar(_matching(select(func.count()).select_from(Series), q)) or 0)


def _matching(stmt: Any, q: str | None) -> Any:
    for word in (q or "").split():
        stmt = stmt.where(func.lower(Series.key).contains(word.lower(), autoescape=True))
    return stmt


def get_series(session: Session, series_id: int) -> Series | None:
    return session.get(Series, series_id)


def find_series(session: Session, key: str) -> Series | None:
    return session.scalars(select(Series).where(Series.key == key)).first()


def series_by_keys(session: Session, keys: Sequence[str]) -> dict[str, Series]:
    """The stored series among ``keys``, by key (missing keys are simply absent)."""
    found: dict[str, Series] = {}
    for chunk in chunks(list(keys)):
        rows = session.scalars(select(Series).where(Series.key.in_(chunk)))
        found.update({row.key: row for row in rows})
    return found


def read_series(session: Session, series_id: int, start: Any = None, end: Any = None) -> pd.Series:
    """The points of one series between ``start`` and ``end`` (both inclusive, either open).

    Returns float64 values on a sorted ``datetime64[ns, UTC]`` index named ``ts``; the
    Series is named by the series key. Raises LookupError for an unknown id. Reads the
    series' point blocks (``webapp.store.blocks``): one row per day, not per point.
    """
    row = require(session, Series, series_id, "series")
    ts, values = blocks.read(
        session,
        series_id,
        to_ms(start) if start is not None else None,
        to_ms(end) if end is not None else None,
    )
    index = pd.DatetimeIndex((ts * 1_000_000).view("datetime64[ns]"), name="ts")
    return pd.Series(values, index=index.tz_localize("UTC"), name=row.key, copy=False)


def sparkline(session: Session, series_id: int) -> list[float | None]:
    """The series' whole span cut into equal time buckets (``stats.SPARKLINE_BUCKETS``):
    each bucket's mean, or None where the bucket holds no point. Kept on the series row."""
    return list(require(session, Series, series_id, "series").sparkline or [])
