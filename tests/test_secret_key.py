"""The key that signs sessions is created once and kept: a restart or a second instance
accepts the forms the first one served."""

from __future__ import annotations

import re
import stat

from webapp import create_app
from webapp.secret import KEY_FILE
from webapp.store import db


def build(instance, db_url, **config):
    return create_app(
        {"TESTING": True, "DATABASE_URL": db_url, "INSTANCE_PATH": str(instance), **config}
    )


def test_the_key_is_created_once_in_the_instance_folder(tmp_path, db_url):
    first = build(tmp_path / "instance", db_url)
    again = build(tmp_path / "instance", db_url)
    other = build(tmp_path / "elsewhere", db_url)
    for app in (first, again, other):
        db.get_engine(app).dispose()
    key_file = tmp_path / "instance" / KEY_FILE
    assert first.secret_key == again.secret_key == key_file.read_text().strip()
    assert len(first.secret_key) == 64
    assert other.secret_key != first.secret_key
    assert stat.S_IMODE(key_file.stat().st_mode) == 0o600


def test_a_form_served_by_one_instance_is_accepted_by_another(tmp_path, db_url):
    serving, receiving = build(tmp_path, db_url), build(tmp_path, db_url)
    browser = serving.test_client()
    token = re.search(r'name="csrf_token" value="([^"]+)"', browser.get("/reviews/new").text)
    cookie = browser.get_cookie("session")
    other = receiving.test_client()
    other.set_cookie("session", cookie.value)
    sent = other.post("/reviews/new", data={"csrf_token": token.group(1), "title": "Kept key"})
    assert sent.status_code in (200, 302, 303), sent.text
    for app in (serving, receiving):
        db.get_engine(app).dispose()


def test_a_chosen_key_wins_and_nothing_is_written(tmp_path, db_url):
    app = build(tmp_path, db_url, SECRET_KEY="chosen-by-the-operator")
    db.get_engine(app).dispose()
    assert app.secret_key == "chosen-by-the-operator"
    assert not (tmp_path / KEY_FILE).exists()
