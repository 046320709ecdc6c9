"""The per-series figures kept on the ``series`` row: point count, first and last ts, step."""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
from sqlalchemy import func, select
from sqlalchemy.orm import Session

from webapp.store._sql import chunks
from webapp.store.models import Point, Series

STEP_SAMPLE = 2001  # the step is the median spacing of this many most recent points


def refresh(session: Session, series: Sequence[Series]) -> None:
    """Recompute the figures of ``series`` from their stored points."""
    by_id = {s.id: s for s in series}
    figures: dict[int, tuple[int, int, int]] = {}
    for chunk in chunks(list(by_id)):
        rows = session.execute(
            select(Point.series_id, func.count(), func.min(Point.ts), func.max(Point.ts))
            .where(Point.series_id.in_(chunk))
            .group_by(Point.series_id)
        )
        figures.update({int(sid): (int(n), int(lo), int(hi)) for sid, n, lo, hi in rows})
    for sid, row in by_id.items():
        n, first, last = figures.get(sid, (0, None, None))
        row.point_count = n
        row.first_ts = first
        row.last_ts = last
        row.step_ms = _step_ms(session, sid) if n > 1 else None


def set_from_points(rows: dict[int, Series], series_ids: np.ndarray, ts: np.ndarray) -> None:
    """Set the figures of series whose every point is in ``series_ids``/``ts``, sorted by
    (series, ts): the series an import has just created, without reading them back."""
    found, starts, counts = np.unique(series_ids, return_index=True, return_counts=True)
    for sid, start, n in zip(found.tolist(), starts.tolist(), counts.tolist(), strict=True):
        own = ts[start : start + n]
        row = rows[sid]
        row.point_count = n
        row.first_ts = int(own[0])
        row.last_ts = int(own[-1])
        row.step_ms = _median_step(own[-STEP_SAMPLE:]) if n > 1 else None


def _median_step(sorted_ts: np.ndarray) -> int:
    return int(np.median(np.diff(sorted_ts)))


def _step_ms(session: Session, series_id: int) -> int:
    recent = session.scalars(
        select(Point.ts)
        .where(Point.series_id == series_id)
        .order_by(Point.ts.desc())
        .limit(STEP_SAMPLE)
    ).all()
    return _median_step(np.asarray(recent[::-1], dtype=np.int64))
