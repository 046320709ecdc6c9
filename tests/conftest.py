"""Shared fixtures: every database here is a real store built through the migrations.

The store tests run twice, on SQLite and on PostgreSQL: ``store`` is parametrised over both
and every database fixture follows it. The PostgreSQL run needs a server whose URL is in
``WHYFIRED_TEST_POSTGRES_URL`` (``.ci/postgres start DIR`` prints one); without it those tests
skip with one line, unless ``WHYFIRED_TEST_POSTGRES_REQUIRED=1`` makes that an error (CI).
On PostgreSQL each test gets its own database, copied from one migrated once per run.
"""

from __future__ import annotations

import os
import shutil
import uuid
from collections.abc import Iterator
from pathlib import Path

import pytest
from flask import Flask
from flask.testing import FlaskClient, FlaskCliRunner
from sqlalchemy import Engine
from sqlalchemy.engine import make_url
from sqlalchemy.orm import Session

from webapp import create_app
from webapp.store import db

POSTGRES_URL_VARIABLE = "WHYFIRED_TEST_POSTGRES_URL"
POSTGRES_REQUIRED_VARIABLE = "WHYFIRED_TEST_POSTGRES_REQUIRED"
STORES = ("sqlite", "postgresql")


@pytest.fixture(scope="session", autouse=True)
def instance_folder(tmp_path_factory: pytest.TempPathFactory) -> Iterator[Path]:
    """Apps built by tests keep their files (the secret key) here, not in the user's folder."""
    path = tmp_path_factory.mktemp("instance")
    with pytest.MonkeyPatch.context() as patch:
        patch.setenv("WHYFIRED_INSTANCE_PATH", str(path))
        yield path


def sqlite_url(path: Path) -> str:
    return f"sqlite:///{path}"


class PostgresServer:
    """A PostgreSQL server the tests may create and drop databases on."""

    def __init__(self, url: str):
        self.url = make_url(url).set(drivername="postgresql+psycopg")
        self.prefix = f"whyfired_test_{os.getpid()}_"

    def url_of(self, name: str) -> str:
        return self.url.set(database=name).render_as_string(hide_password=False)

    def _admin(self, sql: str) -> None:
        import psycopg

        conninfo = self.url.set(drivername="postgresql").render_as_string(hide_password=False)
        with psycopg.connect(conninfo, autocommit=True) as conn:
            conn.execute(sql)

    def create(self, template: str | None = None, name: str | None = None) -> str:
        """A new database (a copy of ``template`` if given); returns its name."""
        name = name or self.prefix + uuid.uuid4().hex[:12]
        copy = f" TEMPLATE {template} STRATEGY FILE_COPY" if template else ""
        self._admin(f"CREATE DATABASE {name}{copy}")
        return name

    def drop(self, name: str) -> None:
        self._admin(f"DROP DATABASE IF EXISTS {name} WITH (FORCE)")


def _postgres_skip_reason() -> str | None:
    if os.environ.get(POSTGRES_URL_VARIABLE):
        return None
    reason = f"the PostgreSQL run needs a server URL in {POSTGRES_URL_VARIABLE}"
    if os.environ.get(POSTGRES_REQUIRED_VARIABLE) == "1":
        raise pytest.UsageError(f"{reason}, and {POSTGRES_REQUIRED_VARIABLE}=1 requires it")
    return reason + " (.ci/postgres starts one)"


@pytest.hookimpl(trylast=True)  # after -k and -m have chosen, so the count is right
def pytest_collection_modifyitems(config: pytest.Config, items: list[pytest.Item]) -> None:
    """Without a server, leave out the PostgreSQL run and say so in one line."""
    reason = _postgres_skip_reason()
    if reason is None:
        return
    on_postgres = [i for i in items if getattr(i, "callspec", None) and _store_of(i) == STORES[1]]
    if on_postgres:
        config.hook.pytest_deselected(items=on_postgres)
        items[:] = [i for i in items if i not in set(on_postgres)]
        config.stash[_LEFT_OUT] = f"PostgreSQL run left out ({len(on_postgres)} tests): {reason}"


def _store_of(item: pytest.Item) -> str | None:
    return item.callspec.params.get("store")


_LEFT_OUT = pytest.StashKey[str]()


def pytest_terminal_summary(terminalreporter: pytest.TerminalReporter) -> None:
    note = terminalreporter.config.stash.get(_LEFT_OUT, None)
    if note:
        terminalreporter.write_line(note, yellow=True)


@pytest.fixture(scope="session")
def postgres_server() -> PostgresServer:
    """The server named by WHYFIRED_TEST_POSTGRES_URL (skips, saying why, without one)."""
    reason = _postgres_skip_reason()
    if reason is not None:
        pytest.skip(reason)
    return PostgresServer(os.environ[POSTGRES_URL_VARIABLE])


@pytest.fixture(scope="session", params=STORES)
def store(request: pytest.FixtureRequest) -> str:
    """The backend the database fixtures use: "sqlite" or "postgresql"."""
    if request.param == STORES[1]:
        request.getfixturevalue("postgres_server")
    return request.param


@pytest.fixture(scope="session")
def postgres_template(postgres_server: PostgresServer) -> Iterator[str]:
    """A database migrated to head once per run, copied for each test."""
    name = postgres_server.create()
    engine = db.make_engine(postgres_server.url_of(name))
    try:
        db.upgrade(engine)
    finally:
        engine.dispose()
    yield name
    postgres_server.drop(name)


def _postgres_copy(request: pytest.FixtureRequest, template: str) -> Iterator[str]:
    server: PostgresServer = request.getfixturevalue("postgres_server")
    name = server.create(template=template)
    yield server.url_of(name)
    server.drop(name)


@pytest.fixture
def db_url(store: str, tmp_path: Path, request: pytest.FixtureRequest) -> Iterator[str]:
    """A store of the test's own: a fresh SQLite file (created on first connection), or a
    PostgreSQL database already at head (migrating it again changes nothing)."""
    if store == "sqlite":
        yield sqlite_url(tmp_path / "whyfired.sqlite")
        return
    yield from _postgres_copy(request, request.getfixturevalue("postgres_template"))


@pytest.fixture
def empty_db_url(store: str, tmp_path: Path, request: pytest.FixtureRequest) -> Iterator[str]:
    """A store of the test's own with no schema at all."""
    if store == "sqlite":
        yield sqlite_url(tmp_path / "empty.sqlite")
        return
    server: PostgresServer = request.getfixturevalue("postgres_server")
    name = server.create()
    yield server.url_of(name)
    server.drop(name)


@pytest.fixture
def sqlite_engine(tmp_path: Path) -> Iterator[Engine]:
    """An engine on a migrated SQLite file, for what only SQLite has (pragmas, table layout)."""
    eng = db.make_engine(sqlite_url(tmp_path / "whyfired.sqlite"))
    db.upgrade(eng)
    yield eng
    eng.dispose()


@pytest.fixture
def engine(db_url: str) -> Iterator[Engine]:
    """An engine on ``db_url``, migrated to head through the real Alembic path."""
    eng = db.make_engine(db_url)
    db.upgrade(eng)
    yield eng
    eng.dispose()


@pytest.fixture
def session(engine: Engine) -> Iterator[Session]:
    s = db.new_session(engine)
    yield s
    s.close()


def _app_for(url: str) -> Iterator[Flask]:
    app = create_app({"TESTING": True, "DATABASE_URL": url})
    yield app
    db.get_engine(app).dispose()


@pytest.fixture
def app(db_url: str) -> Iterator[Flask]:
    """The real app factory on ``db_url`` (it migrates the store at start)."""
    yield from _app_for(db_url)


@pytest.fixture
def client(app: Flask) -> FlaskClient:
    return app.test_client()


@pytest.fixture
def runner(app: Flask) -> FlaskCliRunner:
    return app.test_cli_runner()


def _build_demo(url: str) -> None:
    from webapp.demo import build_demo
    from webapp.store.seed import load_demo

    eng = db.make_engine(url)
    try:
        db.upgrade(eng)
        with db.session_scope(eng) as s:
            load_demo(s, build_demo(seed=7))
        if eng.dialect.name == "sqlite":
            with eng.connect() as conn:
                conn.exec_driver_sql("PRAGMA wal_checkpoint(TRUNCATE)")
    finally:
        eng.dispose()


@pytest.fixture(scope="session")
def demo_template(
    store: str, tmp_path_factory: pytest.TempPathFactory, request: pytest.FixtureRequest
) -> Iterator[str]:
    """The demo scenario, built once per run and store: a SQLite file's URL, or the name of
    a PostgreSQL database that only serves as a template."""
    if store == "sqlite":
        url = sqlite_url(tmp_path_factory.mktemp("demo") / "demo.sqlite")
        _build_demo(url)
        yield url
        return
    server: PostgresServer = request.getfixturevalue("postgres_server")
    name = server.create()
    _build_demo(server.url_of(name))
    yield name
    server.drop(name)


@pytest.fixture(scope="session")
def demo_db_url(store: str, demo_template: str, request: pytest.FixtureRequest) -> Iterator[str]:
    """A store holding the demo scenario, shared by the tests of one run.

    Tests must not write to it; use ``demo_app`` / ``demo_client`` for a private copy.
    """
    if store == "sqlite":
        yield demo_template
        return
    yield from _postgres_copy(request, demo_template)


@pytest.fixture
def demo_db_copy(
    store: str, demo_template: str, tmp_path: Path, request: pytest.FixtureRequest
) -> Iterator[str]:
    """A private copy of the demo database for one test."""
    if store == "sqlite":
        target = tmp_path / "demo-copy.sqlite"
        shutil.copyfile(demo_template.removeprefix("sqlite:///"), target)
        yield sqlite_url(target)
        return
    yield from _postgres_copy(request, demo_template)


@pytest.fixture
def demo_app(demo_db_copy: str) -> Iterator[Flask]:
    yield from _app_for(demo_db_copy)


@pytest.fixture
def demo_client(demo_app: Flask) -> FlaskClient:
    return demo_app.test_client()
