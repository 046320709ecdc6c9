"""Team mode serves only a current PostgreSQL store, and keeps its session key there."""

from __future__ import annotations

import pytest

from webapp import create_app
from webapp.secret import KEY_FILE
from webapp.store import db


def test_a_store_behind_the_code_is_refused_with_what_to_run(empty_db_url):
    with pytest.raises(db.StoreNotReady, match=r"revision none .*run `whyfired db upgrade"):
        create_app({"TESTING": True, "DATABASE_URL": empty_db_url, "TEAM_MODE": True})
    engine = db.make_engine(empty_db_url)
    try:
        assert db.current_revision(engine) is None, "team mode must not migrate on start"
    finally:
        engine.dispose()


def test_a_store_ahead_of_the_code_is_refused(db_url):
    engine = db.make_engine(db_url)
    try:
        with engine.begin() as conn:
            conn.exec_driver_sql("UPDATE alembic_version SET version_num = '9999_future'")
    finally:
        engine.dispose()
    with pytest.raises(db.StoreNotReady, match="9999_future"):
        create_app({"TESTING": True, "DATABASE_URL": db_url, "TEAM_MODE": True})


def test_team_mode_refuses_a_sqlite_file(tmp_path):
    url = f"sqlite:///{tmp_path / 'one-person.sqlite'}"
    with pytest.raises(db.StoreNotReady, match="needs a PostgreSQL store"):
        create_app({"TESTING": True, "DATABASE_URL": url, "TEAM_MODE": True})


def test_every_instance_on_a_store_signs_sessions_with_the_same_key(db_url, tmp_path):
    config = {"TESTING": True, "DATABASE_URL": db_url, "TEAM_MODE": True}
    first = create_app({**config, "INSTANCE_PATH": str(tmp_path / "one")})
    second = create_app({**config, "INSTANCE_PATH": str(tmp_path / "two")})
    for app in (first, second):
        db.get_engine(app).dispose()
    assert first.secret_key == second.secret_key and len(first.secret_key) == 64
    assert not (tmp_path / "one" / KEY_FILE).exists()


def test_a_password_reset_ends_the_sessions_signed_in_before(signed_in, team_app):
    from webapp.store import users

    client, _token = signed_in("editor")
    assert client.get("/reviews").status_code == 200
    with db.session_scope(db.get_engine(team_app)) as s:
        users.reset_user(s, "editor", password="a brand new password")
    assert client.get("/reviews").status_code == 302


def test_wrong_passwords_are_refused_then_made_to_wait(team_app, add_user, sign_in):
    add_user("ana", "editor")
    client = team_app.test_client()
    for _ in range(5):
        assert sign_in(client, "ana", "not the password").status_code == 401
    refused = sign_in(client, "ana")
    assert refused.status_code == 401 and "try again in" in refused.text


def test_one_address_gets_only_so_many_tries_a_minute(team_app, sign_in, monkeypatch):
    from webapp.web import auth

    monkeypatch.setattr(auth, "TRIES_PER_MINUTE", 2)
    client = team_app.test_client()
    statuses = [sign_in(client, "nobody", "whatever it is").status_code for _ in range(3)]
    assert statuses == [401, 401, 429]
