"""The engine, the migrations and the sessions."""

from __future__ import annotations

from pathlib import Path

import pytest
from alembic.autogenerate import compare_metadata
from alembic.runtime.migration import MigrationContext
from alembic.script import ScriptDirectory
from sqlalchemy import inspect, select

from webapp.store import db
from webapp.store.models import Base, Series


def test_upgrade_then_downgrade_on_an_empty_store(empty_db_url):
    eng = db.make_engine(empty_db_url)
    try:
        db.upgrade(eng)
        head = ScriptDirectory.from_config(db.alembic_config()).get_current_head()
        assert db.current_revision(eng) == head
        assert set(Base.metadata.tables) <= set(inspect(eng).get_table_names())

        db.downgrade(eng, "base")
        assert db.current_revision(eng) is None
        assert set(inspect(eng).get_table_names()) <= {"alembic_version"}

        db.upgrade(eng)
        assert db.current_revision(eng) == head
    finally:
        eng.dispose()


def test_models_and_migrations_agree(engine):
    with engine.connect() as conn:
        context = MigrationContext.configure(conn, opts={"compare_type": True})
        diff = compare_metadata(context, Base.metadata)
    assert diff == [], f"models.py and migrations/ disagree; add a migration: {diff}"


def test_points_table_is_clustered_on_its_key(sqlite_engine):
    with sqlite_engine.connect() as conn:
        sql = conn.exec_driver_sql("SELECT sql FROM sqlite_master WHERE name = 'points'").scalar()
    assert "WITHOUT ROWID" in sql.upper()


def test_sqlite_connections_get_wal_foreign_keys_and_busy_timeout(sqlite_engine):
    with sqlite_engine.connect() as conn:
        assert conn.exec_driver_sql("PRAGMA journal_mode").scalar() == "wal"
        assert conn.exec_driver_sql("PRAGMA foreign_keys").scalar() == 1
        assert conn.exec_driver_sql("PRAGMA busy_timeout").scalar() == db.BUSY_TIMEOUT_MS


def test_foreign_keys_are_enforced(session):
    from sqlalchemy.exc import IntegrityError

    from webapp.store.models import ActionItem

    session.add(ActionItem(review_id=999, text="no such review"))
    with pytest.raises(IntegrityError):
        session.flush()


def test_make_engine_creates_the_folder_of_a_sqlite_file(tmp_path):
    target = tmp_path / "not" / "yet" / "there.sqlite"
    eng = db.make_engine(f"sqlite:///{target}")
    try:
        db.upgrade(eng)
    finally:
        eng.dispose()
    assert target.is_file()


def test_session_scope_commits_on_success_and_rolls_back_on_error(engine):
    with db.session_scope(engine) as s:
        s.add(Series(key="a", metric="a", labels={}))
    with pytest.raises(RuntimeError), db.session_scope(engine) as s:
        s.add(Series(key="b", metric="b", labels={}))
        s.flush()
        raise RuntimeError("boom")
    with db.session_scope(engine) as s:
        assert s.scalars(select(Series.key)).all() == ["a"]


def test_savepoints_roll_back_only_their_part(engine):
    with db.session_scope(engine) as s:
        s.add(Series(key="kept", metric="kept", labels={}))
        s.flush()
        try:
            with s.begin_nested():
                s.add(Series(key="dropped", metric="dropped", labels={}))
                s.flush()
                raise RuntimeError("undo this part")
        except RuntimeError:
            pass
    with db.session_scope(engine) as s:
        assert s.scalars(select(Series.key)).all() == ["kept"]


def test_app_builds_one_engine_and_a_session_per_request(app):
    engine = db.get_engine(app)
    assert db.current_revision(engine) is not None
    with app.test_request_context(method="POST"):
        first = db.get_session()
        assert db.get_session() is first
        first.add(Series(key="uncommitted", metric="uncommitted", labels={}))
        first.flush()
    with app.test_request_context():
        second = db.get_session()
        assert second is not first
        assert second.scalars(select(Series)).all() == []


def test_two_upgrades_started_together_on_an_empty_store_both_succeed(empty_db_url, tmp_path):
    import os
    import subprocess
    import sys

    root = str(Path(__file__).resolve().parents[2])
    env = {**os.environ, "PYTHONPATH": os.pathsep.join([root, os.environ.get("PYTHONPATH", "")])}
    cli = "from webapp.cli import main; main()"
    command = [sys.executable, "-c", cli, "db", "upgrade", "--db", empty_db_url]
    runs = [
        subprocess.Popen(command, env=env, stdout=subprocess.PIPE, stderr=subprocess.STDOUT)
        for _ in range(2)
    ]
    outputs = [run.communicate(timeout=120)[0].decode() for run in runs]
    assert [run.returncode for run in runs] == [0, 0], outputs
    assert all("Schema at revision" in out for out in outputs), outputs
    eng = db.make_engine(empty_db_url)
    try:
        head = ScriptDirectory.from_config(db.alembic_config()).get_current_head()
        assert db.current_revision(eng) == head
    finally:
        eng.dispose()
