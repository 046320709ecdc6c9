"""Team mode runs on PostgreSQL only: these tests take the PostgreSQL store alone (they are
left out, with the rest of the PostgreSQL run, when no server is given)."""

from __future__ import annotations

import re
from collections.abc import Callable, Iterator

import pytest
from flask import Flask
from flask.testing import FlaskClient

from webapp import create_app
from webapp.store import db, users

PASSWORD = "correct horse battery"  # invented; long enough for the minimum


@pytest.fixture(scope="session", params=["postgresql"])
def store(request: pytest.FixtureRequest) -> str:
    request.getfixturevalue("postgres_server")
    return request.param


@pytest.fixture
def team_app(db_url: str) -> Iterator[Flask]:
    """The app in team mode on a PostgreSQL store already at head."""
    app = create_app({"TESTING": True, "DATABASE_URL": db_url, "TEAM_MODE": True})
    yield app
    db.get_engine(app).dispose()


@pytest.fixture
def add_user(team_app: Flask) -> Callable[[str, str], None]:
    def add(name: str, role: str) -> None:
        with db.session_scope(db.get_engine(team_app)) as session:
            users.add_user(session, name, PASSWORD, role)

    return add


def _csrf_of(client: FlaskClient, path: str = "/sign-in") -> str:
    match = re.search(r'name="csrf_token" value="([^"]+)"', client.get(path).text)
    assert match, f"{path} carries no CSRF field"
    return match.group(1)


def _sign_in(client: FlaskClient, name: str, password: str = PASSWORD):
    token = _csrf_of(client)
    return client.post("/sign-in", data={"csrf_token": token, "name": name, "password": password})


@pytest.fixture
def signed_in(team_app: Flask, add_user) -> Callable[[str], tuple[FlaskClient, str]]:
    """``signed_in(role)``: a client signed in as a new account with that role, and a CSRF
    token of its session."""

    def make(role: str) -> tuple[FlaskClient, str]:
        add_user(role, role)
        client = team_app.test_client()
        response = _sign_in(client, role)
        assert response.status_code == 302, response.text
        return client, _csrf_of(client, "/reviews")

    return make


@pytest.fixture
def sign_in() -> Callable:
    """``sign_in(client, name, password=PASSWORD)``: post the sign-in form."""
    return _sign_in


@pytest.fixture
def csrf_of() -> Callable:
    """``csrf_of(client, path="/sign-in")``: the CSRF token of a form the app served."""
    return _csrf_of


@pytest.fixture
def password() -> str:
    return PASSWORD


@pytest.fixture
def small_csv() -> bytes:
    """Two hours of invented 5-minute latency for one host."""
    rows = ["timestamp,metric,host,value"]
    rows += [
        f"2026-11-30T{h:02d}:{m:02d}:00Z,checkout.latency_p95,api-3,{100 + m}"
        for h in (14, 15)
        for m in range(0, 60, 5)
    ]
    return ("\n".join(rows) + "\n").encode()
