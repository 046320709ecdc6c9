"""Recording parsed files in the store, and undoing them.

An import is all or nothing: :func:`record_import` works inside a savepoint of the caller's
transaction, so an error anywhere leaves the store exactly as it was.

Points are keyed by (series, ts) and the last writer wins: a point that is already stored
is overwritten and counted as *updated*; ``points.import_id`` names the import that wrote
the value now stored. Re-importing a file with the same sha256 is applied like any other
file (its points are written again and counted as updated) and reported through
``ImportSummary.duplicate_of``; pass ``allow_duplicate=False`` to refuse it instead.

Deleting an import removes exactly the points whose stored value it wrote, that is the
points it brought that no later import replaced. Values it overwrote are not brought back:
the store keeps one value per point, not its history.
"""

from __future__ import annotations

from collections.abc import Sequence
from dataclasses import asdict, dataclass, field
from typing import Any

import numpy as np
import pandas as pd
from sqlalchemy import delete, exists, func, select
from sqlalchemy.orm import Session

from webapp.imports._types import ParsedImport
from webapp.imports.keys import parse_series_key
from webapp.store import locks, stats
from webapp.store._sql import chunks, require
from webapp.store.bulk import write_points
from webapp.store.models import (
    AlertRule,
    ExcludedPeriod,
    Explanation,
    Import,
    Page,
    Point,
    Series,
)
from webapp.store.series import series_by_keys
from webapp.store.times import from_ms


class DuplicateImport(ValueError):
    """The same file (same sha256) was imported before and re-imports were refused."""

    def __init__(self, file_name: str, earlier: Import):
        self.earlier_id = earlier.id
        super().__init__(
            f"{file_name}: the same content (sha256) was already imported as import "
            f"#{earlier.id} ({earlier.file_name!r})"
        )


@dataclass(frozen=True)
class ImportSummary:
    """What one import did. ``inserted + updated == points``."""

    import_id: int
    file_name: str
    format: str
    sha256: str
    duplicate_of: int | None
    points: int
    inserted: int
    updated: int
    series_created: int
    series_keys: list[str]
    first_ts: pd.Timestamp | None
    last_ts: pd.Timestamp | None
    timestamp_unit: str
    naive_tz: str
    rows_read: int
    gap_count: int
    duplicate_count: int
    warnings: list[str] = field(default_factory=list)

    def lines(self) -> list[str]:
        """Plain sentences for the CLI and the Imports screen."""
        out = [
            f"{self.file_name}: import #{self.import_id} ({self.format}) wrote "
            f"{self.points:,} points to {len(self.series_keys):,} series "
            f"({self.series_created:,} new series): {self.inserted:,} new points, "
            f"{self.updated:,} updated."
        ]
        if self.duplicate_of is not None:
            out.append(
                f"The same content (sha256) was imported before as import #{self.duplicate_of}; "
                f"it was applied again, so its {self.updated:,} overlapping points were "
                "written again."
            )
        if self.first_ts is not None and self.last_ts is not None:
            out.append(f"Time range: {self.first_ts.isoformat()} to {self.last_ts.isoformat()}.")
        out.append(
            f"Timestamps read as {self.timestamp_unit}; any without a time zone taken as "
            f"{self.naive_tz}."
        )
        if self.gap_count:
            out.append(f"{self.gap_count:,} empty or NaN values kept as gaps.")
        if self.duplicate_count:
            out.append(
                f"{self.duplicate_count:,} repeated (series, timestamp) pairs in the file: "
                "the last one won."
            )
        out.extend(self.warnings)
        return out

    def to_dict(self) -> dict[str, Any]:
        data = asdict(self)
        for name in ("first_ts", "last_ts"):
            data[name] = data[name].isoformat() if data[name] is not None else None
        return data


def record_import(
    session: Session, parsed: ParsedImport, *, allow_duplicate: bool = True
) -> ImportSummary:
    """Store ``parsed`` as one import; the caller commits (``db.session_scope``)."""
    locks.hold(session, locks.IMPORTS)
    with session.begin_nested():
        return _record(session, parsed, allow_duplicate)


def _record(session: Session, parsed: ParsedImport, allow_duplicate: bool) -> ImportSummary:
    imp = Import(
        file_name=parsed.file_name,
        sha256=parsed.sha256,
        format=parsed.format,
        timestamp_unit=parsed.timestamp_unit,
        naive_tz=parsed.naive_tz,
        size_bytes=parsed.size_bytes,
        row_count=parsed.rows_read,
        gap_count=parsed.gap_count,
        duplicate_count=parsed.duplicate_count,
    )
    # Writing first takes SQLite's write lock (waiting out other writers) before this
    # import reads anything, so no other import can commit between its reads and writes;
    # on PostgreSQL the imports lock taken by record_import does the same.
    session.add(imp)
    session.flush()
    earlier = _same_content(session, imp)
    if earlier is not None and not allow_duplicate:
        raise DuplicateImport(parsed.file_name, earlier)

    codes, uniques = pd.factorize(parsed.table["series_key"], sort=False)
    keys = [str(k) for k in uniques]
    series, created = _series_for(session, parsed, keys)
    session.flush()
    ids = np.array([series[k].id for k in keys], dtype=np.int64)
    series_ids, ts, values = _sorted_last_wins(
        ids[codes] if keys else np.empty(0, dtype=np.int64),
        parsed.table["ts_utc"].to_numpy(dtype=np.int64),
        parsed.table["value"].to_numpy(dtype=np.float64),
    )
    inserted = _write_all(session, imp.id, series, created, series_ids, ts, values)

    summary = ImportSummary(
        import_id=imp.id,
        file_name=parsed.file_name,
        format=parsed.format,
        sha256=parsed.sha256,
        duplicate_of=earlier.id if earlier is not None else None,
        points=len(ts),
        inserted=inserted,
        updated=len(ts) - inserted,
        series_created=len(created),
        series_keys=keys,
        first_ts=from_ms(ts.min()) if len(ts) else None,
        last_ts=from_ms(ts.max()) if len(ts) else None,
        timestamp_unit=parsed.timestamp_unit,
        naive_tz=parsed.naive_tz,
        rows_read=parsed.rows_read,
        gap_count=parsed.gap_count,
        duplicate_count=parsed.duplicate_count,
        warnings=[str(p) for p in parsed.problems],
    )
    imp.point_count = summary.points
    imp.inserted_count = summary.inserted
    imp.updated_count = summary.updated
    imp.series_count = len(keys)
    imp.first_ts = int(ts.min()) if len(ts) else None
    imp.last_ts = int(ts.max()) if len(ts) else None
    imp.summary = summary.to_dict()
    session.flush()
    return summary


def _same_content(session: Session, imp: Import) -> Import | None:
    """The latest other import with the same sha256."""
    return session.scalars(
        select(Import)
        .where(Import.sha256 == imp.sha256, Import.id != imp.id)
        .order_by(Import.id.desc())
        .limit(1)
    ).first()


def _write_all(
    session: Session,
    import_id: int,
    series: dict[str, Series],
    created: set[str],
    series_ids: np.ndarray,
    ts: np.ndarray,
    values: np.ndarray,
) -> int:
    """Write the sorted points, refresh the series figures; returns how many are new."""
    existing = [s for key, s in series.items() if key not in created]
    before = sum(_point_counts(session, [s.id for s in existing]).values())
    fresh = np.isin(series_ids, [series[k].id for k in created])
    old = ~fresh
    write_points(session, import_id, series_ids[fresh], ts[fresh], values[fresh], upsert=False)
    write_points(session, import_id, series_ids[old], ts[old], values[old], upsert=True)
    span = (int(ts[old].min()), int(ts[old].max())) if old.any() else None
    stats.refresh(session, existing, span)
    created_rows = {series[k].id: series[k] for k in created}
    stats.set_from_points(session, created_rows, series_ids[fresh], ts[fresh], values[fresh])
    return sum(s.point_count for s in series.values()) - before


def _series_for(
    session: Session, parsed: ParsedImport, keys: list[str]
) -> tuple[dict[str, Series], set[str]]:
    """The series rows for ``keys``, creating the missing ones; also the created keys."""
    found = series_by_keys(session, keys)
    created: set[str] = set()
    for key in keys:
        meta = parsed.series.get(key)
        unit = meta.unit if meta is not None else None
        if key in found:
            if unit and not found[key].unit:
                found[key].unit = unit
            continue
        metric, labels = (meta.metric, dict(meta.labels)) if meta else parse_series_key(key)
        found[key] = Series(key=key, metric=metric, labels=labels, unit=unit, point_count=0)
        session.add(found[key])
        created.add(key)
    return found, created


def _point_counts(session: Session, series_ids: Sequence[int]) -> dict[int, int]:
    counts: dict[int, int] = {}
    for chunk in chunks(list(series_ids)):
        rows = session.execute(
            select(Point.series_id, func.count())
            .where(Point.series_id.in_(chunk))
            .group_by(Point.series_id)
        )
        counts.update({int(sid): int(n) for sid, n in rows})
    return counts


def _sorted_last_wins(
    series_ids: np.ndarray, ts: np.ndarray, values: np.ndarray
) -> tuple[np.ndarray, np.ndarray, np.ndarray]:
    """Points in (series, ts) order, the last of any repeated pair kept (importers already
    resolve repeats; this keeps the store's key safe whatever hands it a table)."""
    order = np.lexsort((ts, series_ids))  # stable: repeats keep their file order
    series_ids, ts, values = series_ids[order], ts[order], values[order]
    last = np.ones(len(ts), dtype=bool)
    last[:-1] = (series_ids[1:] != series_ids[:-1]) | (ts[1:] != ts[:-1])
    return series_ids[last], ts[last], values[last]


def delete_import(session: Session, import_id: int) -> int:
    """Remove an import and the points whose stored value it wrote; returns how many.

    Series left without points that nothing else refers to (pages, alert rules, saved
    explanations, excluded periods) are removed too. Raises LookupError for an unknown id.
    """
    locks.hold(session, locks.IMPORTS)
    imp = require(session, Import, import_id, "import")
    keys = list((imp.summary or {}).get("series_keys", []))
    touched = list(series_by_keys(session, keys).values())
    removed = 0
    if touched and imp.first_ts is not None and imp.last_ts is not None:
        for chunk in chunks([s.id for s in touched]):
            result = session.execute(
                delete(Point)
                .where(Point.series_id.in_(chunk))
                .where(Point.ts.between(imp.first_ts, imp.last_ts))
                .where(Point.import_id == import_id)
                .execution_options(synchronize_session=False)
            )
            removed += result.rowcount
    stats.refresh(
        session, touched, (imp.first_ts, imp.last_ts) if imp.first_ts is not None else None
    )
    for s in touched:
        if s.point_count == 0 and not _is_referenced(session, s.id):
            session.delete(s)
    session.delete(imp)
    session.flush()
    return removed


def _is_referenced(session: Session, series_id: int) -> bool:
    return any(
        session.scalar(select(exists().where(model.series_id == series_id)))
        for model in (Page, AlertRule, Explanation, ExcludedPeriod)
    )


def list_imports(session: Session) -> list[Import]:
    """Every import, newest first."""
    newest_first = select(Import).order_by(Import.created_at.desc(), Import.id.desc())
    return list(session.scalars(newest_first))


def get_import(session: Session, import_id: int) -> Import | None:
    return session.get(Import, import_id)
