"""Write transactions on SQLite take the write lock first, so concurrent writers wait.

A deferred ``BEGIN`` that reads and then writes fails at once in WAL mode when another
writer committed in between; these tests drive real threads on a real SQLite file.
"""

from __future__ import annotations

import threading
import time

import numpy as np
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


def test_a_long_write_gets_its_turn_beside_writers_that_take_the_lock_every_few_ms(counter):
    """Three writers loop on short writes (20 ms each, as a web request's); a fourth holds
    the lock for 0.2 s per write. SQLite's busy handler retries on a timer (up to every
    100 ms), so without turns taken in order the long writer loses the race again and
    again; with them it waits at most one short write per other writer each time."""
    stop = threading.Event()

    def hammer() -> None:
        while not stop.is_set():
            with db.session_scope(counter) as session:
                session.execute(text("UPDATE counter SET n = n + 1"))
                time.sleep(0.02)

    hammers = [threading.Thread(target=hammer) for _ in range(3)]
    for thread in hammers:
        thread.start()
    waits = []
    try:
        for _ in range(5):
            asked = time.perf_counter()
            with db.session_scope(counter) as session:
                session.execute(text("UPDATE counter SET n = n + 1000"))  # takes the lock
                waits.append(time.perf_counter() - asked)
                time.sleep(0.2)
            time.sleep(0.05)  # the others are at the lock again
    finally:
        stop.set()
        for thread in hammers:
            thread.join(timeout=60)
    assert np.median(waits) < 0.5, waits


def test_writer_turns_are_first_come_first_served_and_a_writer_that_gives_up_is_skipped():
    turns = db.WriterTurns()
    assert turns.take(1.0)  # the first writer holds the turn
    order: list[str] = []

    def writer(name: str, timeout: float) -> None:
        if turns.take(timeout):
            order.append(name)
            turns.give_back()

    impatient = threading.Thread(target=writer, args=("impatient", 0.05))
    impatient.start()
    time.sleep(0.02)
    patient = [threading.Thread(target=writer, args=(f"w{k}", 5.0)) for k in range(3)]
    for thread in patient:
        thread.start()
        time.sleep(0.02)  # w0 asks first, then w1, then w2
    impatient.join()
    turns.give_back()
    for thread in patient:
        thread.join(timeout=5)
    assert order == ["w0", "w1", "w2"]
