"""The per-series figures kept current by the store on every import and undo.

On the ``series`` row: point count, first and last ts, step, and the sparkline (means of
``SPARKLINE_BUCKETS`` equal time buckets over the whole span), so listing a thousand series
is one query. Beside it, the series' point blocks (``webapp.store.blocks``) for the days
that changed.
"""

from __future__ import annotations

from collections.abc import Sequence

import numpy as np
from sqlalchemy import func, select
from sqlalchemy.orm import Session

from webapp.store import blocks
from webapp.store._sql import chunks
from webapp.store.models import Point, Series

STEP_SAMPLE = 2001  # the step is the median spacing of this many most recent points
SPARKLINE_BUCKETS = 120


def refresh(
    session: Session, series: Sequence[Series], span: tuple[int, int] | None = None
) -> None:
    """Recompute the figures of ``series`` from their stored points; ``span`` (ts in ms,
    inclusive) limits the point blocks rebuilt to the days it covers (None: all)."""
    by_id = {s.id: s for s in series}
    figures: dict[int, tuple[int, int, int]] = {}
    for chunk in chunks(list(by_id)):
        rows = session.execute(
            select(Point.series_id, func.count(), func.min(Point.ts), func.max(Point.ts))
            .where(Point.series_id.in_(chunk))
            .group_by(Point.series_id)
        )
        figures.update({int(sid): (int(n), int(lo), int(hi)) for sid, n, lo, hi in rows})
    blocks.rebuild(session, list(by_id), span)
    for sid, row in by_id.items():
        n, first, last = figures.get(sid, (0, None, None))
        row.point_count = n
        row.first_ts = first
        row.last_ts = last
        row.step_ms = _step_ms(session, sid) if n > 1 else None
        row.sparkline = bucket_means(*blocks.read(session, sid)) if n else None


def set_from_points(
    session: Session,
    rows: dict[int, Series],
    series_ids: np.ndarray,
    ts: np.ndarray,
    values: np.ndarray,
) -> None:
    """Set the figures and write the blocks of series whose every point is in
    ``series_ids``/``ts``/``values``, sorted by (series, ts): the series an import has just
    created, without reading them back."""
    found, starts, counts = np.unique(series_ids, return_index=True, return_counts=True)
    for sid, start, n in zip(found.tolist(), starts.tolist(), counts.tolist(), strict=True):
        own_ts = ts[start : start + n]
        own_values = values[start : start + n]
        row = rows[sid]
        row.point_count = n
        row.first_ts = int(own_ts[0])
        row.last_ts = int(own_ts[-1])
        row.step_ms = _median_step(own_ts[-STEP_SAMPLE:]) if n > 1 else None
        row.sparkline = bucket_means(own_ts, own_values)
        blocks.write(session, sid, own_ts, own_values)


def bucket_means(
    ts: np.ndarray, values: np.ndarray, n: int = SPARKLINE_BUCKETS
) -> list[float | None]:
    """The span of sorted ``ts`` cut into ``n`` equal time buckets: each bucket's mean of
    the non-missing values, or None where it has none (or the mean is not finite)."""
    ok = ~np.isnan(values)
    if not len(ts) or not ok.any():
        return [None] * n if len(ts) else []
    span = int(ts[-1]) - int(ts[0]) + 1
    bucket = np.minimum((ts[ok] - ts[0]) * n // span, n - 1)
    sums = np.bincount(bucket, weights=values[ok], minlength=n)
    counts = np.bincount(bucket, minlength=n)
    with np.errstate(invalid="ignore", divide="ignore"):
        means = sums / counts
    # JSON (and PostgreSQL's json type) has no NaN or infinity: such a bucket is left empty.
    return [float(m) if np.isfinite(m) else None for m in means]


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
