"""Write transactions on SQLite take the write lock first, so concurrent writers wait.

A deferred ``BEGIN`` that reads and then writes fails at once in WAL mode when another
writer committed in between; these tests drive real threads on a real SQLite file.
"""

from __future__ import annotations

import threading

import pytest
from sqlalchemy import Engine, text

from webapp.store import db

WRITERS = 6
ROUNDS = 15


@pytest.fixture
def counter(sqlite_engine: Engine) -> Engine:
    """A one-row table on a SQLite file (the locking here is SQLite's; PostgreSQL's row
    locks and isolation levels are another story)."""
    engine = sqlite_engine
    with engine.begin() as conn:
        conn.exec_driver_sql("CREATE TABLE counter (n INTEGER NOT NULL)")
        conn.exec_driver_sql("INSERT INTO counter VALUES (0)")
    return engine


def _read_then_write(engine: Engine, failures: list[BaseException], start: threading.Barrier):
    start.wait()
    for _ in range(ROUNDS):
        try:
            with db.session_scope(engine) as session:
                n = session.execute(text("SELECT n FROM counter")).scalar_one()
                session.execute(text("UPDATE counter SET n = :n"), {"n": n + 1})
        except Exception as err:  # noqa: BLE001 - every failure is the finding
            failures.append(err)


def test_concurrent_read_then_write_transactions_all_succeed_and_none_is_lost(counter):
    failures: list[BaseException] = []
    start = threading.Barrier(WRITERS)
    threads = [
        threading.Thread(target=_read_then_write, args=(counter, failures, start))
        for _ in range(WRITERS)
    ]
    for thread in threads:
        thread.start()
    for thread in threads:
        thread.join(timeout=60)
    assert failures == []
    with db.session_scope(counter, write=False) as session:
        # Each read-then-write held the lock from its first read: no increment was lost.
        assert session.execute(text("SELECT n FROM counter")).scalar_one() == WRITERS * ROUNDS


def test_a_reader_is_not_held_up_by_an_open_write_transaction(counter):
    with db.session_scope(counter) as writer:
        writer.execute(text("UPDATE counter SET n = 41"))
        with db.session_scope(counter, write=False) as reader:
            # The reader sees the last committed value at once instead of waiting.
            assert reader.execute(text("SELECT n FROM counter")).scalar_one() == 0


def test_a_write_through_a_reading_session_is_refused_with_a_clear_error(counter):
    refused = pytest.raises(db.WriteInReadingTransaction, match="reading session")
    with refused, db.session_scope(counter, write=False) as session:
        session.execute(text("UPDATE counter SET n = 7"))
    with db.session_scope(counter, write=False) as session:
        assert session.execute(text("SELECT n FROM counter")).scalar_one() == 0


def test_a_get_request_reads_and_a_post_request_writes(app):
    with app.test_request_context("/", method="GET"):
        assert db.get_session().get_bind().get_execution_options().get(db.READING_OPTION)
    with app.test_request_context("/", method="POST"):
        assert not db.get_session().get_bind().get_execution_options().get(db.READING_OPTION)


def test_a_writing_request_reads_without_the_lock_inside_a_reading_phase(app):
    def reading(session) -> bool:
        return bool(session.get_bind().get_execution_options().get(db.READING_OPTION))

    with app.test_request_context("/", method="POST"):
        with db.reading_phase():
            assert reading(db.get_session())
        assert not reading(db.get_session())
