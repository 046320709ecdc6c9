"""Engine, migrations and sessions: the one place that opens the database.

SQLite (the default) gets WAL journaling, foreign keys and a busy timeout on every
connection, and explicit ``BEGIN``s so that transactions and savepoints behave as
SQLAlchemy documents them. Any other SQLAlchemy URL is used as given.
"""

from __future__ import annotations

from collections.abc import Iterator
from contextlib import contextmanager
from pathlib import Path
from typing import Any

from alembic import command
from alembic.config import Config
from flask import Flask, current_app, g
from sqlalchemy import Engine, create_engine, event
from sqlalchemy.engine import make_url
from sqlalchemy.orm import Session

from webapp.store import audit, guards  # noqa: F401 - register what every flush does

BUSY_TIMEOUT_MS = 10_000
CACHE_KIB = 65_536
ENGINE_KEY = "whyfired_engine"
WRITE_LOCK_FIRST = "whyfired_write_lock_first"  # execution option: SQLite's BEGIN IMMEDIATE


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

    @event.listens_for(engine, "begin")
    def _on_begin(conn: Any) -> None:
        # A writer that must not start from a stale snapshot takes the write lock up front.
        immediate = conn.get_execution_options().get(WRITE_LOCK_FIRST, False)
        conn.exec_driver_sql("BEGIN IMMEDIATE" if immediate else "BEGIN")


def alembic_config(connection: Any = None) -> Config:
    """An Alembic config pointing at the shipped ``migrations/`` folder."""
    from webapp import resource_dir

    config = Config()
    config.set_main_option("script_location", str(resource_dir("migrations")))
    if connection is not None:
        config.attributes["connection"] = connection
        config.set_main_option("sqlalchemy.url", connection.engine.url.render_as_string(False))
    return config


def upgrade(engine: Engine, revision: str = "head") -> None:
    """Bring the schema to ``revision`` (the latest by default). Runs that start together
    take turns (PostgreSQL's migrations lock): the later one finds the work done."""
    from webapp.store import locks

    with engine.connect() as connection:
        connection.execution_options(**{WRITE_LOCK_FIRST: True})
        with connection.begin():
            locks.hold(connection, locks.MIGRATIONS)
            command.upgrade(alembic_config(connection), revision)


def downgrade(engine: Engine, revision: str) -> None:
    with engine.begin() as connection:
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


def new_session(engine: Engine) -> Session:
    return Session(engine, expire_on_commit=False)


@contextmanager
def session_scope(engine: Engine) -> Iterator[Session]:
    """A session that commits when the block ends normally and rolls back on any error."""
    session = new_session(engine)
    try:
        yield session
        session.commit()
    except BaseException:
        session.rollback()
        raise
    finally:
        session.close()


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
    return (app or current_app).extensions[ENGINE_KEY]


def get_session() -> Session:
    """The current request's session, opened on first use and closed on teardown.

    Views commit explicitly; whatever is left uncommitted is rolled back at teardown.
    """
    if "db_session" not in g:
        g.db_session = new_session(get_engine())
    return g.db_session


def _close_session(_exc: BaseException | None = None) -> None:
    session = g.pop("db_session", None)
    if session is not None:
        session.close()
