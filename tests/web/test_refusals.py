"""Clean refusals: ids past any stored one, times out of range, a full or read-only store."""

from __future__ import annotations

import html

import pytest
from sqlalchemy import event

from webapp import create_app
from webapp.store import db

HUGE = "99999999999999999999"
TYPED = "The consumer lag grew for **forty minutes** before the page; keep this paragraph."


@pytest.mark.parametrize(
    "url",
    [
        f"/reviews/{HUGE}",
        f"/rules/{HUGE}/replay",
        f"/explanations/{HUGE}",
        f"/pages/{HUGE}/explain",
        f"/explain?series={HUGE}",
    ],
)
def test_an_id_past_any_stored_one_is_not_found(client, url):
    response = client.get(url)
    assert response.status_code == 404
    assert "Traceback" not in response.get_data(as_text=True)


@pytest.mark.parametrize("start", ["0001-01-01T00:00", "1677-09-22T00:00", "9999-12-30T00:00"])
def test_a_window_out_of_range_is_refused_beside_its_field(client, stored, start):
    year = int(start[:4])
    url = f"/explain?series={stored}&start={start}&end={year:04d}-12-31T00:00"
    page = client.get(url)
    assert page.status_code == 400
    assert "is out of range: give a time from 1900 to 2199" in html.unescape(page.text)
    panel = client.get(url, headers={"HX-Request": "true"})
    assert panel.status_code == 400
    assert panel.headers["HX-Retarget"] == "#start-error"
    assert "<html" not in panel.text and "window start" in panel.text


def test_the_explain_form_has_a_slot_beside_each_time_field(client, stored):
    body = client.get(f"/explain?series={stored}").text
    for field in ("start", "end", "exclude_start", "exclude_end"):
        assert f'id="{field}-error"' in body


@pytest.fixture
def sqlite_client(tmp_path):
    """A client of an app on a SQLite file, and its CSRF token: a full or read-only store is
    made here with SQLite's own pragmas."""
    app = create_app({"TESTING": True, "DATABASE_URL": f"sqlite:///{tmp_path / 'store.sqlite'}"})
    client = app.test_client()
    with client.session_transaction() as flask_session:
        flask_session["csrf_token"] = "token-for-refusals"
    yield client, "token-for-refusals"
    db.get_engine(app).dispose()


def _on_every_connection(app, pragma) -> None:
    engine = db.get_engine(app)
    event.listen(engine, "connect", lambda conn, _record: pragma(conn))
    engine.dispose()  # connections opened from now on get it


def _read_only(conn) -> None:
    conn.execute("PRAGMA query_only = ON")


def _full(conn) -> None:
    pages = conn.execute("PRAGMA page_count").fetchone()[0]
    conn.execute(f"PRAGMA max_page_count = {pages}")


@pytest.mark.parametrize(
    ("pragma", "reason"),
    [(_read_only, "store is read-only"), (_full, "store is full")],
)
def test_a_store_that_cannot_write_says_why_and_shows_the_typed_text(sqlite_client, pragma, reason):
    client, csrf = sqlite_client
    _on_every_connection(client.application, pragma)
    summary = TYPED + "\n\n" + "More notes. " * 20_000  # enough to need new pages
    response = client.post(
        "/reviews/new",
        data={"csrf_token": csrf, "title": "Lag on the orders queue", "summary": summary},
    )
    assert response.status_code == 503
    text = html.unescape(response.get_data(as_text=True))
    assert reason in text
    assert "nothing was saved" in text
    assert TYPED in text and "Lag on the orders queue" in text
    assert ">csrf token<" not in text  # the security token is not shown back as a field


def test_an_htmx_save_to_a_read_only_store_gets_the_reason_as_a_fragment(sqlite_client):
    client, csrf = sqlite_client
    _on_every_connection(client.application, _read_only)
    response = client.post(
        "/reviews/new",
        data={"csrf_token": csrf, "title": "t"},
        headers={"HX-Request": "true"},
    )
    assert response.status_code == 503
    assert "read-only" in response.text and "<html" not in response.text
