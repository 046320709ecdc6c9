"""Engine, migrations and sessions: the one place that opens the database.

SQLite (the default) gets WAL journaling, foreign keys and a busy timeout on every
connection, and explicit ``BEGIN``s so that transactions and savepoints behave as
SQLAlchemy documents them. Any other SQLAlchemy URL is used as given.

Write locking on SQLite. A deferred ``BEGIN`` that reads and later writes must upgrade
its read snapshot to the write lock; in WAL mode SQLite refuses that at once with
"database is locked" whenever another connection committed in between, however long the
busy timeout. So every transaction on SQLite starts with ``BEGIN IMMEDIATE`` (takes the
write lock first, waiting up to the busy timeout for it) unless it was opened through
:func:`reading`, which keeps ``BEGIN`` deferred so readers never queue behind a writer.
Writes are the default and reads opt out, so a write path cannot forget the lock: the
worst a missed opt-out costs is a reader waiting its turn. A write attempted in a reading
transaction raises :class:`WriteInReadingTransaction` instead of failing under load.
Writers of one process take turns in the order they asked (:class:`WriterTurns`) before
they ask SQLite for the lock: SQLite's busy handler retries on a timer, so a writer that
holds the lock for a second (saving an explanation) could otherwise wait for minutes
beside writers that take it every few milliseconds (autosaves).
Web requests get a reading session for GET and HEAD and a writing one otherwise
(:func:`get_session`); a writing request that computes for long before it writes does the
computing inside :func:`reading_phase`, so it does not hold the lock meanwhile. On other
dialects all of this is a no-op.

Flask is imported only by the functions for requests, so a command that opens the store
(an export, an import) does not load it.
"""

from __future__ import annotations

import threading
from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import TYPE_CHECKING, Any

from sqlalchemy import Connection, Engine, create_engine, event, text
from sqlalchemy.engine import make_url
from sqlalchemy.orm import Session

from webapp.store import audit, guards  # noqa: F401 - register what every flush does

if TYPE_CHECKING:
    from alembic.config import Config
    from flask import Flask

# A write waits up to a minute for the lock rather than fail: a 1M-row import holds it for
# the seconds its points take to write (benchmarks/bench_import.py), and waiting beats a
# lost save. Past that, the web says the store stayed busy and shows the typed text back.
BUSY_TIMEOUT_MS = 60_000
CACHE_KIB = 65_536
# A write of derived data (a kept band fit) waits at most this long for the lock: it is
# worth less than the page that would wait for it, and the data is simply computed again.
BRIEF_WAIT_MS = 1_000
ENGINE_KEY = "whyfired_engine"
READING_OPTION = "whyfired_reading"
READING_METHODS = frozenset({"GET", "HEAD", "OPTIONS"})


WAIT_KEY = "whyfired_wait_ms"  # connection info: how long a write waits for the lock
TURN_KEY = "whyfired_writer_turn"  # connection info: this connection holds the turn


class WriteInReadingTransaction(RuntimeError):
    """A write was sent through a session opened for reading (a programming error)."""


class WriterTurns:
    """First come, first served among the writers of one process: a ticket queue.

    A writer that gives up waiting (its time ran out) leaves the queue; its turn is
    skipped. Writers of other processes (a CLI import) still meet at SQLite's lock."""

    def __init__(self) -> None:
        self._cond = threading.Condition()
        self._next = 0
        self._serving = 0
        self._gave_up: set[int] = set()

    def take(self, timeout_s: float) -> bool:
        """Wait for this writer's turn, at most `timeout_s`; False when it did not come."""
        with self._cond:
            ticket = self._next
            self._next += 1
            if self._cond.wait_for(lambda: self._serving == ticket, timeout_s):
                return True
            if self._serving == ticket:  # it came as time ran out: pass it on
                self._advance()
            else:
                self._gave_up.add(ticket)
            return False

    def give_back(self) -> None:
        with self._cond:
            self._advance()

    def _advance(self) -> None:
        self._serving += 1
        while self._serving in self._gave_up:
            self._gave_up.discard(self._serving)
            self._serving += 1
        self._cond.notify_all()


def make_engine(url: str, **kwargs: Any) -> Engine:
    """An engine for ``url``; for a SQLite file, its folder is created if missing."""
    parsed = make_url(url)
    if parsed.drivername == "postgresql":  # no driver named: the one whyfired ships with
        url = parsed.set(drivername="postgresql+psycopg")
    is_sqlite = parsed.get_backend_name() == "sqlite"
    if is_sqlite and parsed.database and parsed.database != ":memory:":
        Path(parsed.database).expanduser().parent.mkdir(parents=True, exist_ok=True)
    engine = create_engine(url, **kwargs)
    if is_sqlite:
        _configure_sqlite(engine, in_memory=parsed.database in (None, "", ":memory:"))
    return engine


def _configure_sqlite(engine: Engine, *, in_memory: bool) -> None:
    @event.listens_for(engine, "connect")
    def _on_connect(dbapi_connection: Any, _record: Any) -> None:
        # Let SQLAlchemy, not the driver, decide where transactions begin.
        dbapi_connection.isolation_level = None
        cursor = dbapi_connection.cursor()
        try:
            cursor.execute(f"PRAGMA busy_timeout = {BUSY_TIMEOUT_MS}")
            cursor.execute("PRAGMA foreign_keys = ON")
            # A 64 MiB page cache per connection keeps bulk imports off the disk.
            cursor.execute(f"PRAGMA cache_size = -{CACHE_KIB}")
            if not in_memory:
                cursor.execute("PRAGMA journal_mode = WAL")
                # Never corrupts with WAL; a power cut may lose the last commits only. The
                # usual pairing with WAL (common practice).
                cursor.execute("PRAGMA synchronous = NORMAL")
        finally:
            cursor.close()

    turns = WriterTurns()

    @event.listens_for(engine, "begin")
    def _on_begin(conn: Any) -> None:
        if conn.get_execution_options().get(READING_OPTION, False):
            conn.exec_driver_sql("BEGIN")
            return
        wait_ms = conn.info.get(WAIT_KEY, BUSY_TIMEOUT_MS)
        conn.info[TURN_KEY] = turns.take(wait_ms / 1000)
        try:
            conn.exec_driver_sql("BEGIN IMMEDIATE")
        except BaseException:
            _end_turn(conn.info)
            raise

    def _end_turn(info: dict) -> None:
        if info.pop(TURN_KEY, False):
            turns.give_back()

    @event.listens_for(engine, "commit")
    def _on_commit(conn: Any) -> None:
        _end_turn(conn.info)

    @event.listens_for(engine, "rollback")
    def _on_rollback(conn: Any) -> None:
        _end_turn(conn.info)

    @event.listens_for(engine, "checkin")
    def _on_checkin(_dbapi_connection: Any, record: Any) -> None:
        _end_turn(record.info)  # a connection invalidated mid-transaction

    @event.listens_for(engine, "before_cursor_execute")
    def _refuse_writes_when_reading(
        conn: Any, _cursor: Any, statement: str, _params: Any, context: Any, _many: bool
    ) -> None:
        if not conn.get_execution_options().get(READING_OPTION, False):
            return
        verb = statement.lstrip().split(None, 1)[0].upper() if statement.strip() else ""
        if verb in {"INSERT", "UPDATE", "DELETE", "REPLACE"} or (
            context is not None and (context.isinsert or context.isupdate or context.isdelete)
        ):
            raise WriteInReadingTransaction(
                "a write was sent through a reading session; open it with write=True"
            )


def reading(engine: Engine) -> Engine:
    """``engine`` for read-only work: on SQLite its transactions begin deferred."""
    return engine.execution_options(**{READING_OPTION: True})


def alembic_config(connection: Any = None) -> Config:
    """An Alembic config pointing at the shipped ``migrations/`` folder."""
    from alembic.config import Config

    from webapp import resource_dir

    config = Config()
    config.set_main_option("script_location", str(resource_dir("migrations")))
    if connection is not None:
        config.attributes["connection"] = connection
        config.set_main_option("sqlalchemy.url", connection.engine.url.render_as_string(False))
    return config


@contextmanager
def _migrating(engine: Engine) -> Iterator[Any]:
    """One transaction for a migration run. On SQLite, foreign keys are off meanwhile: a
    batch ALTER rebuilds a table by dropping the old one, and with keys on that drop would
    cascade to the rows that refer to it (SQLite's own advice for altering tables). The
    pragma only takes effect outside a transaction, so it is set on the driver connection
    before the transaction begins."""
    with engine.connect() as connection:
        driver = (
            connection.connection.driver_connection if engine.dialect.name == "sqlite" else None
        )
        if driver is not None:
            driver.execute("PRAGMA foreign_keys = OFF")
        try:
            with connection.begin():
                yield connection
        finally:
            if driver is not None:
                driver.execute("PRAGMA foreign_keys = ON")


def upgrade(engine: Engine, revision: str = "head") -> None:
    """Bring the schema to ``revision`` (the latest by default). Runs that start together
    take turns (PostgreSQL's migrations lock; on SQLite, BEGIN IMMEDIATE): the later one
    finds the work done."""
    from alembic import command

    from webapp.store import locks

    with _migrating(engine) as connection:
        locks.hold(connection, locks.MIGRATIONS)
        command.upgrade(alembic_config(connection), revision)


def downgrade(engine: Engine, revision: str) -> None:
    from alembic import command

    with _migrating(engine) as connection:
        command.downgrade(alembic_config(connection), revision)


def current_revision(engine: Engine) -> str | None:
    from alembic.runtime.migration import MigrationContext

    with engine.connect() as connection:
        return MigrationContext.configure(connection).get_current_revision()


class StoreNotReady(RuntimeError):
    """The store cannot be served as it is; the message says what to do."""


def require_team_store(engine: Engine) -> None:
    """Refuse a store that is not PostgreSQL or whose schema is not the code's."""
    from alembic.script import ScriptDirectory

    if engine.dialect.name != "postgresql":
        raise StoreNotReady(
            "team mode needs a PostgreSQL store; give its URL with --db or "
            "WHYFIRED_DATABASE_URL (the SQLite file is for one person on this machine)"
        )
    head = ScriptDirectory.from_config(alembic_config()).get_current_head()
    current = current_revision(engine)
    if current != head:
        raise StoreNotReady(
            f"the store's schema is at revision {current or 'none'} and this whyfired needs "
            f"{head}; run `whyfired db upgrade --db URL` with the whyfired version that "
            "serves it, then start again"
        )


def new_session(engine: Engine, *, write: bool = True) -> Session:
    """A session that may write (the default), or one that only reads (``write=False``)."""
    return Session(engine if write else reading(engine), expire_on_commit=False)


@contextmanager
def session_scope(engine: Engine, *, write: bool = True) -> Iterator[Session]:
    """A session that commits when the block ends normally and rolls back on any error."""
    session = new_session(engine, write=write)
    try:
        yield session
        session.commit()
    except BaseException:
        session.rollback()
        raise
    finally:
        session.close()


@contextmanager
def brief_write(bind: Engine | Connection, wait_ms: int = BRIEF_WAIT_MS) -> Iterator[Session]:
    """A writing session that commits when the block ends and waits at most ``wait_ms`` for
    the lock (SQLite's busy timeout, PostgreSQL's ``lock_timeout``) instead of a minute; for
    writes of derived data that may as well be skipped when the store is busy. ``bind`` may
    be a reading session's: the session given writes all the same (its own connection)."""
    engine = bind.engine if isinstance(bind, Connection) else bind
    engine = engine.execution_options(**{READING_OPTION: False})
    sqlite = engine.dialect.name == "sqlite"
    with engine.connect() as connection:
        driver = connection.connection.driver_connection if sqlite else None
        if driver is not None:
            driver.execute(f"PRAGMA busy_timeout = {int(wait_ms)}")
            connection.info[WAIT_KEY] = wait_ms
        try:
            with Session(connection, expire_on_commit=False) as session:
                if engine.dialect.name == "postgresql":
                    session.execute(text(f"SET LOCAL lock_timeout = {int(wait_ms)}"))
                yield session
                session.commit()
        finally:
            if driver is not None:
                driver.execute(f"PRAGMA busy_timeout = {BUSY_TIMEOUT_MS}")
                connection.info.pop(WAIT_KEY, None)


def init_app(app: Flask) -> None:
    """Build the app's engine once, migrate it to head (not in team mode: there the schema
    must already be current), and close request sessions."""
    engine = make_engine(app.config["DATABASE_URL"])
    if app.config.get("TEAM_MODE"):
        require_team_store(engine)
    else:
        upgrade(engine)
    app.extensions[ENGINE_KEY] = engine
    app.teardown_appcontext(_close_session)


def get_engine(app: Flask | None = None) -> Engine:
    from flask import current_app

    return (app or current_app).extensions[ENGINE_KEY]


def get_session() -> Session:
    """The current request's session, opened on first use and closed on teardown.

    Views commit explicitly; whatever is left uncommitted is rolled back at teardown. A GET
    or HEAD request reads only; any other method (and work outside a request) may write.
    """
    from flask import g, has_request_context, request

    if g.get("db_reading_phase"):
        if "db_read_session" not in g:
            g.db_read_session = new_session(get_engine(), write=False)
        return g.db_read_session
    if "db_session" not in g:
        write = not has_request_context() or request.method not in READING_METHODS
        g.db_session = new_session(get_engine(), write=write)
    return g.db_session


@contextmanager
def reading_phase() -> Iterator[None]:
    """In a writing request: :func:`get_session` reads without the write lock in this block.

    For the long computation before a short write (saving an explanation computes it
    first). What is read here may change before the write; write only what does not
    depend on it staying the same, or read it again after the block.
    """
    from flask import g

    before = g.get("db_reading_phase", False)
    g.db_reading_phase = True
    try:
        yield
    finally:
        g.db_reading_phase = before
        reader = g.get("db_read_session")
        if reader is not None and not before:
            reader.rollback()  # let go of the snapshot


def _close_session(_exc: BaseException | None = None) -> None:
    from flask import g

    for key in ("db_session", "db_read_session"):
        session = g.pop(key, None)
        if session is not None:
            session.close()
