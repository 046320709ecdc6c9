"""Shared fixtures: every database here is a real store built through the migrations.

The store tests run twice, on SQLite and on PostgreSQL: ``store`` is parametrised over both
and every database fixture follows it. The PostgreSQL run needs a server whose URL is in
``WHYFIRED_TEST_POSTGRES_URL`` (``.ci/postgres start DIR`` prints one); without it those tests
skip with one line, unless ``WHYFIRED_TEST_POSTGRES_REQUIRED=1`` makes that an error (CI).
On PostgreSQL each test gets its own database, copied from one migrated once per run.
"""

from __future__ import annotations

import hashlib
import os
import shutil
import uuid
from collections.abc import Callable, Iterator, Sequence
from pathlib import Path
from typing import Any

import numpy as np
import pandas as pd
import pytest
from flask import Flask
from flask.testing import FlaskClient, FlaskCliRunner
from sqlalchemy import Engine
from sqlalchemy.engine import make_url
from sqlalchemy.orm import Session

from webapp import create_app
from webapp.analysis import explain, past_weeks_overlay
from webapp.imports._types import ParsedImport, SeriesMeta
from webapp.imports.keys import parse_series_key
from webapp.store import db, explanations, pages
from webapp.store.imports import record_import
from webapp.store.models import Explanation, Page, Series
from webapp.store.series import read_series, series_by_keys

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
    from webapp.services.demo import load_demo

    eng = db.make_engine(url)
    try:
        db.upgrade(eng)
        with db.session_scope(eng) as s:
            load_demo(s, build_demo(seed=7))
        if eng.dialect.name == "sqlite":
            with db.reading(eng).connect() as conn:  # a checkpoint cannot run under the write lock
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


MakeParsed = Callable[..., ParsedImport]


def _make_parsed(
    keys: Sequence[str],
    ts_ms: Sequence[int],
    values: Sequence[float],
    file_name: str = "synthetic.csv",
    unit: str | None = None,
) -> ParsedImport:
    table = pd.DataFrame(
        {
            "series_key": pd.Series(list(keys), dtype=object),
            "ts_utc": np.asarray(ts_ms, dtype=np.int64),
            "value": np.asarray(values, dtype=np.float64),
        }
    )
    content = table.to_csv(index=False).encode()
    series = {}
    for key in dict.fromkeys(keys):
        metric, labels = parse_series_key(key)
        series[key] = SeriesMeta(metric=metric, labels=labels, unit=unit)
    return ParsedImport(
        file_name=file_name,
        format="csv-long",
        sha256=hashlib.sha256(content).hexdigest(),
        size_bytes=len(content),
        table=table,
        series=series,
        timestamp_unit="epoch milliseconds",
        rows_read=len(table),
    )


@pytest.fixture
def make_parsed() -> MakeParsed:
    """Build a ParsedImport (synthetic data) from keys, epoch-ms timestamps and values."""
    return _make_parsed


# -- reviews: series, pages and explanations made the way the app makes them ---------------

TOKEN = "token-for-tests"
REVIEW_WINDOW = (
    pd.Timestamp("2026-11-30 14:00", tz="UTC"),
    pd.Timestamp("2026-11-30 16:00", tz="UTC"),
)
HISTORY = pd.Timedelta(weeks=2)


@pytest.fixture
def csrf(client: FlaskClient) -> str:
    """Put a known CSRF token in the test client's session and return it."""
    with client.session_transaction() as flask_session:
        flask_session["csrf_token"] = TOKEN
    return TOKEN


def synthetic_points(window=REVIEW_WINDOW, seed: int = 5) -> pd.Series:
    """Invented 5-minute latency: two weeks of a daily wave and noise before ``window``,
    and a jump far above it through the window."""
    index = pd.date_range(window[0] - HISTORY, window[1], freq="5min", tz="UTC")
    rng = np.random.default_rng(seed)
    minutes = (index.hour * 60 + index.minute).to_numpy()
    values = 200 + 40 * np.sin(2 * np.pi * minutes / 1440) + rng.normal(0, 3, len(index))
    values[(index >= window[0]) & (index < window[1])] += 180
    return pd.Series(values, index)


@pytest.fixture
def make_series(session) -> Callable[..., Series]:
    """A series imported through ``record_import`` (synthetic points around REVIEW_WINDOW)."""

    def make(key: str = "checkout.latency_p95{host=api-3}") -> Series:
        found = series_by_keys(session, [key]).get(key)
        if found is None:
            points = synthetic_points()
            ts_ms = points.index.as_unit("ms").asi8
            parsed = _make_parsed([key] * len(points), ts_ms, points.to_numpy(), unit="ms")
            record_import(session, parsed)
            found = series_by_keys(session, [key])[key]
        return session.get(Series, found.id)

    return make


@pytest.fixture
def make_explanation(session, make_series) -> Callable[..., Explanation]:
    """An explanation of a series over REVIEW_WINDOW, computed by ``explain`` and saved by
    ``save_explanation`` (with its past-weeks overlay unless ``overlay=False``), as the
    Explain screen does."""

    def make(series: Series | None = None, title: str = "", overlay: bool = True) -> Explanation:
        series = series or make_series()
        window = REVIEW_WINDOW
        points = read_series(session, series.id, window[0] - HISTORY, window[1])
        exp = explain(points, window=window, history=HISTORY, unit=series.unit or "")
        weeks = past_weeks_overlay(points, window=window, weeks=2) if overlay else None
        return explanations.save_explanation(
            session, exp, series.id, overlay=weeks, title=title or f"{series.key} band"
        )

    return make


@pytest.fixture
def make_page(session) -> Callable[..., Page]:
    """A page recorded on ``series`` through the store, resolved an hour later."""

    def make(series: Series, fired_at: pd.Timestamp = REVIEW_WINDOW[0]) -> Page:
        resolved = fired_at + pd.Timedelta("1h")
        return pages.create_page(session, series.id, fired_at, resolved, "above 400 for 5min")

    return make


@pytest.fixture
def app_session(app: Flask) -> Iterator[Session]:
    """A store session on the app's own database, for arranging data before requests."""
    s = db.new_session(db.get_engine(app))
    yield s
    s.close()


@pytest.fixture
def assert_same_bands() -> Callable[[Any, Any], None]:
    """Assert that two band rules' grids (``BandGrid``) are equal bit for bit: times, step,
    values and every band column."""

    def bits(x: Any) -> bytes:
        return np.ascontiguousarray(np.asarray(x, dtype=float)).tobytes()

    def check(kept: Any, fresh: Any) -> None:
        assert kept.step == fresh.step and kept.times.equals(fresh.times)
        for name in ("values", "expected", "scale", "below_scale", "above_scale"):
            assert bits(getattr(kept, name)) == bits(getattr(fresh, name)), name

    return check
