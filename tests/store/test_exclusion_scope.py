"""Excluded periods stay with the series they were made for: a loaded scenario's period
does not reach series imported later, and the 0009 migration scopes old rows the same way."""

from __future__ import annotations

from sqlalchemy import text

from webapp.store import db, excluded
from webapp.store.models import Series


def test_the_demo_period_does_not_reach_a_series_imported_later(demo_db_copy):
    eng = db.make_engine(demo_db_copy)
    try:
        with db.session_scope(eng) as session:
            rows = excluded.list_excluded(session)
            assert rows and all(r.series_id is not None for r in rows)
            demo_series = session.query(Series).first()
            assert excluded.periods_for(session, demo_series.id)
            later = Series(key="imported.later", metric="imported.later", labels={})
            session.add(later)
            session.flush()
            assert excluded.periods_for(session, later.id) == []
    finally:
        eng.dispose()


def insert_series(conn, series_id: int, created_at: str) -> None:
    conn.execute(
        text(
            "INSERT INTO series (id, key, metric, labels, point_count, created_at)"
            " VALUES (:id, :key, :key, '{}', 0, :at)"
        ),
        {"id": series_id, "key": f"s{series_id}", "at": created_at},
    )


def insert_every_series_row(conn, reason: str, created_at: str) -> None:
    conn.execute(
        text(
            'INSERT INTO excluded_periods (series_id, start, "end", reason, created_at) VALUES'
            " (NULL, '2026-11-02 00:00:00', '2026-11-02 01:00:00', :reason, :at)"
        ),
        {"reason": reason, "at": created_at},
    )


def test_the_migration_gives_old_every_series_rows_to_the_series_of_their_time(tmp_path):
    eng = db.make_engine(f"sqlite:///{tmp_path / 'old.sqlite'}")
    try:
        db.upgrade(eng, "0003_compact_store")
        with eng.begin() as conn:
            insert_every_series_row(conn, "before any series", "2026-11-01 00:00:00")
            insert_series(conn, 1, "2026-11-05 00:00:00")
            insert_series(conn, 2, "2026-11-06 00:00:00")
            insert_every_series_row(conn, "maintenance", "2026-11-07 00:00:00")
            insert_series(conn, 3, "2026-11-20 00:00:00")  # imported after the row was made
        db.upgrade(eng)
        with eng.connect() as conn:
            rows = conn.execute(
                text("SELECT series_id, reason FROM excluded_periods ORDER BY reason, series_id")
            ).all()
    finally:
        eng.dispose()
    assert [tuple(r) for r in rows] == [
        (None, "before any series"),
        (1, "maintenance"),
        (2, "maintenance"),
    ]
