"""Shared fixtures: every database here is a real SQLite file built through the migrations."""

from __future__ import annotations

import hashlib
import shutil
from collections.abc import Callable, Iterator, Sequence
from pathlib import Path

import numpy as np
import pandas as pd
import pytest
from flask import Flask
from flask.testing import FlaskClient, FlaskCliRunner
from sqlalchemy import Engine
from sqlalchemy.orm import Session

from webapp import create_app
from webapp.analysis import explain, past_weeks_overlay
from webapp.imports._types import ParsedImport, SeriesMeta
from webapp.imports.keys import parse_series_key
from webapp.store import db, explanations, pages
from webapp.store.imports import record_import
from webapp.store.models import Explanation, Page, Series
from webapp.store.series import read_series, series_by_keys


def sqlite_url(path: Path) -> str:
    return f"sqlite:///{path}"


@pytest.fixture
def db_url(tmp_path: Path) -> str:
    """A fresh SQLite file in the test's own folder (created on first connection)."""
    return sqlite_url(tmp_path / "whyfired.sqlite")


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
    """The real app factory on ``db_url`` (it migrates the file at start)."""
    yield from _app_for(db_url)


@pytest.fixture
def client(app: Flask) -> FlaskClient:
    return app.test_client()


@pytest.fixture
def runner(app: Flask) -> FlaskCliRunner:
    return app.test_cli_runner()


@pytest.fixture(scope="session")
def demo_db_url(tmp_path_factory: pytest.TempPathFactory) -> str:
    """A SQLite file holding the demo scenario, built once per test run.

    Tests must not write to it; use ``demo_app`` / ``demo_client`` for a private copy.
    """
    from webapp.demo import build_demo
    from webapp.services.demo import load_demo

    path = tmp_path_factory.mktemp("demo") / "demo.sqlite"
    eng = db.make_engine(sqlite_url(path))
    try:
        db.upgrade(eng)
        with db.session_scope(eng) as s:
            load_demo(s, build_demo(seed=7))
        with db.reading(eng).connect() as conn:  # a checkpoint cannot run under the write lock
            conn.exec_driver_sql("PRAGMA wal_checkpoint(TRUNCATE)")
    finally:
        eng.dispose()
    return sqlite_url(path)


@pytest.fixture
def demo_db_copy(demo_db_url: str, tmp_path: Path) -> str:
    """A private copy of the demo database for one test."""
    target = tmp_path / "demo-copy.sqlite"
    shutil.copyfile(demo_db_url.removeprefix("sqlite:///"), target)
    return sqlite_url(target)


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
