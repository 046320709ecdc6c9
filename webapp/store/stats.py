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


def _step_ms(session: Session, series_id: int) -> int:
    recent = session.scalars(
        select(Point.ts)
        .where(Point.series_id == series_id)
        .order_by(Point.ts.desc())
        .limit(STEP_SAMPLE)
    ).all()
    return int(np.median(-np.diff(np.asarray(recent, dtype=np.int64))))
