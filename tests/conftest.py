"""Shared fixtures: every database here is a real SQLite file built through the migrations."""

from __future__ import annotations

import shutil
from collections.abc import Iterator
from pathlib import Path

import pytest
from flask import Flask
from flask.testing import FlaskClient, FlaskCliRunner
from sqlalchemy import Engine
from sqlalchemy.orm import Session

from webapp import create_app
from webapp.store import db


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
    from webapp.store.seed import load_demo

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
